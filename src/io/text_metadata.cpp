// Key/value lines around a text capture's samples. Scopes word the same fact many ways
// ("Sample Interval", "Sampling Period", "#Sample rate: 1.5873e+06Hz", "Increment"): keys are
// compared by their letters and digits alone, lower case, so padding, case and punctuation do
// not matter.
#include "lopside/text_metadata.hpp"

#include <array>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <vector>

#include "lopside/number_parse.hpp"
#include "lopside/units.hpp"

namespace lopside {
namespace {

// No wording of a fact comes near this length. A longer key (a preamble line without a
// separator may be up to a MiB of text) is no key at all, so that each of a long preamble's
// lines costs a bounded time against the many wordings compared below.
constexpr std::size_t kMaxKeyBytes = 256;

std::string normalised_key(std::string_view key) {
  if (key.size() > kMaxKeyBytes) return {};
  std::string out;
  for (const char c : key) {
    const auto u = static_cast<unsigned char>(c);
    if (std::isalnum(u) && u < 0x80) out += static_cast<char>(std::tolower(u));
  }
  return out;
}

bool contains(const std::string& s, std::string_view part) {
  return s.find(part) != std::string::npos;
}

std::string_view strip_quotes(std::string_view s) {
  s = trim_blanks(s);
  while (s.size() >= 1 && (s.front() == '"' || s.front() == '\'')) s = trim_blanks(s.substr(1));
  while (s.size() >= 1 && (s.back() == '"' || s.back() == '\''))
    s = trim_blanks(s.substr(0, s.size() - 1));
  return s;
}

bool is_delimiter(char c) {
  return c == ',' || c == ';' || c == '\t' || c == ' ';
}

// Wordings of the sampling interval and of the sample rate, as normalised keys. "Horizontal
// Scale" (seconds per division) and a bare "Period" (of a generator) are deliberately absent.
bool is_interval_key(const std::string& k) {
  static constexpr std::array<std::string_view, 9> kContains{
      "sampleinterval", "samplinginterval", "sampleperiod", "samplingperiod", "timeinterval",
      "timeperpoint",   "timepersample",    "xincrement",   "timeincrement"};
  for (auto c : kContains) {
    if (contains(k, c)) return true;
  }
  static constexpr std::array<std::string_view, 18> kEquals{"increment",
                                                            "interval",
                                                            "xinc",
                                                            "dt",
                                                            "deltat",
                                                            "timestep",
                                                            "resolution",
                                                            "timeresolution",
                                                            "timebase",
                                                            "horizontalincrement",
                                                            "hincrement",
                                                            "resolutionhorizontal",
                                                            "horizontalresolution",
                                                            "sampletime",
                                                            "hresolution",
                                                            "dx",
                                                            "xresolution",
                                                            "deltax"};
  for (auto e : kEquals) {
    if (k == e) return true;
  }
  // Other wordings of an interval ("Horizontal interval", "Point interval"), but not the many
  // intervals a scope states that are not the sampling's (trigger hold-off, display refresh).
  if (contains(k, "interval")) {
    for (std::string_view not_sampling : {"trigger", "holdoff", "refresh", "display", "save",
                                          "record", "update", "measure", "timeout", "log"}) {
      if (contains(k, not_sampling)) return false;
    }
    return true;
  }
  return false;
}

bool is_rate_key(const std::string& k) {
  static constexpr std::array<std::string_view, 6> kContains{"samplerate",        "samplingrate",
                                                             "samplingfrequency", "samplefrequency",
                                                             "samplespersecond",  "samplingspeed"};
  for (auto c : kContains) {
    if (contains(k, c)) return true;
  }
  return k == "fs" || k == "srate" || k == "rate" || contains(k, "acquisitionrate") ||
         k == "sarate";
}

bool is_start_key(const std::string& k) {
  return k == "start" || k == "starttime" || k == "xstart" || k == "tstart" || k == "xorigin" ||
         k == "firstpointtime" || k == "timeoffirstsample" || k == "hoffset" || k == "xoffset" ||
         k == "x0";
}

std::optional<double> rate_factor(std::string_view unit) {
  std::string u;
  for (const char c : unit) {
    if (c != ' ') u += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  }
  // In a rate, "m" is mega: nobody states millisamples per second.
  struct R {
    std::string_view text;
    double factor;
  };
  static constexpr std::array<R, 19> kRates{{{"", 1.0},
                                             {"hz", 1.0},
                                             {"khz", 1e3},
                                             {"mhz", 1e6},
                                             {"ghz", 1e9},
                                             {"s/s", 1.0},
                                             {"sa/s", 1.0},
                                             {"ks/s", 1e3},
                                             {"ksa/s", 1e3},
                                             {"ms/s", 1e6},
                                             {"msa/s", 1e6},
                                             {"gs/s", 1e9},
                                             {"gsa/s", 1e9},
                                             {"samples/s", 1.0},
                                             {"sps", 1.0},
                                             {"ksps", 1e3},
                                             {"msps", 1e6},
                                             {"gsps", 1e9},
                                             {"samples/sec", 1.0}}};
  for (const R& r : kRates) {
    if (u == r.text) return r.factor;
  }
  return std::nullopt;
}

}  // namespace

std::string to_utf8(std::string_view text) {
  std::string out;
  out.reserve(text.size());
  std::size_t i = 0;
  while (i < text.size()) {
    const auto c = static_cast<unsigned char>(text[i]);
    if (c < 0x80) {
      out += static_cast<char>(c);
      ++i;
      continue;
    }
    // Length of a well-formed UTF-8 sequence (RFC 3629, section 4), checked byte by byte.
    std::size_t len = 0;
    if (c >= 0xC2 && c <= 0xDF)
      len = 2;
    else if (c >= 0xE0 && c <= 0xEF)
      len = 3;
    else if (c >= 0xF0 && c <= 0xF4)
      len = 4;
    bool ok = len > 0 && i + len <= text.size();
    for (std::size_t j = 1; ok && j < len; ++j) {
      ok = (static_cast<unsigned char>(text[i + j]) & 0xC0) == 0x80;
    }
    if (ok && len == 3) {
      const auto c1 = static_cast<unsigned char>(text[i + 1]);
      ok = !(c == 0xE0 && c1 < 0xA0) && !(c == 0xED && c1 >= 0xA0);  // overlong; surrogates
    }
    if (ok && len == 4) {
      const auto c1 = static_cast<unsigned char>(text[i + 1]);
      ok = !(c == 0xF0 && c1 < 0x90) && !(c == 0xF4 && c1 >= 0x90);
    }
    if (ok) {
      out.append(text.substr(i, len));
      i += len;
    } else if (c >= 0x80 && c <= 0x9F) {
      // Windows-1252 puts typographic characters where Latin-1 has C1 controls (WHATWG
      // Encoding Standard, index windows-1252); the common ones, else U+FFFD.
      static constexpr std::array<const char*, 32> k1252{
          "\xE2\x82\xAC", "\xEF\xBF\xBD", "\xE2\x80\x9A", "\xC6\x92",     "\xE2\x80\x9E",
          "\xE2\x80\xA6", "\xE2\x80\xA0", "\xE2\x80\xA1", "\xCB\x86",     "\xE2\x80\xB0",
          "\xC5\xA0",     "\xE2\x80\xB9", "\xC5\x92",     "\xEF\xBF\xBD", "\xC5\xBD",
          "\xEF\xBF\xBD", "\xEF\xBF\xBD", "\xE2\x80\x98", "\xE2\x80\x99", "\xE2\x80\x9C",
          "\xE2\x80\x9D", "\xE2\x80\xA2", "\xE2\x80\x93", "\xE2\x80\x94", "\xCB\x9C",
          "\xE2\x84\xA2", "\xC5\xA1",     "\xE2\x80\xBA", "\xC5\x93",     "\xEF\xBF\xBD",
          "\xC5\xBE",     "\xC5\xB8"};
      out += k1252[c - 0x80];
      ++i;
    } else {  // a Latin-1 byte: U+00A0…U+00FF in two bytes
      out += static_cast<char>(0xC0 | (c >> 6));
      out += static_cast<char>(0x80 | (c & 0x3F));
      ++i;
    }
  }
  return out;
}

std::optional<std::pair<std::string, std::string>> split_key_value(std::string_view line) {
  line = trim_blanks(line);
  while (!line.empty() && line.front() == '#') line = trim_blanks(line.substr(1));
  bool only_delimiters = true;
  for (const char c : line) only_delimiters = only_delimiters && (is_delimiter(c) || c == '"');
  if (only_delimiters) return std::nullopt;
  auto sep = line.find_first_of(",;\t:=");
  if (sep == std::string_view::npos) {
    // "Sample Interval 1e-6": words, then a number at the first blank before a digit or sign.
    for (std::size_t i = 1; i + 1 < line.size(); ++i) {
      const char next = line[i + 1];
      if (line[i] == ' ' &&
          (std::isdigit(static_cast<unsigned char>(next)) || next == '-' || next == '+' ||
           next == '.') &&
          std::isalpha(static_cast<unsigned char>(line[0]))) {
        sep = i;
        break;
      }
    }
  }
  std::string_view key = line.substr(0, sep == std::string_view::npos ? line.size() : sep);
  std::string_view value =
      sep == std::string_view::npos ? std::string_view{} : line.substr(sep + 1);
  // Padding and repeated separators between key and value ("Interval :\t 4e-8").
  while (!value.empty() &&
         (is_delimiter(value.front()) || value.front() == ':' || value.front() == '=')) {
    value.remove_prefix(1);
  }
  while (!value.empty() && is_delimiter(value.back())) value.remove_suffix(1);
  // A quoted list ("A","V"): each cell unquoted (RFC 4180), joined by the list's separator.
  const auto list_sep = value.find_first_of(",;\t");
  if (value.find('"') != std::string_view::npos && list_sep != std::string_view::npos) {
    const char sep_char = value[list_sep];
    std::vector<std::string> cells(1);
    bool quoted = false;
    for (std::size_t i = 0; i < value.size(); ++i) {
      const char ch = value[i];
      if (ch == '"') {
        if (quoted && i + 1 < value.size() && value[i + 1] == '"') {
          cells.back() += '"';
          ++i;
        } else {
          quoted = !quoted;
        }
      } else if (ch == sep_char && !quoted) {
        cells.emplace_back();
      } else {
        cells.back() += ch;
      }
    }
    std::string joined;
    for (std::size_t i = 0; i < cells.size(); ++i)
      joined += (i ? "," : "") + std::string(trim_blanks(cells[i]));
    return std::make_pair(to_utf8(strip_quotes(key)), to_utf8(joined));
  }
  return std::make_pair(to_utf8(strip_quotes(key)), to_utf8(strip_quotes(value)));
}

std::optional<Quantity> parse_quantity(std::string_view text, char decimal) {
  text = strip_quotes(text);
  // A channel prefix on the value: "CH1:0.000002", "C2: 5e-9".
  {
    std::size_t i = 0;
    while (i < text.size() && std::isalpha(static_cast<unsigned char>(text[i]))) ++i;
    std::size_t j = i;
    while (j < text.size() && std::isdigit(static_cast<unsigned char>(text[j]))) ++j;
    std::size_t k = j;
    while (k < text.size() && text[k] == ' ') ++k;
    if (i > 0 && k < text.size() && text[k] == ':') text = trim_blanks(text.substr(k + 1));
  }
  const auto number_length = [&text](char mark) {
    std::size_t i = 0;
    if (i < text.size() && (text[i] == '+' || text[i] == '-')) ++i;
    std::size_t digits = 0;
    while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i]))) ++i, ++digits;
    if (i < text.size() && text[i] == mark) {
      ++i;
      while (i < text.size() && std::isdigit(static_cast<unsigned char>(text[i]))) ++i, ++digits;
    }
    if (digits == 0) return std::size_t{0};
    if (i < text.size() && (text[i] == 'e' || text[i] == 'E')) {
      std::size_t e = i + 1;
      if (e < text.size() && (text[e] == '+' || text[e] == '-')) ++e;
      if (e < text.size() && std::isdigit(static_cast<unsigned char>(text[e]))) {
        while (e < text.size() && std::isdigit(static_cast<unsigned char>(text[e]))) ++e;
        i = e;
      }
    }
    return i;
  };
  char mark = decimal;
  std::size_t n = number_length(mark);
  const char other = decimal == '.' ? ',' : '.';
  if (n > 0 && n + 1 < text.size() && text[n] == other &&
      std::isdigit(static_cast<unsigned char>(text[n + 1]))) {
    mark = other;  // "1,25E+06" in a file whose data use the decimal point, or the reverse
    n = number_length(mark);
  }
  if (n == 0) return std::nullopt;
  const auto value = parse_number(text.substr(0, n), mark);
  if (!value) return std::nullopt;
  std::string_view unit = trim_blanks(text.substr(n));
  if (unit.size() >= 2 && ((unit.front() == '(' && unit.back() == ')') ||
                           (unit.front() == '[' && unit.back() == ']'))) {
    unit = trim_blanks(unit.substr(1, unit.size() - 2));
  }
  return Quantity{*value, std::string(unit)};
}

