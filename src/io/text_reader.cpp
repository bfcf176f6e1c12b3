// The delimited-text capture reader: CSV, semicolon CSV with decimal comma, TSV and
// whitespace-separated columns as scopes and spreadsheets export them.
//
// Streaming: the file is read in fixed chunks; at open, a look-ahead of at most
// kLookaheadRows data rows is parsed so that the sample interval can be fitted before the first
// block is handed out. Memory is bounded by that look-ahead, never by the file's size.
#include <algorithm>
#include <array>
#include <cmath>
#include <cstring>
#include <deque>
#include <istream>
#include <sstream>
#include <string>
#include <string_view>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/channel_roles.hpp"
#include "lopside/error.hpp"
#include "lopside/number_parse.hpp"
#include "lopside/units.hpp"

namespace lopside {
namespace {

// 65536 rows fit the interval to ~6e-7 relative even when the printed time resolves only a
// tenth of a step (8 significant digits, t ≥ 10 s, 100 ns steps): the slope error of a least
// squares line through n rows with uniform rounding error q is q·sqrt(12/n³)/sqrt(12).
constexpr std::size_t kLookaheadRows = 65536;
// Lines before the data that may hold a preamble and a header; a scope's header block is a few
// dozen lines, so a longer run of non-numeric text means this is not a capture.
constexpr std::size_t kMaxPreambleLines = 1000;
constexpr std::size_t kChunkBytes = 1 << 20;
constexpr std::size_t kMaxLineBytes = 1 << 20;

std::string_view trim(std::string_view s) {
  return trim_blanks(s);
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (char& c : out) {
    if (c >= 'A' && c <= 'Z') c = static_cast<char>(c - 'A' + 'a');
  }
  return out;
}

std::string shorten(std::string_view s, std::size_t n = 40) {
  if (s.size() <= n) return std::string(s);
  return std::string(s.substr(0, n)) + "…";
}

std::string format_g(double v, int digits = 6) {
  std::ostringstream o;
  o.precision(digits);
  o << v;
  return o.str();
}

// Reads lines from a stream in large chunks; strips CR of CRLF; tracks line numbers and the
// byte offset of each line's start; refuses binary data with the offset of the first bad byte.
class LineReader {
 public:
  LineReader(std::istream& in, std::string path) : in_(in), path_(std::move(path)) {
    buffer_.reserve(kChunkBytes * 2);
  }

  /// Next line without its terminator, or false at end of input. The view is valid until the
  /// next call.
  bool next(std::string_view& line) {
    for (;;) {
      const char* begin = buffer_.data() + pos_;
      const char* end = buffer_.data() + buffer_.size();
      const void* nl = std::memchr(begin, '\n', static_cast<std::size_t>(end - begin));
      if (nl != nullptr || (eof_ && begin != end)) {
        const char* stop = nl ? static_cast<const char*>(nl) : end;
        std::size_t len = static_cast<std::size_t>(stop - begin);
        line_start_ = consumed_ + pos_;
        pos_ += len + (nl ? 1 : 0);
        ++line_no_;
        if (len > 0 && begin[len - 1] == '\r') --len;
        line = std::string_view(begin, len);
        if (line_no_ == 1 && line.size() >= 3 && std::memcmp(line.data(), "\xEF\xBB\xBF", 3) == 0) {
          line.remove_prefix(3);  // UTF-8 byte order mark written by spreadsheet exports
        }
        check_text(line);
        return true;
      }
      if (eof_) return false;
      refill();
    }
  }

  std::uint64_t line_number() const { return line_no_; }
  std::uint64_t line_start_byte() const { return line_start_; }

 private:
  void refill() {
    if (pos_ > 0) {
      buffer_.erase(0, pos_);
      consumed_ += pos_;
      pos_ = 0;
    }
    if (buffer_.size() > kMaxLineBytes) {
      throw InputError(path_, InputLocation::at_line(line_no_ + 1),
                       "line is longer than 1 MiB; expected one row of samples per line "
                       "(is this a binary file?)");
    }
    const std::size_t old = buffer_.size();
    buffer_.resize(old + kChunkBytes);
    in_.read(buffer_.data() + old, static_cast<std::streamsize>(kChunkBytes));
    const auto got = static_cast<std::size_t>(in_.gcount());
    buffer_.resize(old + got);
    if (got == 0 || !in_) eof_ = true;
    if (in_.bad()) {
      throw InputError(path_, InputLocation::at_byte(consumed_ + old), "read error");
    }
  }

