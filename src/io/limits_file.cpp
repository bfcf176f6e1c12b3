// The limits file of the lot command, read with toml++ (the only file that includes it). The
// TOML parser checks the syntax; this file checks the meaning: every table, key and value is
// one this format defines, because a hand-written file with a misspelt "mx" that was quietly
// ignored would pass units that should fail.

#include "lopside/limits_file.hpp"

#include <toml++/toml.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <map>
#include <memory>
#include <optional>
#include <regex>
#include <system_error>

#include "lopside/error.hpp"

namespace lopside {
namespace {

// A limits file names a handful of figures; a file this large is a capture or a report given
// in the wrong place, and is refused before it is read into memory.
constexpr std::uintmax_t kMaxFileBytes = 1u << 20;

// How many known figure names an "unknown figure" message lists before it stops.
constexpr std::size_t kNamesShown = 12;

/// The parsing context: the file's name for messages and the figures a limit may name.
class Reader {
 public:
  Reader(const std::string& display_name, const std::vector<std::string>& known)
      : name_(display_name), known_(known) {}

  LimitsFile read(const toml::table& root) const;

 private:
  [[noreturn]] void fail(const toml::source_region& where, const std::string& message) const;
  void read_lot(const toml::node& node, LotSettings& lot) const;
  void read_limits(
      const toml::table& table, const std::string& prefix,
      std::vector<std::pair<toml::source_position, std::pair<std::string, Limit>>>& out) const;
  Limit read_limit(const toml::key& name_key, const toml::node& node,
                   const std::string& name) const;
  double read_bound(const toml::key& key, const toml::node& node, const std::string& name) const;
  std::string read_string(const toml::key& key, const toml::node& node) const;
  bool is_known(const std::string& name) const;
  bool is_known_prefix(const std::string& name) const;
  std::string unknown_figure(const std::string& name) const;

