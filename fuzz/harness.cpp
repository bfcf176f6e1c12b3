// The promises each harness checks (harness.hpp). Inputs are written to a file in a private
// temporary folder, since the readers open captures by path as the CLI does (by content, not
// by name: a text input may turn out to be a sound container and the other way round).
#include "harness.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <filesystem>
#include <fstream>
#include <new>
#include <nlohmann/json.hpp>
#include <regex>
#include <sstream>

#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "lopside/measure_report.hpp"
#include "lopside/pipeline.hpp"

namespace lopside::fuzz {
namespace {

namespace fs = std::filesystem;

// The README's stated limits (section "Limits on what a file may claim").
constexpr std::size_t kMaxChannels = 1024;
constexpr double kMinRateHz = 1, kMaxRateHz = 100e9;
// A read block never holds more than this many values, whatever the channel count.
constexpr std::size_t kMaxBlockValues = std::size_t{1} << 20;

fs::path input_file(const char* name, const std::uint8_t* data, std::size_t size) {
  static const fs::path dir = [] {
    std::string templ = (fs::temp_directory_path() / "lopside-fuzz-XXXXXX").string();
    if (::mkdtemp(templ.data()) == nullptr) std::abort();
    return fs::path(templ);
  }();
  const fs::path p = dir / name;
  std::ofstream out(p, std::ios::binary | std::ios::trunc);
  out.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(size));
  out.close();
  return p;
}

// Reads every block; checks the counts against the limits and, when `finite` is asked, that
// every sample is a finite number.
std::string read_all(SampleSource& source, bool finite) {
  const CaptureInfo& info = source.info();
  if (info.channels.empty() || info.channels.size() > kMaxChannels)
    return "channel count " + std::to_string(info.channels.size()) + " outside 1…1024";
  if (!(info.sample_rate_hz >= kMinRateHz && info.sample_rate_hz <= kMaxRateHz))
    return "sample rate " + std::to_string(info.sample_rate_hz) + " Hz outside 1 Hz…100 GHz";
  SampleBlock block;
  while (const std::size_t got = source.read(block, kBlockFrames)) {
    if (block.channels != info.channels.size()) return "block channel count changed";
    if (block.data.capacity() > kMaxBlockValues)
      return "read block holds " + std::to_string(block.data.capacity()) + " values";
    if (!finite) continue;
    for (std::size_t k = 0; k < got * block.channels; ++k)
      if (!std::isfinite(block.data[k])) return "non-finite sample at value " + std::to_string(k);
  }
  return {};
}

template <typename F>
std::string guarded(F&& body) {
  try {
    return body();
  } catch (const InputError&) {
    return {};  // refused with its place: the promise for bad input
  } catch (const std::bad_alloc&) {
    return "std::bad_alloc: memory grew with what the file claims";
  } catch (const std::exception& e) {
    return std::string("exception other than InputError: ") + e.what();
  } catch (...) {
    return "unknown exception";
  }
}

}  // namespace

bool prints_non_number(const std::string& text) {
  static const std::regex word(R"((^|[^A-Za-z])(nan|NaN|NAN|inf|Inf|INF)([^A-Za-z]|$))");
  return std::regex_search(text, word);
}

std::string check_text_reader(const std::uint8_t* data, std::size_t size) {
  const fs::path p = input_file("capture.csv", data, size);
  return guarded([&] {
    // By path, as the CLI opens it (compressed text, UTF-16, the parallel parse of a large
    // file); a sound container found by its magic goes to the other reader.
    const auto source = open_capture(p, ReaderOptions{});
    const std::string& format = source->info().format;
    const bool text =
        format == "csv" || format == "csv-semicolon" || format == "tsv" || format == "text";
    // The text reader refuses a cell that is not a finite number, at its line.
    return read_all(*source, text);
  });
}

std::string check_sound_reader(const std::uint8_t* data, std::size_t size) {
  const fs::path p = input_file("capture.wav", data, size);
  return guarded([&] {
    const auto source = open_sound_file(p, ReaderOptions{});
    // Float containers may hold NaN; measure leaves such cycles out, inspect refuses them.
    return read_all(*source, false);
  });
}

std::string check_measure(const std::uint8_t* data, std::size_t size) {
  const fs::path p = input_file("capture", data, size);
  return guarded([&]() -> std::string {
    MeasureSettings settings;
    settings.capture_name = "capture";
    settings.max_order = 12;
    settings.picture = true;
    ReaderOptions options;
    const MeasureResult r = measure_capture([&] { return open_capture(p, options); }, settings);
    std::ostringstream json_text, text, summary, warn;
    write_measure_json(json_text, r);
    const auto doc = nlohmann::json::parse(json_text.str(), nullptr, false);
    if (doc.is_discarded()) return "measure JSON is not valid JSON";
    write_measure_text(text, r);
    if (prints_non_number(text.str())) return "measure text report prints a non-number";
    write_measure_summary(summary, warn, r);
    if (prints_non_number(summary.str())) return "measure summary prints a non-number";
    return {};
  });
}

}  // namespace lopside::fuzz