  // Control bytes other than tab and CR never occur in text exports; a NUL means binary data.
  void check_text(std::string_view line) const {
    for (std::size_t i = 0; i < line.size(); ++i) {
      const auto c = static_cast<unsigned char>(line[i]);
      if (c < 0x20 && c != '\t' && c != '\r') {
        char hex[8];
        std::snprintf(hex, sizeof hex, "0x%02X", c);
        throw InputError(path_, InputLocation::at_byte(line_start_ + i),
                         std::string("binary data (byte ") + hex +
                             ") in what was read as a text capture; expected delimited text "
                             "(CSV/TSV) or a WAV-family file");
      }
    }
  }

  std::istream& in_;
  std::string path_;
  std::string buffer_;
  std::size_t pos_ = 0;
  std::uint64_t consumed_ = 0;
  std::uint64_t line_no_ = 0;
  std::uint64_t line_start_ = 0;
  bool eof_ = false;
};

bool is_comment(std::string_view line) {
  line = trim(line);
  return !line.empty() && line.front() == '#';
}

bool is_blank(std::string_view line) {
  return trim(line).empty();
}

// Cell splitter for one delimiter: RFC 4180 quoting ("" inside quotes is a quote) for
// character delimiters, runs of blanks for the whitespace delimiter.
struct Dialect {
  char delimiter = ',';  ///< ' ' stands for "runs of spaces or tabs"
  char decimal = '.';
};

void split_cells(std::string_view line, char delimiter, std::vector<std::string_view>& cells,
                 std::string& scratch) {
  cells.clear();
  if (delimiter == ' ') {
    std::size_t i = 0;
    while (i < line.size()) {
      while (i < line.size() && (line[i] == ' ' || line[i] == '\t')) ++i;
      if (i >= line.size()) break;
      std::size_t j = i;
      if (line[i] == '"') {
        j = line.find('"', i + 1);
        if (j == std::string_view::npos) j = line.size() - 1;
        cells.push_back(line.substr(i + 1, j - i - 1));
        i = j + 1;
        continue;
      }
      while (j < line.size() && line[j] != ' ' && line[j] != '\t') ++j;
      cells.push_back(line.substr(i, j - i));
      i = j;
    }
    return;
  }
  if (line.find('"') == std::string_view::npos) {
    std::size_t start = 0;
    for (;;) {
      const auto at = line.find(delimiter, start);
      if (at == std::string_view::npos) {
        cells.push_back(line.substr(start));
        break;
      }
      cells.push_back(line.substr(start, at - start));
      start = at + 1;
    }
  } else {
    // Quoted cells are unescaped into `scratch`, whose storage is reserved up front so the
    // views stay valid.
    scratch.clear();
    scratch.reserve(line.size() + 1);
    std::size_t i = 0;
    for (;;) {
      std::size_t cell_start = scratch.size();
      while (i < line.size() && line[i] == ' ') ++i;
      if (i < line.size() && line[i] == '"') {
        ++i;
        while (i < line.size()) {
          if (line[i] == '"') {
            if (i + 1 < line.size() && line[i + 1] == '"') {
              scratch.push_back('"');
              i += 2;
              continue;
            }
            ++i;
            break;
          }
          scratch.push_back(line[i++]);
        }
        while (i < line.size() && line[i] != delimiter) scratch.push_back(line[i++]);
      } else {
        while (i < line.size() && line[i] != delimiter) scratch.push_back(line[i++]);
      }
      cells.push_back(std::string_view(scratch).substr(cell_start, scratch.size() - cell_start));
      if (i >= line.size()) break;
      ++i;  // the delimiter
    }
  }
  // A delimiter at the end of every row (some exports write one) is not an empty column.
  if (cells.size() > 1 && trim(cells.back()).empty()) cells.pop_back();
}

bool all_numeric(const std::vector<std::string_view>& cells, char decimal) {
  if (cells.empty()) return false;
  for (auto c : cells) {
    if (!parse_number(c, decimal) && !is_nan_or_inf_text(c)) return false;
  }
  return true;
}

// The dialects under which a data row reads as numbers, in order of preference. The order
// settles the ambiguous cases: tab before anything; ';' always pairs with the decimal comma
// (the European spreadsheet convention); ',' with the decimal point; blanks last. A row of one
// number without any delimiter also reads as one cell with a decimal comma ("0,5"), which only
// the header can tell from two cells.
std::vector<Dialect> detect_dialects(std::string_view line) {
  std::vector<std::string_view> cells;
  std::string scratch;
  std::vector<Dialect> found;
  const std::array<Dialect, 6> candidates{
      {{'\t', '.'}, {'\t', ','}, {';', ','}, {';', '.'}, {',', '.'}, {' ', '.'}}};
  for (const Dialect& d : candidates) {
    if (d.delimiter != ' ' && line.find(d.delimiter) == std::string_view::npos) continue;
    split_cells(line, d.delimiter, cells, scratch);
    if (all_numeric(cells, d.decimal)) found.push_back(d);
  }
  split_cells(line, ' ', cells, scratch);
  if (all_numeric(cells, ',')) found.push_back(Dialect{' ', ','});
  return found;
}

// Header cells of `line` under `d`; one column of data is named by the whole line, blanks and
// all ("current (A)").
std::vector<std::string_view> header_cells(std::string_view line, const Dialect& d,
                                           std::size_t columns, std::string& scratch) {
  std::vector<std::string_view> head;
  split_cells(line, d.delimiter, head, scratch);
  if (columns == 1 && head.size() > 1 && d.delimiter == ' ') head.assign(1, trim(line));
  return head;
}

bool is_time_name(const std::string& n) {
  return n == "time" || n == "t" || n == "zeit" || n == "x" || n.rfind("time ", 0) == 0 ||
         n == "timestamp" || n == "seconds" || n == "sec";
}

// Preamble line "Sample interval: 1e-7 s" / "Sample rate;1,25E+06" → sample rate in Hz.
std::optional<double> preamble_rate(std::string_view line, char decimal) {
  const auto sep = line.find_first_of(",;:=\t");
  if (sep == std::string_view::npos) return std::nullopt;
  const std::string key = lower(trim(line.substr(0, sep)));
  std::string_view rest = trim(line.substr(sep + 1));
  while (!rest.empty() && (rest.front() == ',' || rest.front() == ';' || rest.front() == ':' ||
                           rest.front() == '=' || rest.front() == '"')) {
    rest = trim(rest.substr(1));
  }
  const bool interval = key.find("interval") != std::string::npos ||
                        key.find("period") != std::string::npos ||
                        key.find("time per sample") != std::string::npos;
  const bool rate =
      key.find("rate") != std::string::npos || key.find("frequency") != std::string::npos;
  if (!(key.find("sampl") != std::string::npos && (interval || rate))) return std::nullopt;
  // Split the number from a trailing unit.
  std::size_t n = 0;
  while (n < rest.size() &&
         (std::isdigit(static_cast<unsigned char>(rest[n])) || rest[n] == '.' || rest[n] == ',' ||
          rest[n] == '+' || rest[n] == '-' || rest[n] == 'e' || rest[n] == 'E')) {
    ++n;
  }
  std::string_view number = rest.substr(0, n);
  std::string unit(trim(rest.substr(n)));
  if (!unit.empty() && unit.back() == '"') unit.pop_back();
  auto value = parse_number(number, decimal);
  if (!value) value = parse_number(number, decimal == '.' ? ',' : '.');
  if (!value || !(*value > 0)) return std::nullopt;
  if (interval) {
    double factor = 1.0;
    if (!unit.empty()) {
      const auto u = parse_unit(unit);
      if (!u || u->si_unit != "s") return std::nullopt;
      factor = u->factor;
    }
    return 1.0 / (*value * factor);
  }
  static const std::array<std::pair<const char*, double>, 8> kRateUnits{{{"", 1.0},
                                                                         {"hz", 1.0},
                                                                         {"khz", 1e3},
                                                                         {"mhz", 1e6},
                                                                         {"ghz", 1e9},
                                                                         {"s/s", 1.0},
                                                                         {"ks/s", 1e3},
                                                                         {"ms/s", 1e6}}};
  const std::string lu = lower(unit);
  for (const auto& [text, factor] : kRateUnits) {
    if (lu == text) return *value * factor;
  }
  if (lu == "gs/s") return *value * 1e9;
  return std::nullopt;
}

// Running least-squares line t = a + b·k over rows k = 0, 1, …, in long double because k
// reaches 1e9 and the sums of k² 1e27 (the cancellation in n·Σk² − (Σk)² loses ~2 digits of
// long double's 19).
class TimeFit {
 public:
  void add(double k, double t) {
    const long double x = k, y = t;
    ++n_;
    sx_ += x;
    sy_ += y;
    sxx_ += x * x;
    sxy_ += x * y;
  }
  std::uint64_t count() const { return n_; }
  long double slope() const {
    const long double n = static_cast<long double>(n_);
    const long double d = n * sxx_ - sx_ * sx_;
    return d == 0 ? 0.0L : (n * sxy_ - sx_ * sy_) / d;
  }
  long double intercept() const { return (sy_ - slope() * sx_) / static_cast<long double>(n_); }
  long double predict(double k) const {
    return intercept() + slope() * static_cast<long double>(k);
  }

