// `lopside trend`: the process across lots, from the lot history (issue 11, item 7).
#include <iostream>
#include <memory>
#include <optional>
#include <string>

#include "commands.hpp"
#include "lopside/atomic_file.hpp"
#include "lopside/error.hpp"
#include "lopside/history.hpp"
#include "lopside/trend_report.hpp"
#include "output_paths.hpp"
#include "provenance.hpp"

namespace lopside::cli {

void setup_trend(CLI::App& app) {
  auto options = std::make_shared<TrendOptions>();
  CLI::App* sub = app.add_subcommand(
      "trend",
      "Show each limited figure lot by lot (mean, spread, Cpk, yield) from the lot history, a "
      "control chart of the lot means with run rules flagging drift, and the units that failed "
      "most often");
  sub->add_option("--history", options->history, "The history store written by `lot --history`")
      ->required()
      ->type_name("FILE");
  sub->add_option("--product", options->product, "Only this product's lots");
  sub->add_option("--json", options->json_path,
                  "Also write the trend as JSON to FILE; '-' writes it alone to standard output")
      ->type_name("FILE|-");
  sub->add_option("--csv", options->csv_path, "Write one row per lot and figure as CSV to FILE")
      ->type_name("FILE|-");
  sub->add_option("--html", options->html_path,
                  "Also write a self-contained HTML report (each figure's lot means with their "
                  "control limits and flagged lots, the lots, the repeat failures) to FILE; '-' "
                  "writes it alone to standard output")
      ->type_name("FILE|-");
  sub->callback([options, sub]() {
    options->given_options = given_options(*sub, {"--json", "--csv", "--html"});
    run_trend(*options);
  });
}

void run_trend(const TrendOptions& o) {
  const std::string& html_path = o.html_path;
  std::error_code ec;
  const bool uri = o.history.find("://") != std::string::npos;
  if (!uri && !std::filesystem::exists(o.history, ec))
    throw InputError(o.history,
                     "no such history store; expected a file written by "
                     "`lopside lot --history`");
  const bool csv_replaces = o.json_path.empty() && o.csv_path == "-";
  // A database URI is no file an output could overwrite.
  check_output_paths(uri ? std::vector<std::string>{} : std::vector<std::string>{o.history},
                     {{"--json", o.json_path, true},
                      {"--csv", o.csv_path, csv_replaces},
                      {"--html", html_path, true}});
  std::optional<AtomicOutput> json_out, csv_out, html_out;
  if (!o.json_path.empty()) json_out.emplace(o.json_path);
  if (!o.csv_path.empty()) csv_out.emplace(o.csv_path);
  if (!html_path.empty()) html_out.emplace(html_path);
  const auto store = open_history(o.history);
  const std::vector<RecordedUnit> units = store->recorded_units(o.product);
  if (units.empty()) {
    throw InputError(o.history, o.product.empty()
                                    ? "the history holds no unit yet"
                                    : "the history holds no unit of product '" + o.product + "'");
  }
  const Trend t = build_trend(units);
  Provenance provenance = begin_provenance("trend", o.given_options);
  provenance.settings.emplace_back("product", o.product);
  if (uri) {
    InputIdentity id;
    id.role = "history";
    id.path = o.history;
    id.not_hashed = "a database on a server";
    provenance.inputs.push_back(id);
  } else {
    provenance.inputs.push_back(identify_input("history", o.history));
  }
  if (csv_out) {
    write_trend_csv(csv_out->stream(), t);
    csv_out->commit();
  }
  if (json_out) {
    write_trend_json(json_out->stream(), t, o.history, provenance);
    json_out->commit();
  }
  if (html_out) {
    write_trend_html(html_out->stream(), t, o.history);
    html_out->commit();
  }
  const bool stdout_taken = (json_out && json_out->is_stdout()) ||
                            (csv_out && csv_out->is_stdout()) ||
                            (html_out && html_out->is_stdout());
  if (!stdout_taken) write_trend_text(std::cout, t, o.history);
  std::cout.flush();
  if (!std::cout) throw std::runtime_error("cannot write to standard output");
}

}  // namespace lopside::cli
