// `lopside lot`: every unit of a production lot measured (in parallel), judged against a
// limits file, and summed up for QA (issue 11).
#include <glob.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <atomic>
#include <cctype>
#include <chrono>
#include <cstdio>
#include <ctime>
#include <filesystem>
#include <fstream>
#include <iostream>
#include <memory>
#include <mutex>
#include <optional>
#include <regex>
#include <sstream>
#include <thread>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"
#include "lopside/figures.hpp"
#include "lopside/history.hpp"
#include "lopside/limits_file.hpp"
#include "lopside/lot_report.hpp"
#include "lopside/pipeline.hpp"
#include "output_paths.hpp"
#include "provenance.hpp"

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

std::string hostname() {
  std::array<char, 256> name{};
  if (::gethostname(name.data(), name.size() - 1) != 0) return "unknown";
  return name.data();
}

std::string canonical_number(double v) {
  std::array<char, 48> buf{};
  std::snprintf(buf.data(), buf.size(), "%.17g", v);
  return buf.data();
}

std::string canonical_limits(const LimitList& limits) {
  std::string s;
  for (const auto& [name, l] : limits) {
    s += name + " min=" + (l.min ? canonical_number(*l.min) : "") +
         " max=" + (l.max ? canonical_number(*l.max) : "") + "\n";
  }
  return s;
}

HistoryLot history_lot(const LotReport& r, const LotOptions& o,
                       const std::vector<std::string>& hashes,
                       const std::vector<std::uint64_t>& sizes) {
  HistoryLot h;
  h.name = o.lot;
  h.product = r.product;
  h.station = o.station.empty() ? hostname() : o.station;
  h.decision_rule = to_string(r.rule);
  h.limits = canonical_limits(r.limits);
  h.settings = canonical_settings(o.analysis);
  h.settings_sha256 = text_sha256(h.settings + "\n" + h.limits + "\n" + h.decision_rule);
  h.tool_version = r.provenance.tool_version;
  h.judged_utc = r.provenance.analysed_utc;
  for (std::size_t k = 0; k < r.units.size(); ++k) {
    const LotUnit& u = r.units[k];
    HistoryUnit hu;
    hu.unit_id = u.id;
    hu.path = u.path;
    hu.capture_sha256 = hashes[k];
    hu.capture_bytes = sizes[k];
    hu.verdict = to_string(u.verdict);
    hu.deciding_figure = u.deciding ? u.figures[*u.deciding].name : "";
    hu.reason = u.reason;
    for (const LotFigure& f : u.figures) {
      HistoryFigure hf;
      hf.name = f.name;
      if (f.value) {
        hf.value = f.value->value;
        hf.u95 = f.value->u95;
        hf.margin = f.decision.margin;
      }
      hf.verdict = to_string(f.decision.verdict);
      hu.figures.push_back(hf);
    }
    h.units.push_back(std::move(hu));
  }
  return h;
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
  sub->add_option("--html", options->html_path,
                  "Also write a self-contained HTML report (the unit table, a histogram with "
                  "the limits and a control chart per limited figure) to FILE; '-' writes it "
                  "alone to standard output")
      ->type_name("FILE|-");
  sub->add_option("--history", options->history,
                  "Record every judged unit in this history store: an SQLite file (created if "
                  "absent) or a postgresql:// URI; needs --lot")
      ->type_name("FILE");
  sub->add_option("--station", options->station,
                  "The test station recorded with each unit (default: this machine's name)");
  add_analysis_flags(*sub, options->analysis);
  sub->callback([options, sub]() {
    options->analysis.given_options = given_options(
        *sub, {"--json", "--csv", "--html", "--jobs", "--history", "--station", "--lot"});
    command_status = run_lot(*options);
  });
}

