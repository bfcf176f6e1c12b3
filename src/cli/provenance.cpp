// Provenance for the JSON outputs: see provenance.hpp.
#include "provenance.hpp"

#include <sys/stat.h>

#include <array>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <exception>
#include <sstream>

#include "lopside/history.hpp"
#include "lopside_version.hpp"  // generated at build time: cmake/WriteVersionHeader.cmake

namespace lopside::cli {
namespace {

std::string canonical_number(double v) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.17g", v);
  return buf.data();
}

}  // namespace

std::string tool_version() {
  return LOPSIDE_VERSION;
}

std::string utc_now() {
  const std::time_t t = std::chrono::system_clock::to_time_t(std::chrono::system_clock::now());
  std::tm tm{};
  ::gmtime_r(&t, &tm);
  std::array<char, 32> buf{};
  std::strftime(buf.data(), buf.size(), "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf.data();
}

std::vector<GivenOption> given_options(const CLI::App& command,
                                       const std::vector<std::string>& skip) {
  std::vector<GivenOption> out;
  for (const CLI::Option* opt : command.get_options()) {
    if (opt == command.get_help_ptr() || !opt->nonpositional() || opt->count() == 0) continue;
    if (opt->get_lnames().empty()) continue;
    const std::string name = "--" + opt->get_lnames().front();
    bool skipped = false;
    for (const std::string& s : skip) skipped = skipped || s == name;
    if (skipped) continue;
    out.push_back(GivenOption{name, opt->results()});
  }
  return out;
}

std::string canonical_settings(const AnalysisOptions& a) {
  // The text and its order are those the lot history has stored since issue 11: changing it
  // would change every recorded settings hash.
  std::ostringstream s;
  s << "probe_offset_a=" << canonical_number(a.probe_offset_a) << '\n'
    << "probe_gain_pct=" << canonical_number(a.probe_gain_pct) << '\n'
    << "zero=" << a.zero << '\n'
    << "block_cycles=" << a.block_cycles << '\n'
    << "max_order=" << a.max_order << '\n'
    << "reference=" << a.reference << '\n'
    << "current=" << a.reader.current.value_or("") << '\n'
    << "voltage=" << a.reader.voltage.value_or("") << '\n'
    << "rate_hz=" << (a.reader.rate_hz ? canonical_number(*a.reader.rate_hz) : "") << '\n'
    << "skip_bad_rows=" << (a.reader.skip_bad_rows ? 1 : 0) << '\n';
  for (const auto& [ch, g] : a.reader.gains)
    s << "gain " << ch << '=' << canonical_number(g) << '\n';
  for (const auto& [ch, u] : a.reader.units) s << "unit " << ch << '=' << u << '\n';
  for (const auto& [ch, v] : a.reader.scales)
    s << "scale " << ch << '=' << canonical_number(v) << '\n';
  for (const std::string& w : a.reader.with_paths) s << "with=" << w << '\n';
  // The probe (issue 13) changes the figures too; written only when not the default, so the
  // settings of records made before it keep their text and hash.
  if (a.probe != "shunt") s << "probe=" << a.probe << '\n';
  if (a.probe_tau_s) s << "probe_tau_s=" << canonical_number(*a.probe_tau_s) << '\n';
  if (a.probe_tau_pct > 0) s << "probe_tau_pct=" << canonical_number(a.probe_tau_pct) << '\n';
  if (a.rogowski_v_s_per_a)
    s << "rogowski_v_s_per_a=" << canonical_number(*a.rogowski_v_s_per_a) << '\n';
  return s.str();
}

std::vector<std::pair<std::string, SettingValue>> analysis_settings(const AnalysisOptions& a) {
  std::vector<std::pair<std::string, SettingValue>> s;
  s.emplace_back("probe", a.probe);
  s.emplace_back("probe_offset_tolerance_a", a.probe_offset_a);
  s.emplace_back("probe_gain_tolerance_pct", a.probe_gain_pct);
  if (a.probe_tau_s) s.emplace_back("probe_tau_s", *a.probe_tau_s);
  s.emplace_back("probe_tau_tolerance_pct", a.probe_tau_pct);
  if (a.rogowski_v_s_per_a) s.emplace_back("rogowski_v_s_per_a", *a.rogowski_v_s_per_a);
  s.emplace_back("zero_stretch_s", a.zero);
  s.emplace_back("reference", a.reference);
  s.emplace_back("harmonic_block_cycles", static_cast<double>(a.block_cycles));
  s.emplace_back("harmonic_max_order", static_cast<double>(a.max_order));
  for (auto& r : reader_settings(a.reader)) s.push_back(std::move(r));
  return s;
}

std::vector<std::pair<std::string, SettingValue>> reader_settings(const ReaderOptions& r) {
  std::vector<std::pair<std::string, SettingValue>> s;
  s.emplace_back("current_channel", r.current.value_or(""));
  s.emplace_back("voltage_channel", r.voltage.value_or(""));
  if (r.rate_hz) s.emplace_back("sample_rate_hz", *r.rate_hz);
  s.emplace_back("skip_bad_rows", r.skip_bad_rows);
  for (const auto& [ch, g] : r.gains) s.emplace_back("gain." + ch, g);
  for (const auto& [ch, u] : r.units) s.emplace_back("unit." + ch, u);
  for (const auto& [ch, v] : r.scales) s.emplace_back("full_scale." + ch, v);
  for (std::size_t k = 0; k < r.with_paths.size(); ++k)
    s.emplace_back("with." + std::to_string(k + 1), r.with_paths[k]);
  return s;
}

Provenance begin_provenance(const std::string& command, const std::vector<GivenOption>& given) {
  Provenance p;
  p.tool_version = tool_version();
  p.command = command;
  p.analysed_utc = utc_now();
  p.options = given;
  return p;
}

void add_analysis_settings(Provenance& p, const AnalysisOptions& a) {
  for (auto& s : analysis_settings(a)) p.settings.push_back(std::move(s));
  p.settings_sha256 = text_sha256(canonical_settings(a));
}

InputIdentity identify_input(const std::string& role, const std::string& path,
                             const std::atomic<bool>* stop) {
  InputIdentity id;
  id.role = role;
  id.path = path;
  if (path == "-") {
    id.not_hashed = "read from standard input: its bytes are read once";
    return id;
  }
  struct stat st {};
  if (::stat(path.c_str(), &st) != 0) {
    id.not_hashed = "cannot be opened to hash it";
    return id;
  }
  if (!S_ISREG(st.st_mode)) {
    id.not_hashed = "not a regular file (a pipe or a device): its bytes are read once";
    return id;
  }
  try {
    std::uint64_t bytes = 0;
    id.sha256 = file_sha256(path, bytes, stop);
    if (!id.sha256.empty()) id.bytes = bytes;
  } catch (const std::exception& e) {
    id.sha256.clear();
    id.not_hashed = std::string("cannot be read to hash it: ") + e.what();
  }
  return id;
}

InputHasher::InputHasher(std::vector<NamedInput> inputs) : inputs_(std::move(inputs)) {
  thread_ = std::thread([this] {
    for (const auto& [role, path] : inputs_) out_.push_back(identify_input(role, path, &stop_));
  });
}

InputHasher::~InputHasher() {
  stop_ = true;
  if (thread_.joinable()) thread_.join();
}

std::vector<InputIdentity> InputHasher::take() {
  if (thread_.joinable()) thread_.join();
  return std::move(out_);
}

}  // namespace lopside::cli