 private:
  std::uint64_t n_ = 0;
  long double sx_ = 0, sy_ = 0, sxx_ = 0, sxy_ = 0;
};

class TextReader final : public SampleSource {
 public:
  TextReader(std::istream& in, const std::string& path, const ReaderOptions& options)
      : lines_(in, path), path_(path), options_(options) {
    info_.path = path;
    open();
  }

  const CaptureInfo& info() const override { return info_; }
  const std::vector<std::string>& warnings() const override { return warnings_; }

  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    const std::size_t nch = info_.channels.size();
    block.channels = nch;
    block.data.resize(max_frames * nch);
    std::size_t f = 0;
    while (f < max_frames) {
      if (!pending_.empty()) {
        const std::size_t take = std::min(max_frames - f, pending_.size() / nch);
        std::copy_n(pending_.begin(), take * nch,
                    block.data.begin() + static_cast<std::ptrdiff_t>(f * nch));
        pending_.erase(pending_.begin(),
                       pending_.begin() + static_cast<std::ptrdiff_t>(take * nch));
        f += take;
        continue;
      }
      if (finished_) break;
      if (!parse_next_row(block.data.data() + f * nch)) break;
      ++f;
    }
    block.frames = f;
    block.data.resize(f * nch);
    if (f == 0) finish();
    return f;
  }