StatedTimeBase stated_time_base(const std::vector<std::pair<std::string, std::string>>& pairs,
                                char decimal) {
  StatedTimeBase out;
  int interval_rank = 0;
  for (const auto& [key, value] : pairs) {
    const std::string k = normalised_key(key);
    if (k.empty()) continue;
    const bool interval = is_interval_key(k);
    const bool rate = !interval && is_rate_key(k);
    const bool start = !interval && !rate && is_start_key(k);
    if (!interval && !rate && !start) continue;
    // "Sample Interval,1e-6,1e-6" states one value per channel: the first is taken.
    auto q = parse_quantity(value, decimal);
    const auto list_at = value.find_first_of(",;\t");
    if (q && !q->unit.empty() && list_at != std::string::npos && !parse_time_unit(q->unit) &&
        !rate_factor(q->unit)) {
      q = parse_quantity(value.substr(0, list_at), decimal);
    }
    if (!q || !std::isfinite(q->value)) continue;
    if (start && !out.start_s) {
      double factor = 1.0;
      if (!q->unit.empty()) {
        const auto u = parse_time_unit(q->unit);
        if (!u) continue;
        factor = u->factor;
      }
      out.start_s = q->value * factor;
      continue;
    }
    // Words that also name a scale per division on some instruments ("Time base: 1 ms",
    // "Resolution") rank below the unambiguous ones, whatever their order in the file.
    const int rank = (k == "timebase" || k == "resolution" || k == "rate") ? 1 : 2;
    if ((out.interval_s && rank <= interval_rank) || !(q->value > 0)) continue;
    if (interval) {
      double factor = 1.0;
      if (!q->unit.empty()) {
        const auto u = parse_time_unit(q->unit);
        if (!u) continue;  // "1 ms/div" is a scale, not an interval
        factor = u->factor;
      }
      out.interval_s = q->value * factor;
    } else {
      const auto factor = rate_factor(q->unit);
      if (!factor) continue;
      out.interval_s = 1.0 / (q->value * *factor);
    }
    out.interval_key = key;
    interval_rank = rank;
  }
  return out;
}

