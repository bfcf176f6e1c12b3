#include "reader_flags.hpp"

#include <cmath>
#include <map>
#include <optional>
#include <string>
#include <utility>
#include <vector>

#include "lopside/number_parse.hpp"
#include "lopside/units.hpp"

namespace lopside::cli {
namespace {

constexpr const char* kGroup = "Reading the capture";

/// "CH=VALUE" split at its last '=' (a channel name may hold one, a number or unit cannot).
/// Throws a usage error naming the flag and showing the expected form.
std::pair<std::string, std::string> split_assignment(const std::string& flag,
                                                     const std::string& text,
                                                     const std::string& value_name,
                                                     const std::string& example) {
  const auto eq = text.rfind('=');
  if (eq == std::string::npos || eq == 0 || eq + 1 == text.size()) {
    throw CLI::ValidationError(
        flag, "expected CH=" + value_name + " (a channel number or name, '=', then the " +
                  value_name + "), e.g. " + flag + " " + example + "; got '" + text + "'");
  }
  return {text.substr(0, eq), text.substr(eq + 1)};
}

/// A number as the text readers read it: '.' decimal, no locale, finite.
double number_value(const std::string& flag, const std::string& text, const std::string& what) {
  const auto v = parse_number(text);
  if (!v || !std::isfinite(*v)) {
    throw CLI::ValidationError(flag, "expected " + what + ", got '" + text + "'");
  }
  return *v;
}

template <typename Value>
void insert_once(std::map<ChannelSelector, Value>& map, const std::string& flag,
                 const std::string& channel, Value value) {
  if (!map.emplace(channel, std::move(value)).second) {
    throw CLI::ValidationError(flag, "given twice for channel '" + channel + "'");
  }
}

/// Binds a repeatable CH=VALUE flag; `store` parses one value and files it.
template <typename Store>
void add_assignment_flag(CLI::App& app, const std::string& flag, const std::string& value_name,
                         const std::string& description, Store store) {
  app.add_option_function<std::vector<std::string>>(
         flag,
         [store](const std::vector<std::string>& items) {
           for (const std::string& item : items) store(item);
         },
         description)
      ->type_name("CH=" + value_name)
      ->allow_extra_args(false)  // one CH=VALUE per occurrence: never swallow the capture path
      ->group(kGroup);
}

}  // namespace

void add_reader_flags(CLI::App& app, ReaderOptions& options) {
  app.add_option_function<std::string>(
         "--current", [&options](const std::string& ch) { options.current = ch; },
         "The channel carrying the discharge current (number from 1, time column not counted, "
         "or header name); guessed from units and names otherwise")
      ->type_name("CH")
      ->group(kGroup);
  app.add_option_function<std::string>(
         "--voltage", [&options](const std::string& ch) { options.voltage = ch; },
         "The channel carrying the voltage, if any")
      ->type_name("CH")
      ->group(kGroup);

  add_assignment_flag(
      app, "--scale", "VALUE",
      "Physical value of full scale of channel CH in a WAV-like file (repeatable)",
      [&options](const std::string& item) {
        const auto [ch, text] = split_assignment("--scale", item, "VALUE", "1=50");
        const double v = number_value("--scale", text, "a positive full-scale value");
        if (!(v > 0.0)) {
          throw CLI::ValidationError("--scale",
                                     "expected a positive full-scale value, got '" + text + "'");
        }
        insert_once(options.scales, "--scale", ch, v);
      });
  add_assignment_flag(app, "--gain", "FACTOR",
                      "Multiply channel CH by FACTOR, e.g. 10 for a 100 mV/A probe (repeatable)",
                      [&options](const std::string& item) {
                        const auto [ch, text] = split_assignment("--gain", item, "FACTOR", "1=10");
                        const double v = number_value("--gain", text, "a non-zero factor");
                        if (v == 0.0) {
                          throw CLI::ValidationError(
                              "--gain", "expected a non-zero factor, got '" + text + "'");
                        }
                        insert_once(options.gains, "--gain", ch, v);
                      });
  add_assignment_flag(
      app, "--unit", "UNIT",
      "Unit of channel CH after the gain: A, V or s with an optional prefix, e.g. mA "
      "(repeatable)",
      [&options](const std::string& item) {
        const auto [ch, text] = split_assignment("--unit", item, "UNIT", "1=mA");
        if (!parse_unit(text)) {
          throw CLI::ValidationError("--unit",
                                     "expected A, V or s with an optional prefix "
                                     "(k, m, u, n), got '" +
                                         text + "'");
        }
        insert_once(options.units, "--unit", ch, text);
      });

  app.add_option_function<std::string>(
         "--rate",
         [&options](const std::string& text) {
           const double v = number_value("--rate", text, "a sample rate in Hz, e.g. 10e6");
           if (!(v >= kMinSampleRateHz && v <= kMaxSampleRateHz)) {
             throw CLI::ValidationError(
                 "--rate", "expected a sample rate from 1 Hz to 100 GHz, got '" + text + "'");
           }
           options.rate_hz = v;
         },
         "Sample rate in Hz, for text captures with neither a time column nor a stated rate")
      ->type_name("HZ")
      ->group(kGroup);
  app.add_option("--with", options.with_paths,
                 "Another file of the same acquisition (same start, sample interval and length), "
                 "e.g. the voltage saved apart from the current; its channels are numbered on "
                 "after the capture's (repeatable)")
      ->type_name("FILE")
      ->allow_extra_args(false)  // one FILE per occurrence: never swallow the capture path
      ->group(kGroup);
  app.add_flag("--skip-bad-rows", options.skip_bad_rows,
               "Skip malformed data rows (they are counted and reported) instead of stopping")
      ->group(kGroup);
}

}  // namespace lopside::cli