 private:
  // --- opening: preamble, header, dialect, look-ahead ------------------------------------
  void open() {
    std::vector<std::pair<std::uint64_t, std::string>> preamble;  // (line, text)
    std::string_view line;
    std::vector<Dialect> dialects;
    bool any_text = false;
    while (lines_.next(line)) {
      any_text = any_text || !is_blank(line);
      if (is_blank(line) || is_comment(line)) continue;
      dialects = detect_dialects(line);
      if (!dialects.empty()) break;
      if (preamble.size() >= kMaxPreambleLines) {
        throw InputError(path_, InputLocation::at_line(lines_.line_number()),
                         "no rows of numbers in the first " + std::to_string(kMaxPreambleLines) +
                             " lines; expected a delimited text capture (CSV/TSV)");
      }
      preamble.emplace_back(lines_.line_number(), std::string(line));
    }
    if (dialects.empty()) {
      if (!any_text) throw InputError(path_, "the file holds no text; expected a capture");
      if (!preamble.empty()) {
        throw InputError(path_, InputLocation::at_line(preamble.back().first),
                         "no data rows after this line ('" + shorten(preamble.back().second) +
                             "'); expected rows of numbers separated by ',', ';', tab or spaces");
      }
      throw InputError(path_, "no data rows; expected rows of numbers");
    }
    const std::uint64_t first_data_line = lines_.line_number();
    std::string first_row(line);
    // Where the row reads more than one way, the header above it decides: the dialect under
    // which it has as many cells as the row.
    dialect_ = dialects.front();
    if (dialects.size() > 1 && !preamble.empty()) {
      for (const Dialect& d : dialects) {
        split_cells(first_row, d.delimiter, cells_, scratch_);
        std::string head_scratch;
        if (header_cells(preamble.back().second, d, cells_.size(), head_scratch).size() ==
            cells_.size()) {
          dialect_ = d;
          break;
        }
      }
    }
    split_cells(first_row, dialect_.delimiter, cells_, scratch_);
    columns_ = cells_.size();

    // The header is the text line right above the data when it has one cell per column and
    // none of them is a number; everything above it is preamble.
    std::vector<std::string> names(columns_);
    bool has_header = false;
    std::uint64_t header_line = 0;
    if (!preamble.empty()) {
      std::string head_scratch;
      const std::vector<std::string_view> head =
          header_cells(preamble.back().second, dialect_, columns_, head_scratch);
      bool numeric_cell = false;
      for (auto c : head) numeric_cell = numeric_cell || parse_number(c, dialect_.decimal);
      if (head.size() == columns_ && !numeric_cell) {
        has_header = true;
        header_line = preamble.back().first;
        for (std::size_t i = 0; i < columns_; ++i) names[i] = std::string(trim(head[i]));
        preamble.pop_back();
      } else if (!numeric_cell && (preamble.back().second.find('(') != std::string::npos ||
                                   preamble.back().second.find('[') != std::string::npos)) {
        throw InputError(path_, InputLocation::at_line(preamble.back().first),
                         "the header has " + std::to_string(head.size()) +
                             " cells but the data rows below it have " + std::to_string(columns_) +
                             "; expected one name per column (quote names that hold the "
                             "delimiter)");
      }
    }
    std::optional<double> rate_from_preamble;
    for (const auto& p : preamble) {
      if (!rate_from_preamble) rate_from_preamble = preamble_rate(p.second, dialect_.decimal);
    }

    // Columns: names, units, the time column.
    std::vector<ChannelInfo> channels;
    header_factor_.assign(columns_, 1.0);
    std::vector<std::string> units(columns_);
    for (std::size_t i = 0; i < columns_; ++i) {
      if (!has_header) {
        names[i] = "ch" + std::to_string(i + 1);
        continue;
      }
      const NameAndUnit nu = split_name_unit(names[i]);
      if (!nu.unit_text.empty()) {
        const auto u = parse_unit(nu.unit_text);
        if (u) {
          units[i] = u->si_unit;
          header_factor_[i] = u->factor;
          names[i] = nu.name;
        } else {
          warnings_.push_back("column " + std::to_string(i + 1) + " '" + names[i] + "': unit '" +
                              nu.unit_text + "' not understood; values taken as written");
        }
      }
      if (time_column_ < 0 &&
          (units[i] == "s" || (units[i].empty() && is_time_name(lower(nu.name))))) {
        time_column_ = static_cast<int>(i);
        if (units[i].empty()) {
          warnings_.push_back("column " + std::to_string(i + 1) + " '" + names[i] +
                              "' taken as time in seconds (its header gives no unit)");
          units[i] = "s";
        }
      }
    }
    for (std::size_t i = 0; i < columns_; ++i) {
      if (static_cast<int>(i) == time_column_) continue;
      ChannelInfo c;
      c.name = names[i];
      c.unit = units[i] == "s" ? "s" : units[i];
      c.index = channels.size() + 1;
      channels.push_back(c);
      channel_column_.push_back(i);
    }
    if (channels.empty()) {
      throw InputError(path_, InputLocation::at_line(has_header ? header_line : first_data_line),
                       "only a time column; expected at least one channel of samples");
    }
    gains_ = channel_gains(channels, options_, path_);
    for (std::size_t c = 0; c < channels.size(); ++c) {
      gains_[c] *= header_factor_[channel_column_[c]];
    }
    std::vector<std::string> notes;
    assign_roles(channels, options_, path_, notes);
    info_.channels = std::move(channels);
    for (auto& n : notes) role_notes_.push_back(n);

    // Format and how the file was read.
    switch (dialect_.delimiter) {
      case ',':
        info_.format = "csv";
        break;
      case ';':
        info_.format = "csv-semicolon";
        break;
      case '\t':
        info_.format = "tsv";
        break;
      default:
        info_.format = "text";
        break;
    }
    std::string d = std::string("delimiter ") +
                    (dialect_.delimiter == '\t'  ? "tab"
                     : dialect_.delimiter == ' ' ? "spaces"
                                                 : std::string("'") + dialect_.delimiter + "'") +
                    ", decimal " + (dialect_.decimal == ',' ? "comma" : "point");
    if (!preamble.empty()) d += ", " + std::to_string(preamble.size()) + " preamble lines";
    d += has_header ? ", header at line " + std::to_string(header_line) : ", no header row";
    if (time_column_ >= 0) {
      d += ", time column " + std::to_string(time_column_ + 1) + " '" +
           names[static_cast<std::size_t>(time_column_)] + "'";
    }
    info_.detail = d;
    if (!has_header) {
      warnings_.push_back("no header row: columns named ch1…ch" + std::to_string(columns_) +
                          ", without units (give --unit CH=A / --unit CH=V)");
    }

    // Look-ahead: the first data row (already read) and up to kLookaheadRows more.
    const std::size_t nch = info_.channels.size();
    std::vector<double> row(nch);
    if (parse_row(first_row, first_data_line, row.data()))
      pending_.insert(pending_.end(), row.begin(), row.end());
    while (rows_ < kLookaheadRows && !finished_) {
      if (!parse_next_row(row.data())) break;
      pending_.insert(pending_.end(), row.begin(), row.end());
    }
    if (pending_.empty()) {
      throw InputError(path_, InputLocation::at_line(first_data_line),
                       "no usable data rows (every row was skipped as malformed)");
    }

    // Sample rate: the time column's fit wins; else --rate; else the preamble.
    if (time_column_ >= 0) {
      if (rows_ < 2) {
        throw InputError(path_, InputLocation::at_line(first_data_line),
                         "only one data row; a time column needs two rows to give a sample "
                         "interval");
      }
      dt_s_ = lookahead_interval();
      if (!(dt_s_ > 0)) {
        throw InputError(path_, InputLocation::at_line(first_data_line),
                         "the time column does not advance; expected rising times");
      }
      check_lookahead_times();
      info_.sample_rate_hz = 1.0 / dt_s_;
      info_.start_time_s = start_time();
      if (options_.rate_hz && std::fabs(*options_.rate_hz * dt_s_ - 1.0) > 1e-3) {
        warnings_.push_back("--rate " + format_g(*options_.rate_hz) +
                            " Hz ignored: the time column gives " +
                            format_g(info_.sample_rate_hz, 8) + " Hz");
      }
    } else if (options_.rate_hz) {
      info_.sample_rate_hz = *options_.rate_hz;
    } else if (rate_from_preamble) {
      info_.sample_rate_hz = *rate_from_preamble;
      info_.detail += ", sample rate from the preamble";
    } else {
      throw InputError(path_, InputLocation::at_line(has_header ? header_line : first_data_line),
                       "no time column and no sample rate; expected --rate HZ, or a "
                       "'Sample interval' or 'Sample rate' line before the header");
    }
    if (!(info_.sample_rate_hz > 0) || !std::isfinite(info_.sample_rate_hz)) {
      throw InputError(path_, "the sample rate must be a positive number of hertz");
    }
  }