  const std::string& name_;
  const std::vector<std::string>& known_;
};

std::string shortest(double v) {
  // The shortest text that reads back as the same double (std::to_chars, C++17 [charconv]),
  // so a message shows the value as the file wrote it, not 0.01000000000000000021.
  char buf[32];
  const auto [end, ec] = std::to_chars(buf, buf + sizeof buf, v);
  return ec == std::errc() ? std::string(buf, end) : std::to_string(v);
}

const char* type_name(toml::node_type t) {
  switch (t) {
    case toml::node_type::table:
      return "a table";
    case toml::node_type::array:
      return "an array";
    case toml::node_type::string:
      return "a string";
    case toml::node_type::integer:
      return "an integer";
    case toml::node_type::floating_point:
      return "a number";
    case toml::node_type::boolean:
      return "a boolean";
    case toml::node_type::date:
      return "a date";
    case toml::node_type::time:
      return "a time";
    case toml::node_type::date_time:
      return "a date-time";
    case toml::node_type::none:
      break;
  }
  return "nothing";
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

// Levenshtein distance (insertions, deletions, substitutions), case folded: how a misspelt
// figure name such as "dc_ofset_a" or "THD" finds the name that was meant.
std::size_t edit_distance(std::string_view a_in, std::string_view b_in) {
  const std::string a = lower(a_in), b = lower(b_in);
  std::vector<std::size_t> row(b.size() + 1);
  for (std::size_t j = 0; j <= b.size(); ++j) row[j] = j;
  for (std::size_t i = 1; i <= a.size(); ++i) {
    std::size_t diagonal = row[0];
    row[0] = i;
    for (std::size_t j = 1; j <= b.size(); ++j) {
      const std::size_t above = row[j];
      row[j] = std::min({row[j] + 1, row[j - 1] + 1, diagonal + (a[i - 1] == b[j - 1] ? 0 : 1)});
      diagonal = above;
    }
  }
  return row[b.size()];
}

std::string quoted(const std::string& s) {
  return "'" + s + "'";
}

bool before(const toml::source_position& a, const toml::source_position& b) {
  return a.line != b.line ? a.line < b.line : a.column < b.column;
}

void Reader::fail(const toml::source_region& where, const std::string& message) const {
  // toml++ counts lines from 1 and gives 0 to nodes it made up (none reach here in practice).
  if (where.begin.line == 0) throw InputError(name_, message);
  throw InputError(name_, InputLocation::at_line(where.begin.line), message);
}

bool Reader::is_known(const std::string& name) const {
  return std::find(known_.begin(), known_.end(), name) != known_.end();
}

bool Reader::is_known_prefix(const std::string& name) const {
  const std::string head = name + ".";
  return std::any_of(known_.begin(), known_.end(),
                     [&](const std::string& k) { return k.rfind(head, 0) == 0; });
}

std::string Reader::unknown_figure(const std::string& name) const {
  std::string out = quoted(name) + " is not a figure lopside measures";
  const std::string* best = nullptr;
  std::size_t best_distance = 0;
  for (const std::string& k : known_) {
    const std::size_t d = edit_distance(name, k);
    if (best == nullptr || d < best_distance) {
      best = &k;
      best_distance = d;
    }
  }
  // Two edits catch a dropped, doubled or swapped letter without proposing unrelated names.
  if (best != nullptr && best_distance <= 2) out += " (did you mean " + quoted(*best) + "?)";
  out += "; expected one of: ";
  if (known_.empty()) return out + "(none)";
  for (std::size_t i = 0; i < known_.size() && i < kNamesShown; ++i)
    out += (i == 0 ? "" : ", ") + known_[i];
  if (known_.size() > kNamesShown)
    out += " and " + std::to_string(known_.size() - kNamesShown) + " more";
  return out;
}

std::string Reader::read_string(const toml::key& key, const toml::node& node) const {
  const auto* s = node.as_string();
  if (s == nullptr) {
    fail(node.source(), std::string(key.str()) + " is " + type_name(node.type()) +
                            "; expected a string in quotes");
  }
  return s->get();
}

void Reader::read_lot(const toml::node& node, LotSettings& lot) const {
  const auto* table = node.as_table();
  if (table == nullptr) {
    fail(node.source(), std::string("lot is ") + type_name(node.type()) +
                            "; expected a table [lot] with decision, unit_id, product");
  }
  const toml::key* unit_id_at = nullptr;
  const toml::key* pattern_at = nullptr;
  const toml::key* key_at = nullptr;
  for (const auto& [key, value] : *table) {
    const std::string k(key.str());
    if (k == "product") {
      lot.product = read_string(key, value);
    } else if (k == "decision") {
      const std::string v = read_string(key, value);
      if (v == "simple") {
        lot.decision = DecisionRule::simple;
      } else if (v == "guarded") {
        lot.decision = DecisionRule::guarded;
      } else {
        fail(value.source(), "decision = \"" + v +
                                 "\" is not a decision rule; expected \"simple\" "
                                 "(a unit passes if its value is within the limits) or \"guarded\" "
                                 "(the limits narrowed by each value's uncertainty)");
      }
    } else if (k == "unit_id") {
      const std::string v = read_string(key, value);
      if (v == "stem") {
        lot.unit_id = UnitIdSource::file_stem;
      } else if (v == "pattern") {
        lot.unit_id = UnitIdSource::file_name_pattern;
      } else if (v == "key") {
        lot.unit_id = UnitIdSource::capture_key;
      } else {
        fail(value.source(), "unit_id = \"" + v +
                                 "\" is not a source of unit ids; expected \"stem\" (the file "
                                 "name without extension), \"pattern\" or \"key\"");
      }
      unit_id_at = &key;
    } else if (k == "unit_id_pattern") {
      lot.unit_id_pattern = read_string(key, value);
      if (lot.unit_id_pattern.empty()) {
        fail(value.source(),
             "unit_id_pattern is empty; expected a regular expression such as "
             "\"unit(\\\\d+)\" whose first group is the unit id");
      }
      try {
        // Compiled once here so a bad pattern is reported against its line, not per unit.
        const std::regex check(lot.unit_id_pattern, std::regex::ECMAScript);
      } catch (const std::regex_error& e) {
        fail(value.source(), "unit_id_pattern \"" + lot.unit_id_pattern +
                                 "\" is not a valid regular expression (" + e.what() +
                                 "); expected ECMAScript syntax, with \\\\ for one backslash "
                                 "in a TOML \"string\" or a 'literal string'");
      }
      pattern_at = &key;
    } else if (k == "unit_id_key") {
      lot.unit_id_key = read_string(key, value);
      if (std::all_of(lot.unit_id_key.begin(), lot.unit_id_key.end(),
                      [](unsigned char c) { return std::isspace(c) != 0; })) {
        fail(value.source(),
             "unit_id_key is empty; expected a key of the captures' preamble "
             "such as \"Serial\"");
      }
      key_at = &key;
    } else {
      fail(key.source(), "unknown key " + quoted(k) +
                             " in [lot]; expected product, decision, unit_id, unit_id_pattern "
                             "or unit_id_key");
    }
  }
  // Each unit id source needs its own setting, and a setting for another source would be
  // ignored: both are told, so a forgotten unit_id = "pattern" does not fall back to the stem.
  const char* const shown[] = {"stem", "pattern", "key"};
  const char* const source_name = shown[static_cast<std::size_t>(lot.unit_id)];
  if (lot.unit_id == UnitIdSource::file_name_pattern && pattern_at == nullptr) {
    fail(unit_id_at->source(),
         "unit_id = \"pattern\" needs unit_id_pattern; expected e.g. "
         "unit_id_pattern = \"unit(\\\\d+)\" in [lot]");
  }
  if (lot.unit_id == UnitIdSource::capture_key && key_at == nullptr) {
    fail(unit_id_at->source(),
         "unit_id = \"key\" needs unit_id_key; expected e.g. "
         "unit_id_key = \"Serial\" in [lot]");
  }
  if (pattern_at != nullptr && lot.unit_id != UnitIdSource::file_name_pattern) {
    fail(pattern_at->source(), std::string("unit_id_pattern is given but unit_id is \"") +
                                   source_name +
                                   "\", so it would be ignored; expected unit_id = \"pattern\"");
  }
  if (key_at != nullptr && lot.unit_id != UnitIdSource::capture_key) {
    fail(key_at->source(), std::string("unit_id_key is given but unit_id is \"") + source_name +
                               "\", so it would be ignored; expected unit_id = \"key\"");
  }
}

double Reader::read_bound(const toml::key& key, const toml::node& node,
                          const std::string& name) const {
  const std::string where = std::string(key.str()) + " of " + name;
  double v = 0.0;
  if (const auto* i = node.as_integer()) {
    v = static_cast<double>(i->get());
  } else if (const auto* f = node.as_floating_point()) {
    v = f->get();
  } else {
    fail(node.source(), where + " is " + type_name(node.type()) +
                            "; expected a number (without quotes), e.g. 0.05 or 1e-3");
  }
  if (!std::isfinite(v)) {
    fail(node.source(), where + " is " + shortest(v) +
                            "; expected a finite number (leave the bound out for none)");
  }
  return v;
}

Limit Reader::read_limit(const toml::key& name_key, const toml::node& node,
                         const std::string& name) const {
  const auto* table = node.as_table();
  if (table == nullptr) {
    fail(node.source(), "limits." + name + " is " + type_name(node.type()) +
                            "; expected a table [limits." + name + "] with min and/or max");
  }
  Limit limit;
  const toml::node* max_node = nullptr;
  for (const auto& [key, value] : *table) {
    if (key.str() == "min") {
      limit.min = read_bound(key, value, name);
    } else if (key.str() == "max") {
      limit.max = read_bound(key, value, name);
      max_node = &value;
    } else {
      fail(key.source(), "unknown key " + quoted(std::string(key.str())) + " in [limits." + name +
                             "]; expected min or max");
    }
  }
  if (!limit.min && !limit.max) {
    fail(name_key.source(),
         "[limits." + name + "] has neither min nor max; expected at least one bound");
  }
  if (limit.min && limit.max && *limit.min > *limit.max) {
    fail(max_node->source(), "limits of " + name + ": min = " + shortest(*limit.min) +
                                 " is above max = " + shortest(*limit.max) +
                                 "; expected min <= max (swapped?)");
  }
  return limit;
}

void Reader::read_limits(
    const toml::table& table, const std::string& prefix,
    std::vector<std::pair<toml::source_position, std::pair<std::string, Limit>>>& out) const {
  for (const auto& [key, value] : table) {
    const std::string name = prefix + std::string(key.str());
    if (is_known(name)) {
      out.push_back({key.source().begin, {name, read_limit(key, value, name)}});
    } else if (value.is_table() && is_known_prefix(name)) {
      // [limits.voltage.rms_v]: TOML makes "voltage" a table holding "rms_v". Bounds put on
      // the group itself would otherwise read as figures named "voltage.min".
      for (const auto& [inner, bound] : *value.as_table()) {
        if (inner.str() == "min" || inner.str() == "max") {
          std::string members;
          for (const std::string& k : known_) {
            if (k.rfind(name + ".", 0) == 0) members += (members.empty() ? "" : ", ") + k;
          }
          fail(inner.source(), quoted(name) + " is a group of figures (" + members +
                                   "), not one; expected a table per figure such as [limits." +
                                   members.substr(0, members.find(',')) + "]");
        }
      }
      read_limits(*value.as_table(), name + ".", out);
    } else {
      fail(key.source(), unknown_figure(name));
    }
  }
}

LimitsFile Reader::read(const toml::table& root) const {
  LimitsFile file;
  const toml::table* limits = nullptr;
  for (const auto& [key, value] : root) {
    if (key.str() == "lot") {
      read_lot(value, file.lot);
    } else if (key.str() == "limits") {
      limits = value.as_table();
      if (limits == nullptr) {
        fail(value.source(), std::string("limits is ") + type_name(value.type()) +
                                 "; expected tables such as [limits.thd] with min and/or max");
      }
    } else {
      fail(key.source(), "unknown " + std::string(value.is_table() ? "table [" : "key '") +
                             std::string(key.str()) + (value.is_table() ? "]" : "'") +
                             "; expected [lot] and [limits.NAME] tables only");
    }
  }
  if (limits == nullptr) {
    throw InputError(name_,
                     "no limits; expected at least one table such as [limits.thd] with "
                     "min and/or max");
  }
  std::vector<std::pair<toml::source_position, std::pair<std::string, Limit>>> found;
  read_limits(*limits, "", found);
  if (found.empty()) {
    fail(limits->source(),
         "[limits] names no figure; expected at least one table such as "
         "[limits.thd] with min and/or max");
  }
  // toml::table keeps keys sorted; the file's order is the order a QA engineer chose to read
  // them in, so it is restored from where each name stands.
  std::stable_sort(found.begin(), found.end(),
                   [](const auto& a, const auto& b) { return before(a.first, b.first); });
  std::map<std::string, toml::source_index> first_line;
  for (const auto& [at, entry] : found) {
    const auto [it, inserted] = first_line.emplace(entry.first, at.line);
    if (!inserted) {
      // Only possible with both spellings, [limits.voltage.rms_v] and [limits."voltage.rms_v"].
      fail(toml::source_region{at, at, nullptr},
           "a second limit for " + entry.first + " (the first is on line " +
               std::to_string(it->second) + "); expected one table per figure");
    }
    file.limits.push_back(entry);
  }
  return file;
}

}  // namespace

LimitsFile parse_limits(std::string_view text, const std::string& display_name,
                        const std::vector<std::string>& known_figures) {
  toml::table root;
  try {
    root = toml::parse(text, std::string_view(display_name));
  } catch (const toml::parse_error& e) {
    const std::string message = "not valid TOML: " + std::string(e.description()) +
                                "; expected TOML 1.0 (https://toml.io/en/v1.0.0)";
    const auto line = e.source().begin.line;
    if (line == 0) throw InputError(display_name, message);
    throw InputError(display_name, InputLocation::at_line(line), message);
  }
  return Reader(display_name, known_figures).read(root);
}

LimitsFile read_limits_file(const std::filesystem::path& path,
                            const std::vector<std::string>& known_figures) {
  const std::string shown = path.string();
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec)) {
    throw InputError(shown, "is a directory; expected a limits file (TOML)");
  }
  const std::uintmax_t size = std::filesystem::file_size(path, ec);
  if (!ec && size > kMaxFileBytes) {
    throw InputError(shown,
                     "is " + std::to_string(size) +
                         " bytes, too large for a limits file; expected a TOML file "
                         "of [lot] and [limits.NAME] tables (a capture given in its place?)");
  }
  const std::unique_ptr<std::FILE, int (*)(std::FILE*)> in(std::fopen(path.c_str(), "rb"),
                                                           &std::fclose);
  if (!in) {
    throw InputError(shown, std::string("cannot open the limits file: ") + std::strerror(errno));
  }
  std::string text;
  char buf[8192];
  for (;;) {
    const std::size_t got = std::fread(buf, 1, sizeof buf, in.get());
    if (got < sizeof buf && std::ferror(in.get()) != 0) {
      throw InputError(shown, std::string("cannot read the limits file: ") + std::strerror(errno));
    }
    text.append(buf, got);
    if (text.size() > kMaxFileBytes) {
      throw InputError(shown,
                       "is larger than 1 MiB, too large for a limits file; expected a "
                       "TOML file of [lot] and [limits.NAME] tables");
    }
    if (got < sizeof buf) break;
  }
  return parse_limits(text, shown, known_figures);
}

}  // namespace lopside