int run_lot(const LotOptions& o) {
  const std::string& html_path = o.html_path;
  const LimitsFile limits = read_limits_file(o.limits_path, limitable_figures());
  if (!o.history.empty() && o.lot.empty())
    throw InputError(o.history, "--history records units by lot; expected --lot NAME");
  // Opened first, so that an unusable store fails before a long lot.
  std::unique_ptr<HistoryStore> history;
  if (!o.history.empty()) history = open_history(o.history);
  const std::vector<std::string> captures = expand_captures(o.captures);
  if (captures.empty()) throw InputError(o.limits_path, "no capture given; expected CAPTURE...");

  std::vector<std::string> inputs = captures;
  inputs.push_back(o.limits_path);
  const bool csv_replaces = o.json_path.empty() && o.csv_path == "-";
  check_output_paths(inputs, {{"--json", o.json_path, true},
                              {"--csv", o.csv_path, csv_replaces},
                              {"--html", html_path, true}});
  std::optional<AtomicOutput> json_out, csv_out, html_out;
  if (!o.json_path.empty()) json_out.emplace(o.json_path);
  if (!o.csv_path.empty()) csv_out.emplace(o.csv_path);
  if (!html_path.empty()) html_out.emplace(html_path);

  // Captures are measured by `jobs` threads, each taking the next one; results keep the input
  // order. Each measurement holds its own bounded buffers (README: Speed and memory), so memory
  // grows with the jobs, not with the lot.
  const unsigned cores = std::max(1u, std::thread::hardware_concurrency());
  const unsigned jobs =
      std::min<unsigned>(o.jobs ? o.jobs : cores, static_cast<unsigned>(captures.size()));
  Provenance provenance = begin_provenance("lot", o.analysis.given_options);
  add_analysis_settings(provenance, o.analysis);
  provenance.settings.emplace_back("decision_rule", to_string(limits.lot.decision));
  provenance.inputs.push_back(identify_input("limits", o.limits_path));
  std::vector<InputIdentity> identities(captures.size());
  std::vector<LotUnit> units(captures.size());
  std::vector<std::string> hashes(captures.size());
  std::vector<std::uint64_t> sizes(captures.size(), 0);
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
      } catch (const InputError& e) {
        // One capture that cannot be read or measured does not stop the lot; the reason
        // leaves out the path the row already shows, and keeps the place (line or byte).
        std::string why = e.message();
        if (e.where().line) why = "line " + std::to_string(*e.where().line) + ": " + why;
        if (e.where().byte_offset)
          why = "byte " + std::to_string(*e.where().byte_offset) + ": " + why;
        units[k] = unmeasured_unit(unit_id(path, limits.lot, nullptr), path, why);
      } catch (const std::exception& e) {
        units[k] = unmeasured_unit(unit_id(path, limits.lot, nullptr), path, e.what());
      }
      // The capture's identity for the JSON and the history; a capture that cannot be read
      // has none and is not recorded.
      identities[k] = identify_input("capture", path);
      hashes[k] = identities[k].sha256;
      sizes[k] = identities[k].bytes.value_or(0);
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
  report.probe_kind = o.analysis.probe;
  report.rule = limits.lot.decision;
  report.limits = limits.limits;
  report.units = std::move(units);
  report.summary = summarize_lot(report.units, report.limits);
  for (InputIdentity& id : identities) provenance.inputs.push_back(std::move(id));
  report.provenance = std::move(provenance);

  if (history) {
    const RecordOutcome rec = history->record(history_lot(report, o, hashes, sizes));
    std::cerr << "lopside lot: history " << o.history << ": " << rec.added << " unit(s) recorded, "
              << rec.already << " already there (same capture, same settings)";
    if (rec.unhashed > 0) std::cerr << ", " << rec.unhashed << " without a readable capture";
    std::cerr << '\n';
  }
  if (csv_out) {
    write_lot_csv(csv_out->stream(), report);
    csv_out->commit();
  }
  if (json_out) {
    write_lot_json(json_out->stream(), report);
    json_out->commit();
  }
  if (html_out) {
    write_lot_html(html_out->stream(), report);
    html_out->commit();
  }
  const bool stdout_taken = (json_out && json_out->is_stdout()) ||
                            (csv_out && csv_out->is_stdout()) ||
                            (html_out && html_out->is_stdout());
  if (!stdout_taken) write_lot_text(std::cout, report);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
  return report.summary.passed == report.summary.count ? exit_code::ok : exit_code::lot_not_passed;
}

}  // namespace lopside::cli