  // --- rows ----------------------------------------------------------------------------
  // Parses the next data row into `out`; false at end of input.
  bool parse_next_row(double* out) {
    std::string_view line;
    while (lines_.next(line)) {
      if (is_blank(line) || is_comment(line)) continue;
      if (parse_row(line, lines_.line_number(), out)) return true;
    }
    finished_ = true;
    return false;
  }

  // Parses one data line; false if it was malformed and skipped (--skip-bad-rows).
  bool parse_row(std::string_view line, std::uint64_t line_no, double* out) {
    split_cells(line, dialect_.delimiter, cells_, scratch_);
    if (cells_.size() != columns_) {
      return bad_row(line_no, "expected " + std::to_string(columns_) + " cells separated by " +
                                  delimiter_name() + ", found " + std::to_string(cells_.size()));
    }
    double t = 0;
    for (std::size_t i = 0; i < columns_; ++i) {
      const auto v = parse_number(cells_[i], dialect_.decimal);
      if (!v) {
        if (is_nan_or_inf_text(cells_[i])) {
          return bad_row(line_no, "column " + std::to_string(i + 1) + ": '" +
                                      shorten(trim(cells_[i])) +
                                      "' is not a finite number; "
                                      "expected a sample value");
        }
        return bad_row(line_no, "column " + std::to_string(i + 1) + ": expected a number" +
                                    (dialect_.decimal == ',' ? " with a decimal comma" : "") +
                                    ", found '" + shorten(trim(cells_[i])) + "'");
      }
      if (static_cast<int>(i) == time_column_) t = *v * header_factor_[i];
    }
    for (std::size_t c = 0; c < channel_column_.size(); ++c) {
      out[c] = *parse_number(cells_[channel_column_[c]], dialect_.decimal) * gains_[c];
    }
    if (time_column_ >= 0) {
      const double q =
          printed_resolution(cells_[static_cast<std::size_t>(time_column_)], dialect_.decimal) *
          header_factor_[static_cast<std::size_t>(time_column_)];
      track_time(t, q, line_no);
    }
    ++rows_;
    ++row_index_;
    return true;
  }