const char* accepted_time_base_wordings() {
  return "'Sample interval', 'Sampling period', 'Time interval', 'Increment' (also with "
         "'Start'), 'Resolution (horizontal)', 'Timebase', 'Sample rate', 'Sampling rate' or "
         "'Sampling frequency', with ',', ';', tab, ':' or '=' before the value and an "
         "optional unit (s, ms, us, ns, ps; Hz, kHz, MHz, S/s, MS/s, GS/s)";
}

bool is_vertical_unit_key(std::string_view key) {
  const std::string k = normalised_key(key);
  return k == "verticalunits" || k == "verticalunit" || k == "vunit" || k == "vunits" ||
         k == "yunit" || k == "yunits" || k == "units" || k == "unit" || k == "verticalunitstring";
}

std::optional<std::size_t> channel_unit_key(std::string_view key) {
  const std::string k = normalised_key(key);
  std::size_t i = 0;
  for (std::string_view p : {"channel", "ch", "c"}) {
    if (k.rfind(p, 0) == 0) {
      i = p.size();
      break;
    }
  }
  const std::size_t digits_at = i;
  std::size_t n = 0;
  while (i < k.size() && k[i] >= '0' && k[i] <= '9')
    n = n * 10 + static_cast<std::size_t>(k[i++] - '0');
  if (i == digits_at || n == 0) return std::nullopt;
  const std::string rest = k.substr(i);
  if (rest == "units" || rest == "unit" || rest == "verticalunit" || rest == "verticalunits" ||
      rest == "vunit" || rest == "yunit" || rest == "yunits")
    return n;
  return std::nullopt;
}

bool is_count_key(std::string_view key) {
  const std::string k = normalised_key(key);
  for (std::string_view c :
       {"recordlength", "points", "numberofpoints", "samples", "numberofsamples", "memorylength",
        "memorydepth", "length", "pointcount", "samplecount", "npoints", "waveformpoints",
        "datapoints", "recordsize"}) {
    if (k == c) return true;
  }
  return false;
}

bool is_horizontal_unit_key(std::string_view key) {
  const std::string k = normalised_key(key);
  return k == "horizontalunits" || k == "horizontalunit" || k == "xunit" || k == "xunits" ||
         k == "hunit" || k == "hunits" || k == "timeunit" || k == "timeunits";
}

bool is_channel_names_key(std::string_view key) {
  const std::string k = normalised_key(key);
  return k == "tracename" || k == "tracenames" || k == "channelnames" || k == "channelname" ||
         k == "labels" || k == "label" || k == "signalnames" || k == "names";
}

bool is_source_key(std::string_view key) {
  const std::string k = normalised_key(key);
  return k == "source" || k == "channel" || k == "sourcechannel";
}

}  // namespace lopside
