// `lopside lot`: every unit of a production lot measured (in parallel), judged against a
// limits file, and summed up for QA (issue 11).
#include <glob.h>
#include <unistd.h>

#include <algorithm>
#include <atomic>
#include <cctype>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <mutex>
#include <optional>
#include <regex>
#include <thread>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "lopside/figures.hpp"
#include "lopside/limits_file.hpp"
#include "lopside/lot_report.hpp"
#include "lopside/pipeline.hpp"
#include "output_paths.hpp"

namespace fs = std::filesystem;

namespace lopside::cli {

int command_status = exit_code::ok;

namespace {

// Files a directory argument contributes: what the readers take, by name.
bool capture_like(const fs::path& p) {
  std::string name = p.filename().string();
  for (char& c : name) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  for (const char* ext : {".gz", ".xz", ".zst"}) {
    const std::string e(ext);
    if (name.size() > e.size() && name.compare(name.size() - e.size(), e.size(), e) == 0)
      name.resize(name.size() - e.size());
  }
  for (const char* ext :
       {".csv", ".tsv", ".txt", ".dat", ".wav", ".rf64", ".w64", ".flac", ".aif", ".aiff"}) {
    const std::string e(ext);
    if (name.size() > e.size() && name.compare(name.size() - e.size(), e.size(), e) == 0)
      return true;
  }
  return false;
}

bool has_glob_chars(const std::string& s) {
  return s.find_first_of("*?[") != std::string::npos;
}

// The captures the arguments name, in order: a list file (@FILE, one path per line, '#'
// comments, paths relative to the list's folder), a glob pattern (sorted, as the shell would),
// a directory (its capture files, sorted), or a path. A path that does not exist stays: it
// becomes a unit that was not measured.
std::vector<std::string> expand_captures(const std::vector<std::string>& args) {
  std::vector<std::string> out;
  for (const std::string& a : args) {
    if (a.size() > 1 && a.front() == '@') {
      const fs::path list = a.substr(1);
      std::ifstream in(list);
      if (!in) throw InputError(list.string(), "cannot open the list of captures");
      std::string line;
      std::uint64_t n = 0;
      while (std::getline(in, line)) {
        ++n;
        while (!line.empty() && (line.back() == '\r' || line.back() == ' ')) line.pop_back();
        const auto first = line.find_first_not_of(" \t");
        if (first == std::string::npos || line[first] == '#') continue;
        fs::path p = line.substr(first);
        if (p.is_relative()) p = list.parent_path() / p;
        out.push_back(p.string());
      }
      continue;
    }
    std::error_code ec;
    if (fs::is_directory(a, ec)) {
      std::vector<std::string> files;
      for (const auto& e : fs::directory_iterator(a, ec)) {
        if (e.is_regular_file(ec) && capture_like(e.path())) files.push_back(e.path().string());
      }
      if (ec) throw InputError(a, "cannot list the folder: " + ec.message());
      std::sort(files.begin(), files.end());
      if (files.empty())
        throw InputError(a, "the folder holds no capture (.csv, .tsv, .txt, .wav, .flac, …)");
      out.insert(out.end(), files.begin(), files.end());
      continue;
    }
    if (has_glob_chars(a) && !fs::exists(a, ec)) {
      glob_t g{};
      const int rc = ::glob(a.c_str(), 0, nullptr, &g);
      if (rc == GLOB_NOMATCH) {
        ::globfree(&g);
        throw InputError(a, "no file matches the pattern");
      }
      for (std::size_t i = 0; rc == 0 && i < g.gl_pathc; ++i) out.emplace_back(g.gl_pathv[i]);
      ::globfree(&g);
      continue;
    }
    out.push_back(a);
  }
  return out;
}

// The file name without the extensions a capture carries ("unit17.csv.gz" → "unit17").
std::string stem_of(const std::string& path) {
  fs::path p = fs::path(path).filename();
  for (const char* ext : {".gz", ".xz", ".zst"})
    if (p.extension() == ext) p = p.stem();
  return p.stem().string();
}

bool iequals(const std::string& a, const std::string& b) {
  if (a.size() != b.size()) return false;
  for (std::size_t i = 0; i < a.size(); ++i) {
    if (std::tolower(static_cast<unsigned char>(a[i])) !=
        std::tolower(static_cast<unsigned char>(b[i])))
      return false;
  }
  return true;
}

std::string unit_id(const std::string& path, const LotSettings& lot, const MeasureResult* r) {
  switch (lot.unit_id) {
    case UnitIdSource::file_stem:
      break;
    case UnitIdSource::file_name_pattern: {
      const std::regex re(lot.unit_id_pattern);
      std::smatch m;
      const std::string name = fs::path(path).filename().string();
      if (std::regex_search(name, m, re))
        return m.size() > 1 && m[1].matched ? m[1].str() : m[0].str();
      break;
    }
    case UnitIdSource::capture_key:
      if (r) {
        for (const auto& [key, value] : r->info.metadata)
          if (iequals(key, lot.unit_id_key) && !value.empty()) return value;
      }
      break;
  }
  return stem_of(path);
}

}  // namespace

void setup_lot(CLI::App& app) {
  auto options = std::make_shared<LotOptions>();
  CLI::App* sub = app.add_subcommand(
      "lot",
      "Measure every unit of a production lot, judge each against a limits file (simple or "
      "guarded decisions), and give the lot's yield, capability (Cp, Cpk, Pp, Ppk) and control "
      "chart; exit status 4 when any unit did not pass");
  sub->add_option("captures", options->captures,
                  "The lot's captures: files, glob patterns, folders, or @LIST (a file naming one "
                  "capture per line)")
      ->required()
      ->type_name("CAPTURE...");
  sub->add_option("--limits", options->limits_path,
                  "The limits file (TOML): [limits.FIGURE] min/max per figure of measure's JSON, "
                  "[lot] decision rule and unit ids")
      ->required()
      ->type_name("FILE");
  sub->add_option("--jobs", options->jobs, "Captures measured at once (default: one per core)")
      ->check(CLI::Range(1u, 256u));
  sub->add_option("--lot", options->lot, "The lot's name, shown in the report");
  sub->add_option("--json", options->json_path,
                  "Also write the lot as JSON to FILE; '-' writes it alone to standard output")
      ->type_name("FILE|-");
  sub->add_option("--csv", options->csv_path,
                  "Write one row per unit as CSV to FILE ('-': "
                  "standard output)")
      ->type_name("FILE|-");
  add_analysis_flags(*sub, options->analysis);
  sub->callback([options]() { command_status = run_lot(*options); });
}

int run_lot(const LotOptions& o) {
  const LimitsFile limits = read_limits_file(o.limits_path, limitable_figures());
  const std::vector<std::string> captures = expand_captures(o.captures);
  if (captures.empty()) throw InputError(o.limits_path, "no capture given; expected CAPTURE...");

  std::vector<std::string> inputs = captures;
  inputs.push_back(o.limits_path);
  const bool csv_replaces = o.json_path.empty() && o.csv_path == "-";
  check_output_paths(inputs, {{"--json", o.json_path, true}, {"--csv", o.csv_path, csv_replaces}});
  std::optional<AtomicOutput> json_out, csv_out;
  if (!o.json_path.empty()) json_out.emplace(o.json_path);
  if (!o.csv_path.empty()) csv_out.emplace(o.csv_path);

  // Captures are measured by `jobs` threads, each taking the next one; results keep the input
  // order. Each measurement holds its own bounded buffers (README: Speed and memory), so memory
  // grows with the jobs, not with the lot.
  const unsigned cores = std::max(1u, std::thread::hardware_concurrency());
  const unsigned jobs =
      std::min<unsigned>(o.jobs ? o.jobs : cores, static_cast<unsigned>(captures.size()));
  std::vector<LotUnit> units(captures.size());
  std::atomic<std::size_t> next{0}, done{0};
  std::mutex progress_mutex;
  const bool show_progress = ::isatty(STDERR_FILENO) != 0;
  const auto worker = [&]() {
    for (std::size_t k = next++; k < captures.size(); k = next++) {
      const std::string& path = captures[k];
      AnalysisOptions a = o.analysis;
      a.capture_path = path;
      try {
        const MeasureSettings settings = measure_settings(a);
        const MeasureResult r =
            measure_capture([&a] { return open_capture(a.capture_path, a.reader); }, settings);
        units[k] = judge_unit(unit_id(path, limits.lot, &r), path, measure_figures(r),
                              limits.limits, limits.lot.decision);
      } catch (const std::exception& e) {
        // One capture that cannot be read or measured does not stop the lot.
        units[k] = unmeasured_unit(unit_id(path, limits.lot, nullptr), path, e.what());
      }
      const std::size_t n = ++done;
      if (show_progress) {
        std::lock_guard<std::mutex> lock(progress_mutex);
        std::cerr << "\rlopside lot: measured " << n << " of " << captures.size() << std::flush;
      }
    }
  };
  std::vector<std::thread> threads;
  for (unsigned j = 1; j < jobs; ++j) threads.emplace_back(worker);
  worker();
  for (std::thread& t : threads) t.join();
  if (show_progress) std::cerr << "\r\033[K" << std::flush;

  LotReport report;
  report.lot = o.lot;
  report.product = limits.lot.product;
  report.limits_path = o.limits_path;
  report.rule = limits.lot.decision;
  report.limits = limits.limits;
  report.units = std::move(units);
  report.summary = summarize_lot(report.units, report.limits);

  if (csv_out) {
    write_lot_csv(csv_out->stream(), report);
    csv_out->commit();
  }
  if (json_out) {
    write_lot_json(json_out->stream(), report);
    json_out->commit();
  }
  const bool stdout_taken =
      (json_out && json_out->is_stdout()) || (csv_out && csv_out->is_stdout());
  if (!stdout_taken) write_lot_text(std::cout, report);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
  return report.summary.passed == report.summary.count ? exit_code::ok : exit_code::lot_not_passed;
}

}  // namespace lopside::cli