  bool bad_row(std::uint64_t line_no, const std::string& what) {
    if (!options_.skip_bad_rows) throw InputError(path_, InputLocation::at_line(line_no), what);
    if (skipped_ == 0) {
      first_skipped_line_ = line_no;
      first_skipped_what_ = what;
    }
    ++skipped_;
    ++row_index_;  // the skipped row still took its place on the time base
    return false;
  }

  std::string delimiter_name() const {
    switch (dialect_.delimiter) {
      case '\t':
        return "tabs";
      case ' ':
        return "spaces";
      default:
        return std::string("'") + dialect_.delimiter + "'";
    }
  }

  // --- the time column -------------------------------------------------------------------
  // Times are checked against a least-squares line through all rows so far, not against the
  // neighbouring row alone: printed with few digits, neighbours may differ by 0 or by several
  // steps although the recorder's clock was perfect. A deviation is explained by printing when
  // it stays within half the printed resolution (plus the fit's own small error).
  void track_time(double t, double q, std::uint64_t line_no) {
    const auto k = static_cast<double>(row_index_);
    if (fit_.count() == 0) {
      t0_ = t;
      first_q_ = q;
      prev_t_ = t;
      prev_q_ = q;
    }
    const double rel = t - t0_;
    if (t < prev_t_ - std::max(q, prev_q_)) {
      throw InputError(path_, InputLocation::at_line(line_no),
                       "time goes backwards: " + format_g(t, 10) + " s after " +
                           format_g(prev_t_, 10) + " s; expected rising times");
    }
    if (dt_s_ > 0) {
      check_time(k, rel, q, line_no, static_cast<double>(fit_.predict(k)), prev_t_ - t0_, prev_q_,
                 prev_k_, true, true, fit_.count());
    } else {
      lookahead_times_.push_back({k, rel, q, line_no});
    }
    fit_.add(k, rel);
    prev_t_ = t;
    prev_q_ = q;
    prev_k_ = k;
  }

  // Two tests, both needed: against the neighbouring row (sharp for a single missing sample
  // when printing resolves each step) and against the fitted line (the only one that sees a
  // gap when the printed time resolves less than a step).
  void check_time(double k, double rel, double q, std::uint64_t line_no, double predicted,
                  double prev_rel, double prev_q, double prev_k, bool local_test, bool fit_test,
                  std::uint64_t fit_n = 0) {
    const double printed = 0.5 * q;
    if (local_test && k > prev_k) {
      const double local = (rel - prev_rel) - (k - prev_k) * dt_s_;
      // Beyond half a step past what printing explains, the row sits on another sample's slot.
      if (std::fabs(local) > printed + 0.5 * prev_q + 0.5 * dt_s_) {
        time_error(local, rel, std::max(printed, 0.5 * prev_q), line_no);
      }
    }
    if (!fit_test) return;
    const double residual = rel - predicted;
    if (std::fabs(residual) > printed + 0.5 * dt_s_) time_error(residual, rel, printed, line_no);
    // Jitter: off the grid by more than printing explains, plus the fitted line's own error,
    // plus 2 % of a step for the rounding of the recorder's own time arithmetic (common
    // practice for exported time stamps). A line through n rows whose times carry uniform
    // rounding of width q (standard deviation q/√12) predicts the next row with a standard
    // deviation of (q/√12)·2/√n (least-squares prediction variance σ²(1/n + (x − x̄)²/Sxx) at the
    // end of the range); four of those are allowed.
    const double n = std::max<double>(2.0, static_cast<double>(fit_n));
    const double fit_error = 4.0 * (q / std::sqrt(12.0)) * 2.0 / std::sqrt(n);
    const double beyond = std::fabs(residual) - printed - fit_error;
    if (beyond > 0.02 * dt_s_) {
      if (jitter_rows_ == 0) first_jitter_line_ = line_no;
      ++jitter_rows_;
      max_jitter_s_ = std::max(max_jitter_s_, beyond);
    }
  }

  // `off` includes up to half the printed resolution of rounding, which is not a sample.
  [[noreturn]] void time_error(double off, double rel, double printed,
                               std::uint64_t line_no) const {
    // Where the printing resolves a step, the nearest slot is the count; where it does not,
    // only what exceeds the rounding allowance is certain ("at least").
    const bool coarse = printed > 0.5 * dt_s_ * (1 + 1e-9);
    const double beyond = coarse ? std::max(std::fabs(off) - printed, 0.5 * dt_s_) : std::fabs(off);
    const long steps = std::lround(std::copysign(beyond, off) / dt_s_);
    const std::string times = "time " + format_g(rel + t0_, 10) + " s, expected about " +
                              format_g(rel + t0_ - off, 10) + " s for a uniform " +
                              format_g(dt_s_, 6) + " s interval";
    if (steps > 0) {
      throw InputError(path_, InputLocation::at_line(line_no),
                       "gap in the time column: " + std::string(coarse ? "at least " : "") +
                           std::to_string(steps) +
                           " sample(s) missing at or shortly before this row (" + times + ")");
    }
    throw InputError(
        path_, InputLocation::at_line(line_no),
        "the time column repeats or steps back (" + times + "); expected uniform sampling");
  }

  // The interval of the look-ahead rows. Where printing resolves each step (the steps agree),
  // their median is immune to a few missing samples; where it does not, only the
  // least-squares slope over all rows can give the interval.
  double lookahead_interval() const {
    std::vector<double> steps;
    double q_max = 0;
    for (std::size_t i = 1; i < lookahead_times_.size(); ++i) {
      const auto& r = lookahead_times_[i];
      const auto& p = lookahead_times_[i - 1];
      steps.push_back((r.rel - p.rel) / (r.k - p.k));
      q_max = std::max(q_max, r.q);
    }
    if (steps.empty()) return 0.0;
    auto mid = steps.begin() + static_cast<std::ptrdiff_t>(steps.size() / 2);
    std::nth_element(steps.begin(), mid, steps.end());
    const double median = *mid;
    std::size_t near = 0;
    for (double st : steps) near += std::fabs(st - median) <= 0.5 * q_max + 1e-9 * median ? 1 : 0;
    // Trust the median when nine steps in ten agree with it to the printed resolution.
    if (median > 0 && 10 * near >= 9 * steps.size()) return median;
    return static_cast<double>(fit_.slope());
  }

  // The look-ahead rows: first row to row, so a gap is named at its own line; then against a
  // fitted line. A line through a few rows is too uncertain when printing is coarse, so the
  // first kSettleRows rows are held against the line through all of them, and every later row
  // against the line through the rows before it (as in streaming), which a gap cannot bias.
  void check_lookahead_times() {
    constexpr std::size_t kSettleRows = 512;
    const auto& rows = lookahead_times_;
    for (std::size_t i = 1; i < rows.size(); ++i) {
      check_time(rows[i].k, rows[i].rel, rows[i].q, rows[i].line, 0.0, rows[i - 1].rel,
                 rows[i - 1].q, rows[i - 1].k, true, false);
    }
    TimeFit settle;
    for (std::size_t i = 0; i < std::min(rows.size(), kSettleRows); ++i)
      settle.add(rows[i].k, rows[i].rel);
    TimeFit running;
    for (std::size_t i = 0; i < rows.size(); ++i) {
      const TimeFit& against = i < kSettleRows ? settle : running;
      if (i > 0) {
        check_time(rows[i].k, rows[i].rel, rows[i].q, rows[i].line,
                   static_cast<double>(against.predict(rows[i].k)), 0.0, 0.0, 0.0, false, true,
                   against.count());
      }
      running.add(rows[i].k, rows[i].rel);
    }
    lookahead_times_.clear();
    lookahead_times_.shrink_to_fit();
  }

  // The first row's time as printed, unless the fitted line says it was rounded: within half
  // its printed resolution the printed value is the better one (and 0 stays 0).
  double start_time() const {
    const double intercept = static_cast<double>(fit_.intercept());
    return std::fabs(intercept) <= 0.5 * first_q_ ? t0_ : t0_ + intercept;
  }

  void finish() {
    if (done_) return;
    done_ = true;
    info_.frames = rows_;
    if (time_column_ >= 0 && fit_.count() >= 2) {
      dt_s_ = static_cast<double>(fit_.slope());
      info_.sample_rate_hz = 1.0 / dt_s_;
      info_.start_time_s = start_time();
    }
    if (skipped_ > 0) {
      warnings_.push_back("skipped " + std::to_string(skipped_) +
                          " malformed row(s), the first at line " +
                          std::to_string(first_skipped_line_) + " (" + first_skipped_what_ +
                          "); each skipped row shortens the record by one sample");
    }
    if (jitter_rows_ > 0) {
      warnings_.push_back(std::to_string(jitter_rows_) +
                          " row(s) off the uniform time grid by more than the printed precision "
                          "explains, the first at line " +
                          std::to_string(first_jitter_line_) + "; largest excess " +
                          format_g(max_jitter_s_ / dt_s_ * 100.0, 3) + " % of the sample interval");
    }
    for (auto& n : role_notes_) warnings_.push_back(n);
  }

  struct PendingTime {
    double k;
    double rel;
    double q;
    std::uint64_t line;
  };

  LineReader lines_;
  std::string path_;
  ReaderOptions options_;
  CaptureInfo info_;
  std::vector<std::string> warnings_;
  std::vector<std::string> role_notes_;
  Dialect dialect_;
  std::size_t columns_ = 0;
  int time_column_ = -1;
  std::vector<std::size_t> channel_column_;
  std::vector<double> header_factor_;
  std::vector<double> gains_;
  std::vector<std::string_view> cells_;
  std::string scratch_;
  std::deque<double> pending_;
  std::uint64_t rows_ = 0;       // rows handed out
  std::uint64_t row_index_ = 0;  // rows including skipped ones: the time base index
  std::uint64_t skipped_ = 0;
  std::uint64_t first_skipped_line_ = 0;
  std::string first_skipped_what_;
  bool finished_ = false;
  bool done_ = false;
  // time column state
  TimeFit fit_;
  double t0_ = 0, first_q_ = 0, prev_t_ = 0, prev_q_ = 0, prev_k_ = 0, dt_s_ = 0;
  std::vector<PendingTime> lookahead_times_;
  std::uint64_t jitter_rows_ = 0, first_jitter_line_ = 0;
  double max_jitter_s_ = 0;
};

}  // namespace

std::unique_ptr<SampleSource> open_text_capture(std::istream& in, const std::string& display_path,
                                                const ReaderOptions& options) {
  return std::make_unique<TextReader>(in, display_path, options);
}

}  // namespace lopside
