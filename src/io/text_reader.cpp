// The delimited-text capture reader: CSV, semicolon CSV with decimal comma, TSV and
// whitespace-separated columns as scopes, recorders and spreadsheets export them.
//
// How a file is understood, by general rules rather than by recognising instruments:
//  1. The data start at the first line whose cells are all numbers (or empty) and whose next
//     lines share its shape: same delimiter, same number of cells, numbers in the same columns.
//     Columns that are numbers there are the data columns; the others are a margin, which some
//     exports fill with metadata in their first rows (read as key/values) and leave empty later.
//  2. Lines above the data that share that shape are data too (the margin rows of those
//     exports). Above the data, skipping blank lines and lines of bare delimiters: a units row
//     (units under the names: "second,Volt" or "(ms),(V)") and the names row above it, or a
//     names row alone. Header cells beyond the data's columns pair up as key/values ("Start",
//     "Increment" over their values).
//  3. Everything else above is preamble: key/value lines, '#' comment lines included, all kept
//     as metadata; the time base and the vertical units are read from them.
//  4. The time column is found by its unit or its name; a sample-index column (0, 1, 2, …) is
//     not a channel; a headerless first column that rises in even steps is the time.
//
// Streaming: the file is read in fixed chunks; at open, a look-ahead of at most
// kLookaheadRows data rows is parsed so that the layout and the sample interval can be settled
// before the first block is handed out. Memory is bounded by that look-ahead, a window of
// preamble lines (kWindowLines, kWindowBytes) and the blocks (kMaxBlockValues), never by the
// file's size nor by its number of columns (at most kMaxColumns).
#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <deque>
#include <future>
#include <istream>
#include <limits>
#include <sstream>
#include <string>
#include <string_view>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/channel_roles.hpp"
#include "lopside/error.hpp"
#include "lopside/number_parse.hpp"
#include "lopside/text_metadata.hpp"
#include "lopside/units.hpp"
#include "number_parse_inline.hpp"

namespace lopside {
namespace {

// 65536 rows fit the interval to ~6e-7 relative even when the printed time resolves only a
// tenth of a step (8 significant digits, t ≥ 10 s, 100 ns steps): the slope error of a least
// squares line through n rows with uniform rounding error q is q·sqrt(12/n³)/sqrt(12).
constexpr std::size_t kLookaheadRows = 65536;
// Values in one block handed out by read(), across all channels: 8 MiB of doubles, the budget
// the sound-file reader keeps too. A file of many columns gets blocks of fewer frames, so
// memory never grows with the column count (65536 frames of 10 000 columns took 5 GB).
// (kMaxBlockValues, lopside/reader_options.hpp)
// The look-ahead holds at most as many values as a block, so a file of many columns holds
// fewer rows (at most 16 columns keep all kLookaheadRows rows).
constexpr std::size_t kLookaheadValues = kMaxBlockValues;
// Columns (cells) in a data row or header: the channel limit (lopside/reader_options.hpp).
// Recorders and scopes write a handful; a spreadsheet export of a multi-channel logger a few
// hundred. More is not a capture of discharge current, and every row's cells would cost time
// and memory for nothing.
constexpr std::size_t kMaxColumns = kMaxChannels;
// Lines of preamble kept at once while looking for the data, and their bytes; older ones are
// read for their key/values and dropped, so a long preamble costs no memory.
constexpr std::size_t kWindowLines = 4096;
constexpr std::size_t kWindowBytes = std::size_t{8} << 20;
// Lines kept above a candidate first data row while the window is full: exports put at most a
// few dozen rows of names, units and margin metadata right above their data.
constexpr std::size_t kKeepAbove = 64;
// How far the data are looked for: instruments' preambles run to a few hundred lines, so a
// file without data rows in its first million lines or 64 MiB is not a capture (and reading on
// through gigabytes of text would only delay the same refusal).
constexpr std::uint64_t kMaxPreambleLines = 1000000;
constexpr std::uint64_t kMaxPreambleBytes = std::uint64_t{64} << 20;
// Lines after a candidate first data row that must share its shape.
constexpr std::size_t kConfirmLines = 8;
constexpr std::size_t kMaxMetadata = 65536;
// Instruments write 9.9E37 (or 9.91E37, the IEEE 488.2 "not a number" value) for a sample
// beyond their range; no current or voltage comes near it.
constexpr double kOverflowMarker = 9.9e37;
constexpr std::size_t kMaxMetadataBytes = std::size_t{4} << 20;
// Past the metadata bounds, key/values that set the time base, units or names are still kept
// (reading must not depend on where a fact stands), up to this many bytes more: a preamble or
// footer repeating "Sample interval" a million times does not grow memory either.
constexpr std::size_t kMaxFactBytes = std::size_t{1} << 20;
constexpr std::size_t kChunkBytes = 1 << 20;
constexpr std::size_t kMaxLineBytes = 1 << 20;
// The sample rates accepted from any source (time column, preamble, --rate) are
// kMinSampleRateHz … kMaxSampleRateHz (lopside/reader_options.hpp), as for sound files.

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
  if (s.size() <= n) return to_utf8(s);
  return to_utf8(s.substr(0, n)) + "…";
}

std::string format_g(double v, int digits = 6) {
  std::ostringstream o;
  o.precision(digits);
  o << v;
  return o.str();
}

// Reads lines from a stream in large chunks, strictly forward (pipes cannot seek). Line ends:
// LF, CRLF, CR CR LF (all CRs before the LF are dropped) and, in a file with no LF at all, a
// lone CR. Tracks line numbers and each line's byte offset; refuses binary data with the
// offset of the first bad byte.
// Two passes over every byte of a text capture, written with GCC's vector extensions (16
// lanes, SSE2 on x86-64, NEON on arm64) because the compiler does not vectorise the plain
// loops at -O2: the position of the first control byte other than tab, CR and LF (len if
// none), and the count of line feeds.
using Bytes16 = unsigned char __attribute__((vector_size(16)));

std::size_t first_control_byte(const char* p, std::size_t len) {
  std::size_t i = 0;
  for (; i + 16 <= len; i += 16) {
    Bytes16 c;
    std::memcpy(&c, p + i, 16);
    const Bytes16 bad = (c < 0x20) & (c != '\t') & (c != '\r') & (c != '\n');
    unsigned long long lanes[2];
    std::memcpy(lanes, &bad, 16);
    if ((lanes[0] | lanes[1]) != 0) break;
  }
  for (; i < len; ++i) {
    const auto c = static_cast<unsigned char>(p[i]);
    if (c < 0x20 && c != '\t' && c != '\r' && c != '\n') return i;
  }
  return len;
}

std::uint64_t count_line_feeds(const char* p, std::size_t len) {
  std::uint64_t total = 0;
  std::size_t i = 0;
  while (i + 16 <= len) {
    // Lanes count up to 255 before they are summed.
    Bytes16 counts = {};
    for (int k = 0; k < 255 && i + 16 <= len; ++k, i += 16) {
      Bytes16 c;
      std::memcpy(&c, p + i, 16);
      counts -= static_cast<Bytes16>(c == '\n');  // a true lane is all ones: −1
    }
    for (int k = 0; k < 16; ++k) total += counts[k];
  }
  for (; i < len; ++i) total += p[i] == '\n' ? 1 : 0;
  return total;
}

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
      const void* nl =
          std::memchr(begin, cr_mode_ ? '\r' : '\n', static_cast<std::size_t>(end - begin));
      if (nl != nullptr || (eof_ && begin != end)) {
        const char* stop = nl ? static_cast<const char*>(nl) : end;
        std::size_t len = static_cast<std::size_t>(stop - begin);
        line_start_ = consumed_ + pos_;
        pos_ += len + (nl ? 1 : 0);
        ++line_no_;
        unterminated_ = nl == nullptr;
        // A line that ends within the second chunk read for it may pass refill()'s check.
        if (len > kMaxLineBytes) too_long(line_no_);
        while (len > 0 && begin[len - 1] == '\r') --len;
        line = std::string_view(begin, len);
        if (line_no_ == 1 && line.size() >= 3 && std::memcmp(line.data(), "\xEF\xBB\xBF", 3) == 0) {
          line.remove_prefix(3);  // UTF-8 byte order mark written by spreadsheet exports
          line_start_ += 3;
        }
        check_text(line);
        return true;
      }
      if (eof_) return false;
      refill();
    }
  }

  /// The next run of whole lines (each ending in LF), about `want` bytes (at most 2·kChunkBytes)
  /// and at least one line, for readers that parse many rows at once; `first_line` is the
  /// number of its first line. False when next() must go on line by line instead: no whole
  /// line is buffered, lines end in CR alone, or the first line holds a control byte (next()
  /// places it). A run stops before a line with a control byte, so that line comes next.
  /// The view is valid until the next call of either method.
  bool next_lines(std::size_t want, std::string_view& run, std::uint64_t& first_line) {
    if (cr_mode_) return false;
    while (!eof_ && buffer_.size() - pos_ < want) refill();
    const char* begin = buffer_.data() + pos_;
    std::size_t len = buffer_.size() - pos_;
    // The lines before the first control byte other than tab, CR and LF.
    const std::size_t clean = first_control_byte(begin, len);
    len = std::min(len, clean);
    // Whole lines only: up to the last LF.
    while (len > 0 && begin[len - 1] != '\n') --len;
    if (len == 0) return false;
    if (len > kMaxLineBytes) check_line_lengths(begin, len);
    run = std::string_view(begin, len);
    first_line = line_no_ + 1;
    line_no_ += count_line_feeds(run.data(), run.size());
    pos_ += len;
    line_start_ = consumed_ + pos_;
    unterminated_ = false;
    return true;
  }

  std::uint64_t line_number() const { return line_no_; }
  std::uint64_t line_start_byte() const { return line_start_; }
  /// True when the line last returned is the file's last and had no line end.
  bool unterminated() const { return unterminated_; }

 private:
  void refill() {
    if (pos_ > 0) {
      buffer_.erase(0, pos_);
      consumed_ += pos_;
      pos_ = 0;
    }
    if (buffer_.size() > kMaxLineBytes) too_long(line_no_ + 1);
    const std::size_t old = buffer_.size();
    buffer_.resize(old + kChunkBytes);
    in_.read(buffer_.data() + old, static_cast<std::streamsize>(kChunkBytes));
    const auto got = static_cast<std::size_t>(in_.gcount());
    buffer_.resize(old + got);
    if (got == 0 || !in_) eof_ = true;
    if (in_.bad()) {
      throw InputError(path_, InputLocation::at_byte(consumed_ + old), "read error");
    }
    if (first_chunk_) {
      // Old Macintosh exports end lines with CR alone: a first chunk with CRs and no LF.
      first_chunk_ = false;
      cr_mode_ = std::memchr(buffer_.data(), '\n', buffer_.size()) == nullptr &&
                 std::memchr(buffer_.data(), '\r', buffer_.size()) != nullptr;
    }
  }

  [[noreturn]] void too_long(std::uint64_t line) const {
    throw InputError(path_, InputLocation::at_line(line),
                     "line is longer than 1 MiB; expected one row of samples per line "
                     "(is this a binary file?)");
  }

  // A run of whole lines longer than kMaxLineBytes may hold a line longer than that. Windows
  // of kMaxLineBytes + 1 bytes, each starting at a line's start: one without a line feed lies
  // inside a line that is too long; otherwise the next window starts after its last line feed
  // (searched from the end, so a run of short lines costs a few steps, not one per line).
  void check_line_lengths(const char* run, std::size_t len) const {
    std::size_t start = 0;
    std::uint64_t line = line_no_ + 1;
    while (len - start > kMaxLineBytes) {
      const void* lf = memrchr(run + start, '\n', kMaxLineBytes + 1);
      if (lf == nullptr) too_long(line);
      const auto next = static_cast<std::size_t>(static_cast<const char*>(lf) - run) + 1;
      line += count_line_feeds(run + start, next - start);
      start = next;
    }
  }

  // Control bytes other than tab never occur in text exports; a NUL means binary data. A CR
  // left inside a line (line ends are stripped of theirs) means line ends of two kinds, CR
  // alone among LF: rows run together, and would be read as one.
  void check_text(std::string_view line) const {
    // Every line passes here: the common case is decided by a branch-free pass the compiler
    // can vectorise; only a line that holds a control byte is walked again to place it.
    unsigned bad = 0;
    for (const char ch : line) {
      const auto c = static_cast<unsigned char>(ch);
      bad |= static_cast<unsigned>(c < 0x20) & static_cast<unsigned>(c != '\t');
    }
    if (bad == 0) return;
    for (std::size_t i = 0; i < line.size(); ++i) {
      const auto c = static_cast<unsigned char>(line[i]);
      if (c == '\r') {
        throw InputError(path_, InputLocation::at_byte(line_start_ + i),
                         "a carriage return (CR) inside line " + std::to_string(line_no_) +
                             ": line ends of two kinds (CR alone among LF or CR LF); expected "
                             "one kind of line end throughout");
      }
      if (c < 0x20 && c != '\t') {
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
  bool first_chunk_ = true;
  bool cr_mode_ = false;
  bool unterminated_ = false;
};

bool is_comment(std::string_view line) {
  line = trim(line);
  return !line.empty() && line.front() == '#';
}

bool is_blank(std::string_view line) {
  return trim(line).empty();
}

struct Dialect {
  char delimiter = ',';  ///< ' ' stands for "runs of spaces or tabs"
  char decimal = '.';
};

// Cell splitter for one delimiter: RFC 4180 quoting ("" inside quotes is a quote) for
// character delimiters, runs of blanks for the whitespace delimiter. Trailing empty cells are
// dropped: many exports end every row with a delimiter, and a line of bare delimiters is empty.
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
  // One pass over the bytes for the common unquoted row: a row's cells are short, and a
  // library search per cell (plus one for a quote) cost more than the walk itself.
  bool quoted = false;
  {
    std::size_t start = 0;
    const char* p = line.data();
    const std::size_t n = line.size();
    for (std::size_t i = 0; i < n; ++i) {
      if (p[i] == delimiter) {
        cells.push_back(line.substr(start, i - start));
        start = i + 1;
      } else if (p[i] == '"') {
        quoted = true;
        break;
      }
    }
    if (!quoted) cells.push_back(line.substr(start));
  }
  if (quoted) {
    cells.clear();
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
  while (!cells.empty() && trim(cells.back()).empty()) cells.pop_back();
}

// Days from 1970-01-01 to a civil date (proleptic Gregorian), after H. Hinnant's
// days_from_civil ("chrono-Compatible Low-Level Date Algorithms").
long long days_from_civil(long long y, unsigned m, unsigned d) {
  y -= m <= 2 ? 1 : 0;
  const long long era = (y >= 0 ? y : y - 399) / 400;
  const auto yoe = static_cast<unsigned>(y - era * 400);
  const unsigned doy = (153 * (m > 2 ? m - 3 : m + 9) + 2) / 5 + d - 1;
  const unsigned doe = yoe * 365 + yoe / 4 - yoe / 100 + doy;
  return era * 146097 + static_cast<long long>(doe) - 719468;
}

// A recorder's clock column: "hh:mm:ss[.fff]", optionally after a date "YYYY-MM-DD",
// "YYYY/MM/DD" or "DD.MM.YYYY" and a blank or 'T' (ISO 8601), as seconds (since 1970 when a
// date is given, since midnight otherwise). Only differences matter to the time base.
std::optional<double> parse_clock(std::string_view cell, char decimal) {
  cell = trim(cell);
  if (!cell.empty() && cell.back() == 'Z') cell.remove_suffix(1);
  std::size_t i = 0;
  const auto digits = [&](std::size_t min, std::size_t max, long long& out) {
    std::size_t n = 0;
    out = 0;
    while (i < cell.size() && n < max && cell[i] >= '0' && cell[i] <= '9') {
      out = out * 10 + (cell[i] - '0');
      ++i;
      ++n;
    }
    return n >= min;
  };
  long long days = 0;
  const std::size_t colon = cell.find(':');
  if (colon == std::string_view::npos) return std::nullopt;
  if (colon > 2) {  // a date first
    long long a = 0, b = 0, c = 0;
    if (!digits(1, 4, a) || i >= cell.size()) return std::nullopt;
    const char sep = cell[i];
    if (sep != '-' && sep != '/' && sep != '.') return std::nullopt;
    ++i;
    if (!digits(1, 2, b) || i >= cell.size() || cell[i] != sep) return std::nullopt;
    ++i;
    if (!digits(1, 4, c)) return std::nullopt;
    long long y = a, m = b, d = c;
    if (a < 100) {  // day first: "19.04.2024"
      y = c;
      d = a;
    }
    if (m < 1 || m > 12 || d < 1 || d > 31) return std::nullopt;
    days = days_from_civil(y, static_cast<unsigned>(m), static_cast<unsigned>(d));
    if (i >= cell.size() || (cell[i] != ' ' && cell[i] != 'T')) return std::nullopt;
    while (i < cell.size() && (cell[i] == ' ' || cell[i] == 'T')) ++i;
  }
  long long h = 0, mi = 0;
  if (!digits(1, 2, h) || i >= cell.size() || cell[i] != ':') return std::nullopt;
  ++i;
  if (!digits(2, 2, mi) || i >= cell.size() || cell[i] != ':') return std::nullopt;
  ++i;
  if (h > 23 || mi > 59) return std::nullopt;
  const auto sec = parse_number(cell.substr(i), decimal);
  if (!sec || *sec < 0 || *sec >= 61 || cell[i] == '+' || cell[i] == '-') return std::nullopt;
  return static_cast<double>(days) * 86400.0 + static_cast<double>(h * 3600 + mi * 60) + *sec;
}

// A number as a cell holds it, including a quoted cell with thousands separators
// ("-1,021.11" with the decimal point, "1.021,5" with the decimal comma): digit groups of
// three after the first group, the separator being the other mark.
std::optional<double> parse_cell(std::string_view cell, char decimal) {
  if (auto v = parse_number(cell, decimal)) return v;
  cell = trim(cell);
  if (cell.find(':') != std::string_view::npos) return parse_clock(cell, decimal);
  const char group = decimal == '.' ? ',' : '.';
  if (cell.find(group) == std::string_view::npos) return std::nullopt;
  std::string plain;
  std::size_t i = 0;
  if (i < cell.size() && (cell[i] == '+' || cell[i] == '-')) plain += cell[i++];
  std::size_t lead = 0;
  while (i < cell.size() && cell[i] >= '0' && cell[i] <= '9') plain += cell[i++], ++lead;
  if (lead == 0 || lead > 3) return std::nullopt;
  std::size_t groups = 0;
  while (i < cell.size() && cell[i] == group) {
    ++i;
    std::size_t n = 0;
    while (i < cell.size() && cell[i] >= '0' && cell[i] <= '9') plain += cell[i++], ++n;
    if (n != 3) return std::nullopt;
    ++groups;
  }
  if (groups == 0) return std::nullopt;
  plain.append(cell.substr(i));
  return parse_number(plain, decimal);
}

bool numeric_cell(std::string_view c, char decimal) {
  return parse_cell(c, decimal).has_value() || is_nan_or_inf_text(c);
}

// A calendar date alone ("2026-11-30", "30.11.2026", "2026/11/30"): a recorder's date column
// beside its clock column, a margin rather than data.
bool date_cell(std::string_view c) {
  c = trim(c);
  if (c.size() < 8 || c.size() > 10) return false;
  std::size_t digits = 0, seps = 0;
  for (const char ch : c) {
    if (ch >= '0' && ch <= '9') {
      ++digits;
    } else if (ch == '-' || ch == '/' || ch == '.') {
      ++seps;
    } else {
      return false;
    }
  }
  return seps == 2 && digits >= 6 && c.front() != '-' && c.back() >= '0' && c.back() <= '9';
}

// A row that may be the first of the data: every cell a number, empty or a date, at least one
// number.
bool pure_row(const std::vector<std::string_view>& cells, char decimal) {
  bool any = false;
  for (auto c : cells) {
    if (trim(c).empty() || date_cell(c)) continue;
    if (!numeric_cell(c, decimal)) return false;
    any = true;
  }
  return any;
}

// The dialects under which a line is a pure row, in order of preference. The order settles the
// ambiguous cases: tab before anything; ';' always pairs with the decimal comma (the European
// spreadsheet convention); ',' with the decimal point; blanks last. A row of one number without
// any delimiter also reads as one cell with a decimal comma ("0,5"), which only the header or
// the next rows can tell from two cells.
std::vector<Dialect> pure_dialects(std::string_view line) {
  std::vector<std::string_view> cells;
  std::string scratch;
  std::vector<Dialect> found;
  const std::array<Dialect, 6> candidates{
      {{'\t', '.'}, {'\t', ','}, {';', ','}, {';', '.'}, {',', '.'}, {' ', '.'}}};
  for (const Dialect& d : candidates) {
    if (d.delimiter != ' ' && line.find(d.delimiter) == std::string_view::npos) continue;
    split_cells(line, d.delimiter, cells, scratch);
    if (pure_row(cells, d.decimal)) found.push_back(d);
  }
  split_cells(line, ' ', cells, scratch);
  if (pure_row(cells, ',')) found.push_back(Dialect{' ', ','});
  return found;
}

// Header cells of `line` under `d`; one column of data is named by the whole line, blanks and
// all ("current (A)").
// Blank-separated headers whose names hold blanks ("Time (s)  Current (A)"): a bracketed unit
// belongs to the word before it; failing that, columns are split at runs of two or more blanks
// or at tabs, as fixed-width exports align them.
std::vector<std::string_view> header_cells(std::string_view line, const Dialect& d,
                                           std::size_t columns, std::string& scratch) {
  std::vector<std::string_view> head;
  split_cells(line, d.delimiter, head, scratch);
  if (d.delimiter != ' ' || head.size() == columns) return head;
  if (columns == 1) {
    head.assign(1, trim(line));
    return head;
  }
  std::vector<std::string_view> joined;
  for (const std::string_view cell : head) {
    const bool unit = !cell.empty() && (cell.front() == '(' || cell.front() == '[');
    if (unit && !joined.empty()) {
      // Views into `line`: extend the previous one over the blanks to this cell's end.
      const char* start = joined.back().data();
      joined.back() =
          std::string_view(start, static_cast<std::size_t>(cell.data() + cell.size() - start));
    } else {
      joined.push_back(cell);
    }
  }
  if (joined.size() == columns) return joined;
  std::vector<std::string_view> wide;
  std::size_t i = 0;
  const std::string_view t = trim(line);
  while (i < t.size()) {
    std::size_t j = i;
    while (j < t.size() && t[j] != '\t' && !(t[j] == ' ' && j + 1 < t.size() && t[j + 1] == ' '))
      ++j;
    wide.push_back(trim(t.substr(i, j - i)));
    while (j < t.size() && (t[j] == ' ' || t[j] == '\t')) ++j;
    i = j;
  }
  return wide.size() == columns ? wide : head;
}

// A list in one preamble value ("V,A,V", "CH1;CH2", "CH1 CH2"), split at its first kind of
// separator.
std::vector<std::string> split_list(std::string_view value) {
  std::vector<std::string_view> tokens;
  std::string scratch;
  const char sep = value.find(',') != std::string_view::npos   ? ','
                   : value.find(';') != std::string_view::npos ? ';'
                                                               : ' ';
  split_cells(value, sep, tokens, scratch);
  std::vector<std::string> out;
  for (auto t : tokens) out.emplace_back(trim(t));
  return out;
}

// Names a time column goes by (several languages; "x-axis" as plotting exports write it).
bool is_time_name(const std::string& n) {
  static constexpr std::array<std::string_view, 19> kNames{
      "time",       "t",      "zeit",    "temps",     "tiempo",  "tempo", "tijd",
      "czas",       "x-axis", "x axis",  "timestamp", "seconds", "sec",   "time axis",
      "horizontal", "xaxis",  "x_value", "x value",   "second"};
  for (auto k : kNames) {
    if (n == k) return true;
  }
  const auto ends_with = [&n](std::string_view tail) {
    return n.size() > tail.size() && n.compare(n.size() - tail.size(), tail.size(), tail) == 0;
  };
  return n.rfind("time ", 0) == 0 || n.rfind("time_", 0) == 0 || n.rfind("time[", 0) == 0 ||
         n.rfind("time(", 0) == 0 || ends_with(" time") || ends_with("_time") || n == "elapsed" ||
         n == "uhrzeit" || n == "zeitstempel" || n == "heure" || n == "hora";
}

// Names of a sample-index column.
bool is_index_name(const std::string& n) {
  static constexpr std::array<std::string_view, 17> kNames{
      "",       "index",   "idx",   "x",      "no",       "no.", "nr",     "n", "#",
      "sample", "samples", "point", "points", "sequence", "seq", "number", "pt"};
  for (auto k : kNames) {
    if (n == k) return true;
  }
  return false;
}

// Running least-squares line t = a + b·k over rows k = 0, 1, …, in long double because k
// reaches 1e9 and the sums of k² 1e27 (the cancellation in n·Σk² − (Σk)² loses ~2 digits of
// long double's 19).
class TimeFit {
 public:
  void add(double k, double t) {
    const long double x = k, y = t;
    if (n_ == 0 || k < min_x_) min_x_ = k;
    if (n_ == 0 || k > max_x_) max_x_ = k;
    ++n_;
    sx_ += x;
    sy_ += y;
    sxx_ += x * x;
    sxy_ += x * y;
  }
  std::uint64_t count() const { return n_; }
  /// Rows between the first and the last point.
  double span() const { return n_ < 2 ? 0.0 : max_x_ - min_x_; }
  /// The least-squares slope whatever fix_slope said.
  long double fitted_slope() const {
    const long double n = static_cast<long double>(n_);
    const long double d = n * sxx_ - sx_ * sx_;
    return d == 0 ? 0.0L : (n * sxy_ - sx_ * sy_) / d;
  }
  /// From now on the line has this slope, through the points' centroid.
  void fix_slope(std::optional<long double> b) { fixed_ = b; }
  long double slope() const {
    if (fixed_) return *fixed_;
    const long double n = static_cast<long double>(n_);
    const long double d = n * sxx_ - sx_ * sx_;
    return d == 0 ? 0.0L : (n * sxy_ - sx_ * sy_) / d;
  }
  long double intercept() const { return (sy_ - slope() * sx_) / static_cast<long double>(n_); }
  /// sqrt(1/n + (k − k̄)²/Sxx): a prediction's standard deviation at row k over that of one
  /// point (least-squares prediction variance).
  double spread(double k) const {
    const long double n = static_cast<long double>(n_);
    const long double sxx = sxx_ - sx_ * sx_ / n;
    const long double dx = static_cast<long double>(k) - sx_ / n;
    return sxx > 0 ? static_cast<double>(std::sqrt(1 / n + dx * dx / sxx)) : 1e300;
  }
  long double predict(double k) const {
    // Once per row: the slope (a division) is formed once, not once more for the intercept.
    const long double b = slope();
    return (sy_ - b * sx_) / static_cast<long double>(n_) + b * static_cast<long double>(k);
  }

 private:
  std::uint64_t n_ = 0;
  long double sx_ = 0, sy_ = 0, sxx_ = 0, sxy_ = 0;
  double min_x_ = 0, max_x_ = 0;
  std::optional<long double> fixed_;
};

// floor(log10(x)) for x > 0, exact at the powers of ten printed_resolution() gives (log10 may
// land a hair below one).
int decade(double x) {
  int e = static_cast<int>(std::floor(std::log10(x)));
  if (e >= -300 && e <= 300) {
    if (x >= std::pow(10.0, e + 1)) {
      ++e;
    } else if (x < std::pow(10.0, e)) {
      --e;
    }
  }
  return e;
}

// How a time column is printed, learnt from its rows: the finest printed resolution (the
// fixed decimals of a "%.6f" export) and the most significant digits (the precision of a "%g"
// export). Exports that drop trailing zeros print some rows coarser than they are ("0.003" for
// 0.00300, "0" for 0.00000, "10" for 10.00000): the printed digits alone would let such a row
// sit anywhere within ±½ of its last digit (a time stepping back to "0" on the last row passed
// as rounding). A row is taken to be as exact as the coarser of the two rules makes it, and
// never coarser than its own digits: resolution(t, q) = min(q, max(finest,
// 10^(decade(t) − digits + 1))). Under fixed decimals `finest` is the true resolution, under
// significant digits the second term is; the coarser of the two is never finer than the
// truth, whichever way the column was printed.
class TimePrinting {
 public:
  /// A row's time and its printed resolution, in the column's own unit.
  void add(double t, double q) {
    if (!(q > 0) || !std::isfinite(t) || !std::isfinite(q)) return;
    const double a = std::fabs(t);
    if (q < finest_) {
      fold();
      finest_ = q;
      finest_max_t_ = 0;
    }
    // The common row, printed at the finest resolution: its digits are those of the largest
    // such time, worked out when needed (no logarithm per row).
    if (q == finest_) {
      finest_max_t_ = std::max(finest_max_t_, a);
      return;
    }
    if (a > 0) digits_ = std::max(digits_, decade(a) - decade(q) + 1);
  }

  /// The resolution a row printed with resolution `q` really has (≤ q).
  double resolution(double t, double q) const {
    if (!(q > finest_) || !std::isfinite(t)) return q;
    int digits = digits_;
    if (finest_max_t_ > 0) digits = std::max(digits, decade(finest_max_t_) - decade(finest_) + 1);
    const double a = std::fabs(t);
    const double by_digits = a > 0 && digits > 0 ? std::pow(10.0, decade(a) - digits + 1) : 0.0;
    return std::min(q, std::max(finest_, by_digits));
  }

 private:
  void fold() {
    if (finest_max_t_ > 0) digits_ = std::max(digits_, decade(finest_max_t_) - decade(finest_) + 1);
  }

  double finest_ = std::numeric_limits<double>::infinity();
  double finest_max_t_ = 0;  // the largest |t| printed at the finest resolution
  int digits_ = 0;           // the most significant digits of the other rows
};

// Typographic quotes around a header cell (“Time (s)”, as word processors and some exports
// write them, in UTF-8 or as Windows-1252 bytes 0x93/0x94) are quotes, not part of the name.
std::string strip_curly_quotes(std::string_view cell) {
  std::string c = to_utf8(cell);
  for (const std::string_view q :
       {"\xE2\x80\x9C", "\xE2\x80\x9D", "\xE2\x80\x98", "\xE2\x80\x99"}) {
    if (c.size() >= q.size() && c.compare(0, q.size(), q) == 0) c.erase(0, q.size());
    if (c.size() >= q.size() && c.compare(c.size() - q.size(), q.size(), q) == 0)
      c.erase(c.size() - q.size());
  }
  return std::string(trim(c));
}

struct WindowLine {
  std::uint64_t no = 0;
  std::string text;
  bool comment = false;
  bool unterminated = false;
  bool after_blank = false;  ///< a blank line stands right above it
};

class TextReader final : public SampleSource {
 public:
  TextReader(std::istream& in, const std::string& path, const ReaderOptions& options)
      : lines_(in, path), path_(path), options_(options) {
    info_.path = path;
    open();
  }

  // The parsing threads read the reader's layout: they end before any member does.
  ~TextReader() override {
    for (Run& r : runs_)
      for (auto& f : r.parsed)
        if (f.valid()) f.wait();
  }

  const CaptureInfo& info() const override { return info_; }
  const std::vector<std::string>& warnings() const override { return warnings_; }

  /// The most frames read() hands out at once for `channels` channels: kMaxBlockValues values.
  static std::size_t block_frames_limit(std::size_t channels) {
    return std::max<std::size_t>(1, kMaxBlockValues / std::max<std::size_t>(1, channels));
  }

  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    const std::size_t nch = info_.channels.size();
    max_frames = std::min(max_frames, block_frames_limit(nch));
    block.channels = nch;
    block.data.resize(max_frames * nch);
    std::size_t f = 0;
    while (f < max_frames) {
      if (pending_at_ < pending_.size()) {
        const std::size_t take = std::min(max_frames - f, (pending_.size() - pending_at_) / nch);
        std::copy_n(pending_.begin() + static_cast<std::ptrdiff_t>(pending_at_), take * nch,
                    block.data.begin() + static_cast<std::ptrdiff_t>(f * nch));
        pending_at_ += take * nch;
        f += take;
        if (pending_at_ >= pending_.size()) {
          pending_.clear();
          // The look-ahead's rows may be many; a batch's storage is reused.
          if (pending_.capacity() > 4 * kBatchBytes) pending_.shrink_to_fit();
          pending_at_ = 0;
        }
        continue;
      }
      if (finished_) break;
      if (parse_batch()) continue;
      if (!parse_next_row(block.data.data() + f * nch)) break;
      ++f;
    }
    block.frames = f;
    block.data.resize(f * nch);
    if (f == 0) finish();
    return f;
  }

 private:
  // --- finding the data ------------------------------------------------------------------
  // Key/values are kept up to a bound on their count and size (a preamble may be huge); past
  // it, the ones that set the time base, units or names are still kept, so reading never
  // depends on where in the preamble a fact stands.
  // `line` is where it stands, for a message about a time base it states.
  void keep_metadata(std::string key, std::string value, std::uint64_t line) {
    if (info_.metadata.size() >= kMaxMetadata || metadata_bytes_ >= kMaxMetadataBytes) {
      if (fact_bytes_ >= kMaxFactBytes || !fact_pair(key, value)) {
        ++metadata_dropped_;
        return;
      }
      fact_bytes_ += key.size() + value.size();
    }
    metadata_bytes_ += key.size() + value.size();
    info_.metadata.emplace_back(std::move(key), std::move(value));
    metadata_lines_.push_back(line);
  }

  // A line above the data that is not its header: its key/value goes to the metadata.
  void retire(const WindowLine& l) {
    if (l.comment) {
      ++comment_lines_;
    } else {
      ++preamble_lines_;
    }
    if (preamble_first_ == 0) preamble_first_ = l.no;
    preamble_last_ = l.no;
    if (auto kv = split_key_value(l.text)) {
      if (preamble_keys_.size() < 6 && !kv->first.empty()) preamble_keys_.push_back(kv->first);
      keep_metadata(std::move(kv->first), std::move(kv->second), l.no);
    }
  }

  // A row of the data under the layout being tried: as many cells, numbers in the data columns.
  bool data_row(std::string_view text, const Dialect& d, std::size_t columns,
                const std::vector<bool>& is_data) {
    split_cells(text, d.delimiter, cells_, scratch_);
    if (cells_.size() != columns) return false;
    for (std::size_t i = 0; i < columns; ++i) {
      if (is_data[i] && !numeric_cell(cells_[i], d.decimal)) return false;
    }
    return true;
  }

  bool keyed_margin_row(std::string_view text) {
    split_cells(text, dialect_.delimiter, cells_, scratch_);
    std::size_t filled = 0;
    std::string key;
    for (std::size_t i = 0; i < cells_.size() && i < columns_; ++i) {
      if (is_data_[i] || trim(cells_[i]).empty()) continue;
      ++filled;
      key = std::string(trim(cells_[i]));
    }
    if (filled != 1) return false;
    const std::string value(trim(cells_[data_index_first()]));
    return keyed_fact(key + "," + value) || is_vertical_unit_key(key);
  }

  std::size_t data_index_first() const {
    for (std::size_t i = 0; i < columns_; ++i) {
      if (is_data_[i]) return i;
    }
    return 0;
  }

  bool bare_delimiters(std::string_view text) {
    split_cells(text, dialect_.delimiter, cells_, scratch_);
    return cells_.empty();
  }

  // The layout a candidate first row gives under `d`; true if the rows after it share it.
  bool confirm(const std::deque<WindowLine>& window, std::size_t at, const Dialect& d) {
    split_cells(window[at].text, d.delimiter, cells_, scratch_);
    const std::size_t columns = cells_.size();
    std::vector<bool> is_data(columns);
    for (std::size_t i = 0; i < columns; ++i)
      is_data[i] = !trim(cells_[i]).empty() && !date_cell(cells_[i]);
    // A names row right above, one name per cell, makes the row the data's first: a malformed
    // row soon after it is then reported at its own line. Without one, three in four of the
    // next rows must share the shape (a stray bad row does not move the data's start).
    const Dialect saved = dialect_;
    dialect_ = d;
    const std::size_t above = line_above(window, at);
    dialect_ = saved;
    bool named = false;
    // One column is named by a whole line, so any line of words above one would do: there the
    // rows below must confirm, and a line with a key/value separator is never a name.
    if (above != std::string::npos && !window[above].comment && !keyed_fact(window[above].text) &&
        (columns > 1 || window[above].text.find_first_of(",;\t:=") == std::string::npos)) {
      std::string head_scratch;
      const auto head = header_cells(window[above].text, d, columns, head_scratch);
      named = head.size() == columns;
      for (std::size_t i = 0; named && i < columns; ++i)
        named = !trim(head[i]).empty() && !numeric_cell(head[i], d.decimal);
    }
    std::size_t checked = 0, matched = 0;
    for (std::size_t j = at + 1; j < window.size() && checked < kConfirmLines; ++j) {
      if (window[j].comment) continue;
      if (window[j].unterminated) break;  // the last line may be cut short; judged later
      matched += data_row(window[j].text, d, columns, is_data) ? 1u : 0u;
      ++checked;
    }
    last_matched_ = matched;
    if ((!named || columns == 1) && 4 * matched < 3 * checked) return false;
    // A last row with nothing after it to confirm it is the data only if nothing but comments
    // stands before it either (a file of one row).
    if (!named && checked == 0) {
      for (std::size_t j = 0; j < at; ++j) {
        if (!window[j].comment) return false;
      }
      if (preamble_lines_ > 0) return false;
    }
    dialect_ = d;
    columns_ = columns;
    is_data_ = std::move(is_data);
    return true;
  }

  // The nearest line above `at` that is neither a comment nor bare delimiters, or npos.
  std::size_t line_above(const std::deque<WindowLine>& window, std::size_t at) {
    while (at > 0) {
      --at;
      if (window[at].comment) return std::string::npos;
      if (!bare_delimiters(window[at].text)) return at;
    }
    return std::string::npos;
  }

  // Scans to the first data row; returns the window of lines read so far, the data's first
  // row at index `data_at`. Lines that scroll out of the window are preamble.
  std::deque<WindowLine> find_data(std::size_t& data_at) {
    std::deque<WindowLine> window;
    std::size_t window_bytes = 0;
    std::size_t search = 0;
    bool eof = false;
    bool blank_seen = false;
    const auto full = [&] { return window.size() > kWindowLines || window_bytes > kWindowBytes; };
    for (;;) {
      std::string_view line;
      if (lines_.next(line)) {
        if (is_blank(line)) {
          blank_seen = true;
        } else {
          window.push_back({lines_.line_number(), std::string(line), is_comment(line),
                            lines_.unterminated(), blank_seen});
          window_bytes += line.size();
          blank_seen = false;
          // Lines above the first undecided one are dropped from the front, but the nearest
          // kKeepAbove stay while their bytes allow: a names row, a units row or a margin of
          // metadata rows above the data's first row are read from the window.
          while (full() && search > 0 && (search > kKeepAbove || window_bytes > kWindowBytes)) {
            window_bytes -= window.front().text.size();
            retire(window.front());
            window.pop_front();
            --search;
          }
        }
      } else {
        eof = true;
      }
      while (search < window.size()) {
        if (window[search].comment) {
          ++search;
          continue;
        }
        const std::vector<Dialect> dialects = pure_dialects(window[search].text);
        if (dialects.empty()) {
          ++search;
          continue;
        }
        std::size_t after = 0;
        for (std::size_t j = search + 1; j < window.size() && after < kConfirmLines; ++j)
          after += window[j].comment ? 0u : 1u;
        // Read more lines first, unless the window is full (a candidate followed by a long
        // run of comments): then it is judged by the lines the window holds.
        if (after < kConfirmLines && !eof && !full()) break;
        // Where the row reads more than one way, the dialect under which the line above it
        // has as many cells as the row wins; else the first that the next rows confirm.
        // The dialect under which most of the next rows share the row's shape wins (a first
        // row "0\t0" reads with either decimal mark; "0,0001\t0,06" below it decides).
        std::vector<Dialect> confirmed;
        std::size_t best_matched = 0;
        for (const Dialect& d : dialects) {
          if (!confirm(window, search, d)) continue;
          if (confirmed.empty() || last_matched_ > best_matched) {
            if (last_matched_ > best_matched) confirmed.clear();
            best_matched = last_matched_;
            confirmed.push_back(d);
          } else if (last_matched_ == best_matched) {
            confirmed.push_back(d);
          }
        }
        // Both decimal marks read the rows so far: a later row may still tell them apart.
        decimal_open_ = false;
        for (std::size_t i = 0; i + 1 < confirmed.size(); ++i) {
          for (std::size_t j = i + 1; j < confirmed.size(); ++j) {
            decimal_open_ = decimal_open_ || (confirmed[i].delimiter == confirmed[j].delimiter &&
                                              confirmed[i].decimal != confirmed[j].decimal);
          }
        }
        if (!confirmed.empty()) {
          Dialect chosen = confirmed.front();
          for (const Dialect& d : confirmed) {
            confirm(window, search, d);
            dialect_ = d;
            const std::size_t above = line_above(window, search);
            if (above == std::string::npos) continue;
            std::string head_scratch;
            if (header_cells(window[above].text, d, columns_, head_scratch).size() == columns_) {
              chosen = d;
              break;
            }
          }
          confirm(window, search, chosen);
          if (columns_ > kMaxColumns) {
            throw InputError(path_, InputLocation::at_line(window[search].no),
                             "the data rows from here on have " + std::to_string(columns_) +
                                 " columns; expected at most " + std::to_string(kMaxColumns) +
                                 " columns (cells) per row");
          }
          data_at = search;
          return window;
        }
        ++search;
      }
      if (eof) break;
      // Every line read so far is decided and none starts the data: past the bound, stop.
      if (search >= window.size() && (lines_.line_number() >= kMaxPreambleLines ||
                                      lines_.line_start_byte() >= kMaxPreambleBytes)) {
        throw InputError(path_, InputLocation::at_line(lines_.line_number()),
                         "no data rows in the first " + std::to_string(lines_.line_number()) +
                             " lines (" + std::to_string(lines_.line_start_byte() >> 20) +
                             " MiB); expected rows of numbers within the first " +
                             std::to_string(kMaxPreambleLines) + " lines or " +
                             std::to_string(kMaxPreambleBytes >> 20) + " MiB (is this a capture?)");
      }
    }
    bool any_text = preamble_lines_ + comment_lines_ > 0 || !window.empty();
    if (!any_text) throw InputError(path_, "the file holds no text; expected a capture");
    if (window.empty()) throw InputError(path_, "no data rows; expected rows of numbers");
    // Numbers in a shape not understood must not be called "no rows of numbers".
    std::size_t numeric_lines = 0, first_numeric = 0;
    for (const auto& l : window) {
      if (l.comment) continue;
      // Split at anything that may separate numbers, whatever the delimiter.
      std::size_t numbers = 0, tokens = 0;
      std::size_t i = 0;
      const std::string_view t = l.text;
      while (i < t.size()) {
        while (i < t.size() && std::strchr(",;\t| ", t[i]) != nullptr) ++i;
        std::size_t j = i;
        while (j < t.size() && std::strchr(",;\t| ", t[j]) == nullptr) ++j;
        if (j > i) {
          ++tokens;
          numbers += numeric_cell(t.substr(i, j - i), '.') ? 1u : 0u;
        }
        i = j;
      }
      if (numbers > 0 && 2 * numbers >= tokens) {
        if (numeric_lines++ == 0) first_numeric = static_cast<std::size_t>(l.no);
      }
    }
    if (numeric_lines >= 2) {
      throw InputError(path_, InputLocation::at_line(first_numeric),
                       "rows of numbers from here on, but in no layout lopside understands: "
                       "expected rows with the same number of cells separated by ',', ';', tab "
                       "or spaces, numbers in the same columns of every row");
    }
    throw InputError(path_, InputLocation::at_line(window.back().no),
                     "no data rows after this line ('" + shorten(window.back().text) +
                         "'); expected rows of numbers separated by ',', ';', tab or spaces");
  }

  // --- the header ------------------------------------------------------------------------
  // Header cells mapped onto the data's columns: one per column, extra cells beyond them
  // returned in `extra`. Empty when the line has fewer cells than the data.
  std::vector<std::string> map_header(std::string_view text, std::vector<std::string>* extra) {
    std::string head_scratch;
    const std::vector<std::string_view> head = header_cells(text, dialect_, columns_, head_scratch);
    std::vector<std::string> out;
    // "s,A," over three columns: the splitter dropped the empty last cells, which the line's
    // delimiters show were there (a channel without a unit, or without a name).
    if (head.size() < columns_ && dialect_.delimiter != ' ' && !head.empty() &&
        static_cast<std::size_t>(std::count(text.begin(), text.end(), dialect_.delimiter)) + 1 >=
            columns_) {
      for (const auto c : head) out.emplace_back(strip_curly_quotes(trim(c)));
      out.resize(columns_);
      return out;
    }
    if (head.size() >= columns_) {
      for (std::size_t i = 0; i < columns_; ++i)
        out.emplace_back(strip_curly_quotes(trim(head[i])));
      if (extra) {
        for (std::size_t i = columns_; i < head.size(); ++i) extra->emplace_back(trim(head[i]));
      }
      return out;
    }
    return out;
  }

  bool any_numeric_data_cell(const std::vector<std::string>& cells) const {
    for (std::size_t i = 0; i < cells.size(); ++i) {
      if (is_data_[i] && numeric_cell(cells[i], dialect_.decimal)) return true;
    }
    return false;
  }

  // A units row: no numbers under the data, and at least half of its non-empty cells there are
  // units lopside knows ("second", "Volt", "(ms)"); the rest may be words such as "Sequence".
  bool units_row(const std::vector<std::string>& cells) const {
    std::size_t filled = 0, units = 0;
    for (std::size_t i = 0; i < cells.size(); ++i) {
      if (!is_data_[i] || trim(cells[i]).empty()) continue;
      ++filled;
      if (numeric_cell(cells[i], dialect_.decimal)) return false;
      if (looks_like_unit(cells[i])) ++units;
    }
    return units > 0 && 2 * units >= filled;
  }

  // A key/value that sets how the file is read: a unit, names, or the time base.
  static bool fact_pair(const std::string& key, const std::string& value) {
    if (is_vertical_unit_key(key) || is_horizontal_unit_key(key) || is_channel_names_key(key) ||
        is_source_key(key))
      return true;
    const StatedTimeBase t = stated_time_base({{key, value}});
    return t.interval_s.has_value() || t.start_s.has_value();
  }

  // A line that states a time base or a unit is preamble, never a header.
  static bool keyed_fact(std::string_view text) {
    const auto kv = split_key_value(text);
    return kv && !kv->second.empty() && fact_pair(kv->first, kv->second);
  }

  bool all_units(const std::vector<std::string>& cells) const {
    for (std::size_t i = 0; i < cells.size(); ++i) {
      if (is_data_[i] && !trim(cells[i]).empty() && !looks_like_unit(cells[i])) return false;
    }
    return true;
  }

  // "Points,300" or "Xinc: 2e-7" above one column: a key with a number, not a name.
  bool numeric_key_value(std::string_view text) const {
    if (columns_ != 1) return false;
    const auto kv = split_key_value(text);
    return kv && !kv->second.empty() && parse_quantity(kv->second, dialect_.decimal).has_value() &&
           text.find_first_of(",;\t:=") != std::string_view::npos;
  }

  // Names over a units row may be channel numbers ("x-axis,1,2"), never other numbers.
  bool plausible_names(const std::vector<std::string>& cells) const {
    for (std::size_t i = 0; i < cells.size(); ++i) {
      if (!is_data_[i] || !numeric_cell(cells[i], dialect_.decimal)) continue;
      for (const char c : trim(cells[i])) {
        if (c < '0' || c > '9') return false;
      }
    }
    return true;
  }

  struct Header {
    std::vector<std::string> names;
    std::vector<std::string> units;  // from a units row; empty strings where none
    std::size_t top = 0;             // window index of the header's first line
    std::uint64_t line = 0;          // its line number
    bool found = false;
    std::vector<std::pair<std::string, std::string>> extras;  // keyed cells beyond the data
  };

  void check_header_width(std::size_t cells, std::uint64_t line) const {
    if (cells <= kMaxColumns) return;
    throw InputError(path_, InputLocation::at_line(line),
                     "the header has " + std::to_string(cells) + " cells; expected at most " +
                         std::to_string(kMaxColumns) + " columns (cells) per row");
  }

  Header read_header(std::deque<WindowLine>& window, std::size_t data_at) {
    Header h;
    h.top = data_at;
    const std::size_t h1 = line_above(window, data_at);
    if (h1 == std::string::npos) {
      // A header written as a comment right above the data ("# time (s), current (A)").
      if (data_at > 0 && window[data_at - 1].comment) {
        std::string_view t = trim(window[data_at - 1].text);
        while (!t.empty() && t.front() == '#') t = trim(t.substr(1));
        std::vector<std::string> extra;
        std::vector<std::string> names = map_header(t, &extra);
        if (!names.empty() && extra.empty() && !any_numeric_data_cell(names) && !keyed_fact(t) &&
            t.find_first_of(":=") == std::string_view::npos) {
          h.names = std::move(names);
          h.top = data_at - 1;
          h.line = window[data_at - 1].no;
          h.found = true;
        }
      }
      return h;
    }
    if (keyed_fact(window[h1].text) || numeric_key_value(window[h1].text)) return h;
    std::vector<std::string> extra1, extra2;
    std::vector<std::string> first = map_header(window[h1].text, &extra1);
    const std::size_t h2 = first.empty() ? std::string::npos : line_above(window, h1);
    if (h2 != std::string::npos && units_row(first) && !keyed_fact(window[h2].text)) {
      std::vector<std::string> names = map_header(window[h2].text, &extra2);
      if (!names.empty() && plausible_names(names)) {
        check_header_width(columns_ + extra2.size(), window[h2].no);
        check_header_width(columns_ + extra1.size(), window[h1].no);
        h.names = std::move(names);
        h.units = std::move(first);
        h.top = h2;
        h.line = window[h2].no;
        h.found = true;
        // Cells beyond the data's columns: keys over their values ("Start" over "-1.06e-05").
        for (std::size_t i = 0; i < extra2.size(); ++i) {
          if (extra2[i].empty()) continue;
          h.extras.emplace_back(to_utf8(extra2[i]),
                                i < extra1.size() ? to_utf8(extra1[i]) : std::string());
        }
        return h;
      }
    }
    // A units row with no names row above it ("Second,Volt"): units only, names of our own.
    if (!first.empty() && units_row(first) && all_units(first)) {
      h.names.assign(columns_, std::string());
      h.units = std::move(first);
      h.top = h1;
      h.line = window[h1].no;
      h.found = true;
      return h;
    }
    if (!first.empty() && !any_numeric_data_cell(first)) {
      check_header_width(columns_ + extra1.size(), window[h1].no);
      // Names beyond the data's columns without units name columns the rows leave empty (a
      // "Comment" column): noted; with units they promise data that is missing: an error.
      bool extra_with_units = false;
      for (const auto& e : extra1)
        extra_with_units = extra_with_units || !split_name_unit(e).unit_text.empty();
      if (!extra1.empty() && !extra_with_units) {
        std::string names;
        for (const auto& e : extra1) names += (names.empty() ? "'" : ", '") + to_utf8(e) + "'";
        warnings_.push_back("header column(s) " + names + " hold no data in the rows; ignored");
        extra1.clear();
      }
      if (!extra1.empty()) {
        throw InputError(path_, InputLocation::at_line(window[h1].no),
                         "the header has " + std::to_string(columns_ + extra1.size()) +
                             " cells but the data rows below it have " + std::to_string(columns_) +
                             "; expected one name per column (quote names that hold the "
                             "delimiter)");
      }
      h.names = std::move(first);
      h.top = h1;
      h.line = window[h1].no;
      h.found = true;
      return h;
    }
    if (first.empty()) {
      std::string head_scratch;
      const auto head = header_cells(window[h1].text, dialect_, columns_, head_scratch);
      bool numeric = false;
      for (auto c : head) numeric = numeric || numeric_cell(c, dialect_.decimal);
      if (!numeric && (window[h1].text.find('(') != std::string::npos ||
                       window[h1].text.find('[') != std::string::npos)) {
        throw InputError(path_, InputLocation::at_line(window[h1].no),
                         "the header has " + std::to_string(head.size()) +
                             " cells but the data rows below it have " + std::to_string(columns_) +
                             "; expected one name per column (quote names that hold the "
                             "delimiter)");
      }
    }
    return h;
  }

  // --- opening ---------------------------------------------------------------------------
  void open() {
    std::size_t data_at = 0;
    std::deque<WindowLine> window = find_data(data_at);
    // Rows above the candidate that share its layout are data too (margin rows).
    // A blank line ends them, and so does a row whose margin holds a key alone over numbers
    // in the data columns ("HResolution,,1.0E-06,1.0E-06": a value per channel, not a sample).
    while (data_at > 0 && !window[data_at].after_blank && !window[data_at - 1].comment &&
           data_row(window[data_at - 1].text, dialect_, columns_, is_data_) &&
           !keyed_margin_row(window[data_at - 1].text)) {
      --data_at;
    }
    // "Record Length" on one line and "2000" on the next, above a single column: a key and
    // its value, not a name and a sample.
    if (columns_ == 1 && data_at > 0 && data_at + 1 < window.size() &&
        !window[data_at - 1].comment && !window[data_at - 1].after_blank) {
      const auto kv = split_key_value(window[data_at - 1].text);
      const std::string value(trim(window[data_at].text));
      if (kv && kv->second.empty() &&
          (is_count_key(kv->first) || keyed_fact(kv->first + "," + value))) {
        window[data_at - 1].text = kv->first + "," + value;
        window.erase(window.begin() + static_cast<std::ptrdiff_t>(data_at));
        window[data_at].after_blank = true;  // nothing above it belongs to the data now
      }
    }
    first_data_line_ = window[data_at].no;
    Header header = read_header(window, data_at);
    for (std::size_t i = 0; i < header.top; ++i) retire(window[i]);
    for (std::size_t i = header.top; i < data_at; ++i) {
      if (window[i].comment) retire(window[i]);
    }
    for (auto& [key, value] : header.extras)
      keep_metadata(std::move(key), std::move(value), header.line);
    window.erase(window.begin(), window.begin() + static_cast<std::ptrdiff_t>(data_at));

    setup_columns(header);
    lookahead(window);
    window.clear();
    decide_columns(header);
    settle_time_base(header);
    describe(header);
  }

  // Names and units from the header; which column is the time (by unit or name).
  void setup_columns(const Header& h) {
    column_name_.assign(columns_, std::string());
    column_unit_.assign(columns_, std::string());
    column_unit_text_.assign(columns_, std::string());
    column_factor_.assign(columns_, 1.0);
    column_unit_stated_.assign(columns_, false);
    for (std::size_t i = 0; i < columns_; ++i) {
      if (!is_data_[i] || !h.found) continue;
      // Latin-1 headers ("Time (\xB5s)") are re-encoded first, so µ is read as micro.
      NameAndUnit nu = split_name_unit(to_utf8(h.names[i]));
      std::string unit_text = nu.unit_text;
      if (!h.units.empty() && !trim(h.units[i]).empty()) {
        unit_text = to_utf8(trim(h.units[i]));
        nu.name = to_utf8(trim(h.names[i]));
      }
      // A name that is a unit word alone ("Volts", "Amps") states that unit.
      if (unit_text.empty() && nu.name.size() > 2 && parse_unit(nu.name) &&
          parse_unit(nu.name)->si_unit != "s") {
        unit_text = nu.name;
      }
      column_name_[i] = to_utf8(nu.name);
      if (unit_text.empty()) continue;
      column_unit_stated_[i] = true;
      if (const auto u = parse_unit(unit_text)) {
        column_unit_[i] = u->si_unit;
        column_factor_[i] = u->factor;
      } else {
        std::string_view t = trim(unit_text);
        if (t.size() >= 2 && (t.front() == '(' || t.front() == '[')) t = t.substr(1, t.size() - 2);
        column_unit_text_[i] = to_utf8(t);
      }
    }
    for (std::size_t i = 0; i < columns_; ++i) {
      if (is_data_[i] && column_unit_[i] == "s") {
        time_column_ = static_cast<int>(i);
        break;
      }
    }
    if (time_column_ < 0 && h.found) {
      for (std::size_t i = 0; i < columns_; ++i) {
        if (is_data_[i] && !column_unit_stated_[i] && is_time_name(lower(column_name_[i]))) {
          time_column_ = static_cast<int>(i);
          break;
        }
      }
    }
    data_index_.clear();
    for (std::size_t i = 0; i < columns_; ++i) {
      if (is_data_[i]) data_index_.push_back(i);
    }
    // Printed resolutions are kept for the columns that may turn out to be the time.
    if (time_column_ >= 0) {
      q_columns_.push_back(static_cast<std::size_t>(time_column_));
    } else {
      for (std::size_t k = 0; k < std::min<std::size_t>(3, data_index_.size()); ++k)
        q_columns_.push_back(data_index_[k]);
    }
  }

  // Parses up to kLookaheadRows rows as written (no factors yet) so that the layout's open
  // questions (index column, headerless time, integer codes) and the interval can be settled.
  void lookahead(const std::deque<WindowLine>& window) {
    const std::size_t d = data_index_.size();
    const std::size_t max_rows =
        std::min(kLookaheadRows, std::max<std::size_t>(16, kLookaheadValues / d));
    fraction_seen_.assign(columns_, false);
    clock_seen_.assign(columns_, false);
    auto take = [&](std::string_view text, std::uint64_t line_no, bool unterminated) {
      if (unterminated && cut_short(text, line_no)) return;
      current_text_ = text;
      split_cells(text, dialect_.delimiter, cells_, scratch_);
      if (cells_.size() != columns_) {
        bad_row(line_no, cell_count_message());
        return;
      }
      const std::size_t base = look_values_.size();
      look_values_.resize(base + d);
      for (std::size_t k = 0; k < d; ++k) {
        const std::string_view cell = cells_[data_index_[k]];
        auto v = parse_cell(cell, dialect_.decimal);
        if (!v) v = reparse_with_other_mark(cell);
        if (decimal_open_ && !mark_seen_ && cell.find(dialect_.decimal) != std::string_view::npos)
          mark_seen_ = true;
        if (!v || std::fabs(*v) >= kOverflowMarker) {
          look_values_.resize(base);
          bad_cell(line_no, data_index_[k], cell);
          return;
        }
        look_values_[base + k] = *v;
        if (!clock_seen_[data_index_[k]] && cell.find(':') != std::string_view::npos)
          clock_seen_[data_index_[k]] = true;
        if (!fraction_seen_[data_index_[k]] &&
            (cell.find(dialect_.decimal) != std::string_view::npos ||
             cell.find_first_of("eE") != std::string_view::npos)) {
          fraction_seen_[data_index_[k]] = true;
        }
      }
      end_of_footer(line_no);
      for (const std::size_t c : q_columns_) {
        look_q_.push_back(printed_resolution(cells_[c], dialect_.decimal));
        if (cells_[c].find(':') != std::string_view::npos) clock_column_ = static_cast<int>(c);
      }
      look_lines_.push_back(line_no);
      look_k_.push_back(row_index_);
      ++row_index_;
      // The margin of a row holds metadata ("Sample Interval", "4.00E-05").
      std::string key, value;
      for (std::size_t i = 0; i < columns_; ++i) {
        if (is_data_[i] || trim(cells_[i]).empty()) continue;
        if (key.empty()) {
          key = to_utf8(trim(cells_[i]));
        } else {
          if (!value.empty()) value += ' ';
          value += to_utf8(trim(cells_[i]));
        }
      }
      if (!key.empty()) keep_metadata(std::move(key), std::move(value), line_no);
      last_row_line_.assign(text);
    };
    for (const auto& l : window) {  // bounded by the window, so read whole
      if (l.comment || bare_delimiters(l.text)) continue;
      take(l.text, l.no, l.unterminated);
    }
    // The window may already hold rows beyond the look-ahead's limit: keep them for later.
    std::string_view line;
    while (look_lines_.size() < max_rows && !finished_) {
      if (!lines_.next(line)) {
        finished_ = true;
        break;
      }
      if (is_blank(line) || is_comment(line)) continue;
      take(line, lines_.line_number(), lines_.unterminated());
    }
    if (look_lines_.empty()) {
      throw InputError(path_, InputLocation::at_line(first_data_line_),
                       "no usable data rows (every row was skipped as malformed)");
    }
  }

  std::string cell_count_message() const {
    return "expected " + std::to_string(columns_) + " cells separated by " + delimiter_name() +
           ", found " + std::to_string(cells_.size()) +
           (cells_.size() > kMaxColumns
                ? " (expected at most " + std::to_string(kMaxColumns) + " columns in any row)"
                : std::string());
  }

  // Where the rows so far read with either decimal mark (tab or blank delimited, no mark yet
  // printed), the first cell that needs the other mark settles it: the values read so far are
  // the same under both.
  std::optional<double> reparse_with_other_mark(std::string_view cell) {
    if (!decimal_open_ || mark_seen_) return std::nullopt;
    const char other = dialect_.decimal == '.' ? ',' : '.';
    auto v = parse_cell(cell, other);
    if (v) {
      dialect_.decimal = other;
      decimal_open_ = false;
    }
    return v;
  }

  bool bad_cell(std::uint64_t line_no, std::size_t column, std::string_view cell) {
    if (const auto v = parse_cell(cell, dialect_.decimal); v && std::fabs(*v) >= kOverflowMarker) {
      return bad_row(line_no, "column " + std::to_string(column + 1) + ": '" + shorten(trim(cell)) +
                                  "' is the overflow marker instruments write for a sample "
                                  "beyond their range (about 9.9E+37), not a sample value");
    }
    if (is_nan_or_inf_text(cell)) {
      return bad_row(line_no, "column " + std::to_string(column + 1) + ": '" + shorten(trim(cell)) +
                                  "' is not a finite number; expected a sample value");
    }
    return bad_row(line_no, "column " + std::to_string(column + 1) + ": expected a number" +
                                (dialect_.decimal == ',' ? " with a decimal comma" : "") +
                                ", found '" + shorten(trim(cell)) + "'");
  }

  // A last line without a line end, from a file still being written, may be cut inside a
  // number ("881." of "881.25"): too few cells, a number that ends in its mark, exponent or
  // sign, or fewer decimals than the same column of the row before. It is left out, and said.
  bool cut_short(std::string_view text, std::uint64_t line_no) {
    split_cells(text, dialect_.delimiter, cells_, scratch_);
    bool cut = cells_.size() != columns_;
    std::vector<std::string_view> before;
    std::string before_scratch;
    if (!cut && !last_row_line_.empty())
      split_cells(last_row_line_, dialect_.delimiter, before, before_scratch);
    for (std::size_t i = 0; !cut && i < columns_; ++i) {
      if (!is_data_[i]) continue;
      const std::string_view c = trim(cells_[i]);
      if (c.empty() || !numeric_cell(c, dialect_.decimal)) {
        cut = true;
        break;
      }
      const char last = c.back();
      cut = last == dialect_.decimal || last == 'e' || last == 'E' || last == '+' || last == '-';
      if (!cut && before.size() == columns_) {
        cut = printed_resolution(c, dialect_.decimal) >
              printed_resolution(trim(before[i]), dialect_.decimal) * 1.5;
      }
    }
    if (!cut) return false;
    warnings_.push_back("line " + std::to_string(line_no) +
                        ", the last, has no line end and is cut short ('" + shorten(trim(text)) +
                        "'); it was left out (was the file still being written?)");
    finished_ = true;
    return true;
  }

  // Whole numbers that vary over more than a couple of codes; a stretch of zeros (a quiet
  // lead-in) or 0/1 levels say nothing about the scaling.
  bool codes_like(std::size_t k) const {
    const std::size_t d = data_index_.size();
    double lo = 0, hi = 0;
    for (std::size_t r = 0; r < look_lines_.size(); ++r) {
      const double v = look_values_[r * d + k];
      if (r == 0 || v < lo) lo = v;
      if (r == 0 || v > hi) hi = v;
    }
    return hi - lo >= 3;
  }

  // Consecutive whole numbers stepping by one: a sample index, not a measured channel.
  bool counts_up_by_one(std::size_t k) const {
    const std::size_t d = data_index_.size();
    const std::size_t n = look_lines_.size();
    if (n < 3) return false;
    for (std::size_t r = 0; r < n; ++r) {
      const double v = look_values_[r * d + k];
      if (v != std::floor(v)) return false;
      if (r > 0 &&
          v - look_values_[(r - 1) * d + k] != static_cast<double>(look_k_[r] - look_k_[r - 1]))
        return false;
    }
    return true;
  }

  // For a column of whole numbers that rise by one from row to row in at least nine steps in
  // ten but not in all (a sample index with a gap): the look-ahead row where it first breaks;
  // else 0.
  std::size_t index_break(std::size_t k) const {
    const std::size_t d = data_index_.size();
    const std::size_t n = look_lines_.size();
    if (n < 3) return 0;
    std::size_t good = 0, first_bad = 0;
    for (std::size_t r = 0; r < n; ++r) {
      const double v = look_values_[r * d + k];
      if (v != std::floor(v)) return 0;
      if (r == 0) continue;
      if (v - look_values_[(r - 1) * d + k] == static_cast<double>(look_k_[r] - look_k_[r - 1])) {
        ++good;
      } else if (first_bad == 0) {
        first_bad = r;
      }
    }
    return first_bad != 0 && 10 * good >= 9 * (n - 1) ? first_bad : 0;
  }

  // A headerless column rising in even steps (nine in ten steps agree with the median to its
  // printed resolution): the time axis of an export without names.
  double rises_evenly(std::size_t k, std::size_t qk) const {
    const std::size_t d = data_index_.size();
    const std::size_t n = look_lines_.size();
    if (n < 3) return 0.0;
    std::vector<double> steps;
    double q_max = 0;
    for (std::size_t r = 1; r < n; ++r) {
      const double step = (look_values_[r * d + k] - look_values_[(r - 1) * d + k]) /
                          static_cast<double>(look_k_[r] - look_k_[r - 1]);
      if (step < 0) return 0.0;
      steps.push_back(step);
      q_max = std::max(q_max, look_q_[r * q_columns_.size() + qk]);
    }
    auto mid = steps.begin() + static_cast<std::ptrdiff_t>(steps.size() / 2);
    std::nth_element(steps.begin(), mid, steps.end());
    const double median = *mid;
    if (!(median > 0)) return 0.0;
    std::size_t near = 0;
    for (double st : steps) near += std::fabs(st - median) <= 0.5 * q_max + 1e-9 * median ? 1 : 0;
    return 10 * near >= 9 * steps.size() ? median : 0.0;
  }

  std::optional<UnitScale> horizontal_unit() const {
    for (const auto& [key, value] : info_.metadata) {
      if (!is_horizontal_unit_key(key)) continue;
      if (auto unit = parse_time_unit(value)) return unit;
    }
    return std::nullopt;
  }
  double horizontal_factor() const {
    const auto u = horizontal_unit();
    return u ? u->factor : 1.0;
  }

  // Index column, headerless time, channels with their units, gains and roles.
  void decide_columns(const Header& h) {
    const std::size_t d = data_index_.size();
    for (std::size_t k = 0; k < d; ++k) {
      const std::size_t col = data_index_[k];
      if (static_cast<int>(col) == time_column_ || !column_unit_[col].empty()) continue;
      const bool named_as_index =
          is_index_name(lower(column_name_[col])) || is_index_name(lower(column_unit_text_[col]));
      if ((k == 0 || named_as_index) && d > 1 && counts_up_by_one(k)) {
        index_column_ = static_cast<int>(col);
        index_k_ = k;
        break;
      }
    }
    // A column named as a sample index ("Index", "Sample", "No.") whose whole numbers rise by
    // one in nine rows in ten but not in all: samples are missing or repeat within the
    // look-ahead. Taken as a channel it would pass the gap silently; it is refused at the row
    // where it breaks, as finish_row refuses a break after the look-ahead.
    for (std::size_t k = 0; index_column_ < 0 && k < d && d > 1; ++k) {
      const std::size_t col = data_index_[k];
      if (static_cast<int>(col) == time_column_ || !column_unit_[col].empty() ||
          column_name_[col].empty())
        continue;
      const std::string& unit_text = column_unit_text_[col];
      if (!is_index_name(lower(column_name_[col])) &&
          (unit_text.empty() || !is_index_name(lower(unit_text))))
        continue;
      if (const std::size_t r = index_break(k); r != 0) {
        const double found = look_values_[r * d + k];
        const double expected =
            look_values_[(r - 1) * d + k] + static_cast<double>(look_k_[r] - look_k_[r - 1]);
        throw InputError(
            path_, InputLocation::at_line(look_lines_[r]),
            "the sample index (column " + std::to_string(col + 1) + " '" + column_name_[col] +
                "') is " + format_g(found, 15) + " where " + format_g(expected, 15) +
                " was expected; expected an index rising by one per row (" +
                (found > expected ? "samples are missing" : "it repeats or steps back") + ")");
      }
    }
    // A clock column is the time when nothing else is ("Uhrzeit", "Heure", unnamed).
    if (time_column_ < 0) {
      for (const std::size_t col : q_columns_) {
        if (clock_seen_[col] && static_cast<int>(col) != index_column_) {
          time_column_ = static_cast<int>(col);
          break;
        }
      }
    }
    // A time axis without a name: headerless files, or a first column called "x".
    if (time_column_ < 0 && !options_.rate_hz) {
      for (std::size_t qk = 0; qk < q_columns_.size(); ++qk) {
        const std::size_t col = q_columns_[qk];
        if (static_cast<int>(col) == index_column_) continue;
        const std::size_t k = static_cast<std::size_t>(
            std::find(data_index_.begin(), data_index_.end(), col) - data_index_.begin());
        const std::size_t others = d - 1 - (index_column_ >= 0 ? 1 : 0);
        const std::string name = lower(column_name_[col]);
        const bool unnamed = !h.found || name == "x";
        // Where the file states an interval, the column must step by it (within 1 %): a
        // rising signal is not a time axis.
        const double step =
            others >= 1 && unnamed && !column_unit_stated_[col] ? rises_evenly(k, qk) : 0.0;
        const StatedTimeBase stated = stated_time_base(info_.metadata, dialect_.decimal);
        const bool agrees =
            !stated.interval_s ||
            std::fabs(step * horizontal_factor() / *stated.interval_s - 1.0) <= 0.01;
        if (step > 0 && agrees) {
          time_column_ = static_cast<int>(col);
          warnings_.push_back("column " + std::to_string(col + 1) +
                              " taken as the time: it has no name and rises in even steps");
        }
        break;
      }
    }
    if (time_column_ >= 0) {
      const auto tc = static_cast<std::size_t>(time_column_);
      if (column_unit_[tc] != "s") {
        // No unit in the header: the preamble's horizontal unit, else seconds.
        if (clock_column_ == time_column_) {
          info_.detail += "clock times (hh:mm:ss)";
        } else if (const auto unit = horizontal_unit()) {
          column_factor_[tc] = unit->factor;
        } else if (h.found) {
          warnings_.push_back("column " + std::to_string(tc + 1) + " '" + column_name_[tc] +
                              "' taken as time in seconds (its header gives no unit)");
        }
        column_unit_[tc] = "s";
      }
      time_k_ = static_cast<std::size_t>(std::find(data_index_.begin(), data_index_.end(), tc) -
                                         data_index_.begin());
      time_qk_ = static_cast<std::size_t>(std::find(q_columns_.begin(), q_columns_.end(), tc) -
                                          q_columns_.begin());
    }

    // Units the preamble states for channels whose header gives none: one for all
    // ("Vertical Units,V") or one per channel ("VUnit,V,A,V,V", or one key per channel).
    std::vector<std::string> stated_units;
    std::size_t unit_keys = 0;
    std::string source_name;
    std::vector<std::string> stated_names;  // "TraceName,CH1,CH2" in a headerless export
    std::vector<std::pair<std::size_t, std::string>> numbered_units;  // "CH2 Units,A"
    for (const auto& [key, value] : info_.metadata) {
      if (const auto n = channel_unit_key(key); n && !value.empty()) {
        numbered_units.emplace_back(*n, std::string(trim(value)));
        continue;
      }
      if (is_vertical_unit_key(key) && !value.empty()) {
        ++unit_keys;
        for (auto& t : split_list(value)) stated_units.push_back(std::move(t));
      }
      if (source_name.empty() && is_source_key(key) && !value.empty()) source_name = value;
      if (stated_names.empty() && is_channel_names_key(key) && !value.empty()) {
        stated_names = split_list(value);
      }
    }
    std::vector<ChannelInfo> channels;
    for (std::size_t k = 0; k < d; ++k) {
      const std::size_t col = data_index_[k];
      if (static_cast<int>(col) == time_column_ || static_cast<int>(col) == index_column_) continue;
      if (clock_seen_[col]) {
        warnings_.push_back("column " + std::to_string(col + 1) + " '" + column_name_[col] +
                            "' holds clock times: not a channel (the time column is " +
                            std::to_string(time_column_ + 1) + ")");
        continue;
      }
      ChannelInfo c;
      c.index = channels.size() + 1;
      c.name = column_name_[col].empty() ? "ch" + std::to_string(c.index) : column_name_[col];
      c.unit = column_unit_[col];
      c.unit_text = column_unit_text_[col];
      channels.push_back(c);
      channel_column_.push_back(col);
      channel_k_.push_back(k);
    }
    if (channels.empty()) {
      throw InputError(path_, InputLocation::at_line(h.found ? h.line : first_data_line_),
                       "only a time or sample-index column; expected at least one channel of "
                       "samples");
    }
    // Channels the header leaves unnamed take the names the preamble gives.
    const auto unnamed = [&](std::size_t c) { return column_name_[channel_column_[c]].empty(); };
    if (channels.size() == 1 && unnamed(0) && !source_name.empty()) channels[0].name = source_name;
    if (stated_names.size() == channels.size()) {
      for (std::size_t c = 0; c < channels.size(); ++c) {
        if (unnamed(c) && !stated_names[c].empty()) channels[c].name = stated_names[c];
      }
    }
    gains_.assign(channels.size(), 1.0);
    for (std::size_t c = 0; c < channels.size(); ++c) {
      const std::size_t col = channel_column_[c];
      gains_[c] = column_factor_[col];
      if (column_unit_stated_[col] || (stated_units.empty() && numbered_units.empty())) continue;
      std::string text;
      if (stated_units.size() == 1)
        text = stated_units[0];
      else if (stated_units.size() >= channels.size())
        text = stated_units[c];
      else if (unit_keys == 1 && !stated_units.empty())
        text = stated_units[0];
      for (const auto& [n, unit] : numbered_units) {
        if (n == c + 1) text = unit;
      }
      if (text.empty()) continue;
      // Integers alone under a stated vertical unit are the digitiser's codes, not volts: a
      // scope that writes them leaves the scaling (codes per division) to its own software.
      if (!fraction_seen_[col] && codes_like(channel_k_[c])) {
        channels[c].unit_text = "counts";
        warnings_.push_back("channel " + std::to_string(c + 1) + " '" + channels[c].name +
                            "' holds whole numbers only: taken as raw digitiser codes (counts), "
                            "not '" +
                            text +
                            "' as the preamble says; give --gain and --unit to "
                            "scale it");
        continue;
      }
      if (const auto u = parse_unit(text)) {
        channels[c].unit = u->si_unit;
        gains_[c] = u->factor;
      } else {
        channels[c].unit_text = text;
      }
    }
    const std::vector<double> user = channel_gains(channels, options_, path_);
    for (std::size_t c = 0; c < channels.size(); ++c) gains_[c] *= user[c];
    std::vector<std::string> notes;
    assign_roles(channels, options_, path_, notes);
    info_.channels = std::move(channels);
    for (auto& n : notes) role_notes_.push_back(n);
  }

  // A sample rate outside kMinSampleRateHz … kMaxSampleRateHz (NaN and infinity included) is
  // refused; `source` says where it came from, `hint` what to look at.
  void check_rate(double rate_hz, InputLocation where, const std::string& source,
                  const std::string& hint) const {
    // A rate that went through an interval and back (1 / (1 / 100e9)) may differ from the
    // bound in its last digit.
    constexpr double kSlack = 1e-12;
    if (rate_hz >= kMinSampleRateHz * (1 - kSlack) && rate_hz <= kMaxSampleRateHz * (1 + kSlack))
      return;
    throw InputError(path_, where,
                     source + ": a sample rate of " + format_g(rate_hz) +
                         " Hz; expected 1 Hz to 100 GHz (" + hint + ")");
  }

  // The key/value a stated time base came from (the first that states it) and its line.
  std::pair<InputLocation, std::string> stated_source(const StatedTimeBase& stated) const {
    for (std::size_t i = 0; i < info_.metadata.size(); ++i) {
      const auto& pair = info_.metadata[i];
      if (pair.first != stated.interval_key) continue;
      if (stated_time_base({pair}, dialect_.decimal).interval_s == stated.interval_s)
        return {InputLocation::at_line(metadata_lines_[i]), pair.second};
    }
    return {};
  }

  // The sample rate: the time column's fit wins; else --rate; else what the file states.
  void settle_time_base(const Header& h) {
    // --rate is refused out of range even where a time column makes it unused: a mistyped
    // option is said, not silently passed over.
    if (options_.rate_hz) {
      check_rate(*options_.rate_hz, {}, "--rate " + format_g(*options_.rate_hz),
                 "the option takes hertz: 10e6 for 10 MS/s");
    }
    const StatedTimeBase stated = stated_time_base(info_.metadata, dialect_.decimal);
    const std::size_t d = data_index_.size();
    const std::size_t nq = q_columns_.size();
    const std::uint64_t resume_index = row_index_;
    if (time_column_ >= 0) {
      // The look-ahead's rows show how the column is printed before any of them is judged.
      for (std::size_t r = 0; r < look_lines_.size(); ++r)
        time_printing_.add(look_values_[r * d + time_k_], look_q_[r * nq + time_qk_]);
      for (std::size_t r = 0; r < look_lines_.size(); ++r) {
        row_index_ = look_k_[r];
        track_time(look_values_[r * d + time_k_], look_q_[r * nq + time_qk_], look_lines_[r]);
      }
      row_index_ = resume_index;
      if (look_lines_.size() < 2) {
        throw InputError(path_, InputLocation::at_line(first_data_line_),
                         "only one data row; a time column needs two rows to give a sample "
                         "interval");
      }
      dt_s_ = lookahead_interval();
      if (!(dt_s_ > 0)) {
        throw InputError(path_, InputLocation::at_line(first_data_line_),
                         "the time column does not advance; expected rising times");
      }
      check_rate(1.0 / dt_s_, InputLocation::at_line(first_data_line_),
                 "the time column steps by " + format_g(dt_s_) + " s",
                 "is the time column's unit right?");
      check_lookahead_times();
      info_.sample_rate_hz = 1.0 / dt_s_;
      info_.start_time_s = start_time();
      if (options_.rate_hz && std::fabs(*options_.rate_hz * dt_s_ - 1.0) > 1e-3) {
        warnings_.push_back("--rate " + format_g(*options_.rate_hz) +
                            " Hz ignored: the time column gives " +
                            format_g(info_.sample_rate_hz, 8) + " Hz");
      }
      if (stated.interval_s && std::fabs(*stated.interval_s / dt_s_ - 1.0) > 0.01) {
        warnings_.push_back("the file states '" + stated.interval_key + "' " +
                            format_g(*stated.interval_s) + " s, but its time column steps by " +
                            format_g(dt_s_) + " s; the time column is used");
      }
    } else if (options_.rate_hz) {
      info_.sample_rate_hz = *options_.rate_hz;
    } else if (stated.interval_s) {
      info_.sample_rate_hz = 1.0 / *stated.interval_s;
      const auto [where, value] = stated_source(stated);
      check_rate(info_.sample_rate_hz, where,
                 "'" + stated.interval_key + "' states '" + shorten(value) + "', an interval of " +
                     format_g(*stated.interval_s) + " s",
                 "is the value's unit right?");
      if (stated.start_s) info_.start_time_s = *stated.start_s;
      info_.detail += "sample interval from '" + stated.interval_key + "'";
    } else {
      const std::uint64_t lines_read = preamble_lines_ + comment_lines_;
      std::string read = lines_read == 0
                             ? std::string("no preamble lines")
                             : std::to_string(lines_read) + " preamble line(s) (lines " +
                                   std::to_string(preamble_first_) + "–" +
                                   std::to_string(preamble_last_);
      if (!preamble_keys_.empty()) {
        read += ": ";
        for (std::size_t i = 0; i < preamble_keys_.size(); ++i)
          read += (i ? ", '" : "'") + shorten(preamble_keys_[i], 30) + "'";
        if (lines_read > preamble_keys_.size()) read += ", …";
      }
      if (lines_read > 0) read += ")";
      throw InputError(path_, InputLocation::at_line(h.found ? h.line : first_data_line_),
                       "no time column and no sample rate: read " + read +
                           ", none of which states the time base. Expected a time column "
                           "(named time, t, x-axis, … or with a unit of seconds), --rate HZ, or "
                           "a line such as " +
                           accepted_time_base_wordings());
    }
    if (!(info_.sample_rate_hz > 0) || !std::isfinite(info_.sample_rate_hz)) {
      throw InputError(path_, "the sample rate must be a positive number of hertz");
    }
    if (index_column_ >= 0)
      index_origin_ = look_values_[index_k_] - static_cast<double>(look_k_[0]);
    // The look-ahead's channels, scaled, become the first blocks.
    pending_.reserve(look_lines_.size() * channel_k_.size());
    for (std::size_t r = 0; r < look_lines_.size(); ++r) {
      for (std::size_t c = 0; c < channel_k_.size(); ++c)
        pending_.push_back(look_values_[r * d + channel_k_[c]] * gains_[c]);
    }
    rows_ = look_lines_.size();
    last_data_line_ = look_lines_.back();
    look_values_ = {};
    look_q_ = {};
    look_lines_ = {};
    look_k_ = {};
  }

  void describe(const Header& h) {
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
    if (preamble_lines_ > 0) d += ", " + std::to_string(preamble_lines_) + " preamble lines";
    if (comment_lines_ > 0) d += ", " + std::to_string(comment_lines_) + " comment lines";
    d += h.found ? ", header at line " + std::to_string(h.line) : ", no header row";
    if (!h.units.empty()) d += " with a units row";
    d += ", data from line " + std::to_string(first_data_line_);
    const auto margin =
        static_cast<std::size_t>(std::count(is_data_.begin(), is_data_.end(), false));
    if (margin > 0) d += ", " + std::to_string(margin) + " margin column(s) not read as data";
    if (time_column_ >= 0) {
      const auto tc = static_cast<std::size_t>(time_column_);
      d += ", time column " + std::to_string(tc + 1) +
           (column_name_[tc].empty() ? std::string() : " '" + column_name_[tc] + "'");
    }
    if (index_column_ >= 0) {
      const auto ic = static_cast<std::size_t>(index_column_);
      d += ", sample-index column " + std::to_string(ic + 1) +
           (column_name_[ic].empty() ? std::string() : " '" + column_name_[ic] + "'");
    }
    if (!info_.detail.empty()) d += ", " + info_.detail;
    info_.detail = d;
    if (!h.found) {
      std::string names;
      for (std::size_t c = 0; c < info_.channels.size() && c < 4; ++c)
        names += (c ? ", " : "") + info_.channels[c].name;
      if (info_.channels.size() > 4) names += ", …";
      warnings_.push_back("no header row: channels named " + names +
                          (info_.channels[0].unit.empty()
                               ? ", without units (give --unit CH=A / --unit CH=V)"
                               : ""));
    }
  }

  // --- rows ----------------------------------------------------------------------------
  // Parses the next data row into `out`; false at end of input.
  bool parse_next_row(double* out) {
    std::string_view line;
    while (!finished_ && lines_.next(line)) {
      if (is_blank(line) || is_comment(line)) continue;
      if (parse_row(line, lines_.line_number(), out, lines_.unterminated())) return true;
    }
    finished_ = true;
    return false;
  }

  // Parses one data line; false if it was malformed and skipped (--skip-bad-rows) or cut.
  bool parse_row(std::string_view line, std::uint64_t line_no, double* out, bool unterminated) {
    if (unterminated && cut_short(line, line_no)) return false;
    current_text_ = line;
    split_cells(line, dialect_.delimiter, cells_, scratch_);
    if (cells_.size() != columns_) return bad_row(line_no, cell_count_message());
    for (std::size_t c = 0; c < channel_column_.size(); ++c) {
      const std::string_view cell = cells_[channel_column_[c]];
      auto v = parse_cell(cell, dialect_.decimal);
      if (!v && decimal_open_) v = reparse_with_other_mark(cell);
      if (!v || std::fabs(*v) >= kOverflowMarker)
        return bad_cell(line_no, channel_column_[c], cell);
      out[c] = *v * gains_[c];
    }
    double index = 0, time = 0, resolution = 0;
    if (index_column_ >= 0) {
      const std::string_view cell = cells_[static_cast<std::size_t>(index_column_)];
      const auto v = parse_cell(cell, dialect_.decimal);
      if (!v) return bad_cell(line_no, static_cast<std::size_t>(index_column_), cell);
      index = *v;
    }
    if (time_column_ >= 0) {
      const auto tc = static_cast<std::size_t>(time_column_);
      auto v = parse_cell(cells_[tc], dialect_.decimal);
      if (!v && decimal_open_) v = reparse_with_other_mark(cells_[tc]);
      if (!v) return bad_cell(line_no, tc, cells_[tc]);
      time = *v;
      resolution = printed_resolution(cells_[tc], dialect_.decimal);
    }
    finish_row(line_no, index, time, resolution);
    last_row_line_.assign(line);
    return true;
  }

  // What every accepted row goes through, in file order: the index must rise by one, the time
  // must follow its line (index and time as printed, in the column's unit).
  void finish_row(std::uint64_t line_no, double index, double time, double resolution) {
    if (index_column_ >= 0) {
      const double expected = index_origin_ + static_cast<double>(row_index_);
      if (index != expected) {
        throw InputError(
            path_, InputLocation::at_line(line_no),
            "the sample index is " + format_g(index, 15) + " where " + format_g(expected, 15) +
                " was expected; expected an index rising by one per row (" +
                (index > expected ? "samples are missing" : "it repeats or steps back") + ")");
      }
    }
    if (time_column_ >= 0) track_time(time, resolution, line_no);
    end_of_footer(line_no);
    last_data_line_ = line_no;
    ++rows_;
    ++row_index_;
  }

  // --- rows in batches -------------------------------------------------------------------
  // The rows of a run of lines, parsed without touching the reader's state so that two halves
  // of a run can be parsed at once. A line the plain path must judge (quoted or odd cells, a
  // form other than a plain number, a blank or comment line) is marked and left to it.
  struct RowBatch {
    // Only `kind` has an entry per line: a blank or comment line takes a byte, so that a run
    // of a million empty lines costs a megabyte, and an odd line takes no room for values.
    enum Kind : std::uint8_t { row, skip, other };
    std::vector<Kind> kind;              // one per line
    std::vector<std::string_view> text;  // one per row or other line, in order
    // Channels per plain row, as printed (before gains), in order.
    std::vector<double> values;
    // One per plain row, in order, where the capture has the column.
    std::vector<double> index, time, resolution;
    void clear() {
      kind.clear();
      text.clear();
      values.clear();
      index.clear();
      time.clear();
      resolution.clear();
    }
  };

  // What each column of a plain row is for: kSkipColumn, kIndexColumn, kTimeColumn, or the
  // channel number (≥ 0).
  static constexpr int kSkipColumn = -1, kIndexColumn = -2, kTimeColumn = -3;
  std::vector<int> column_roles() const {
    std::vector<int> role(columns_, kSkipColumn);
    for (std::size_t c = 0; c < channel_column_.size(); ++c)
      role[channel_column_[c]] = static_cast<int>(c);
    if (index_column_ >= 0) role[static_cast<std::size_t>(index_column_)] = kIndexColumn;
    if (time_column_ >= 0) role[static_cast<std::size_t>(time_column_)] = kTimeColumn;
    return role;
  }

  // One unquoted row split and converted in a single walk over its bytes, as split_cells and
  // parse_number would: the same cells (trailing blank cells dropped), the same numbers. False
  // for anything else (a quote, another cell count, a cell that is not a plain number), which
  // the row-by-row path then judges.
  bool plain_row(std::string_view line, const std::vector<int>& role, double* values, double& index,
                 double& time, double& resolution) const {
    const char delimiter = dialect_.delimiter, mark = dialect_.decimal;
    const char* p = line.data();
    const char* const end = p + line.size();
    std::size_t col = 0, cells = 0;
    for (;;) {
      // The common cell, a plain fixed-point number, is read in the walk that finds its end
      // (detail::parse_fixed_point: the value parse_number would give); any other cell is
      // found and parsed as below.
      if (col < columns_ && role[col] != kSkipColumn) {
        const char* t = p;
        double v = 0;
        int decimals = 0;
        if (detail::parse_fixed_point(t, end, delimiter, mark, v, decimals)) {
          const int r = role[col];
          if (r >= 0) {
            if (!(std::fabs(v) < kOverflowMarker)) return false;
            values[r] = v;
          } else if (r == kIndexColumn) {
            index = v;
          } else {
            time = v;
            resolution = power_of_ten(-decimals);
          }
          cells = ++col;
          if (t == end) break;
          p = t + 1;
          continue;
        }
      }
      const char* q = p;
      while (q < end && *q != delimiter) {
        if (*q == '"') return false;
        ++q;
      }
      const std::string_view cell(p, static_cast<std::size_t>(q - p));
      if (col < columns_) {
        const int r = role[col];
        if (r != kSkipColumn) {
          const auto v = detail::parse_number_inline(cell, mark);
          if (!v) return false;
          if (r >= 0) {
            if (!(std::fabs(*v) < kOverflowMarker)) return false;
            values[r] = *v;
          } else if (r == kIndexColumn) {
            index = *v;
          } else {
            time = *v;
            resolution = printed_resolution(cell, mark);
          }
        }
      }
      ++col;
      if (!trim(cell).empty()) cells = col;
      if (q == end) break;
      p = q + 1;
    }
    return cells == columns_;
  }

  void parse_lines(std::string_view run, RowBatch& out) const {
    out.clear();
    std::vector<std::string_view> cells;
    std::string scratch;
    const std::size_t nch = channel_column_.size();
    const char mark = dialect_.decimal;
    const std::vector<int> role = column_roles();
    // Runs of blanks as the delimiter need split_cells' own rule.
    const bool walk = dialect_.delimiter != ' ';
    while (!run.empty()) {
      // Every line of a run ends in LF. A plain loop: a library search per short line costs
      // more than the bytes it looks at.
      std::size_t nl = 0;
      while (run[nl] != '\n') ++nl;
      std::string_view line = run.substr(0, nl);
      run.remove_prefix(nl + 1);
      while (!line.empty() && line.back() == '\r') line.remove_suffix(1);
      const std::string_view body = trim(line);
      if (body.empty() || body.front() == '#') {  // is_blank, is_comment
        out.kind.push_back(RowBatch::skip);
        continue;
      }
      out.text.push_back(line);
      const std::size_t at = out.values.size();
      out.values.resize(at + nch);
      double index = 0, time = 0, resolution = 0;
      bool plain = false;
      if (walk) {
        plain = plain_row(line, role, out.values.data() + at, index, time, resolution);
      } else {
        split_cells(line, dialect_.delimiter, cells, scratch);
        plain = cells.size() == columns_;
        for (std::size_t c = 0; plain && c < nch; ++c) {
          const auto v = parse_number(cells[channel_column_[c]], mark);
          plain = v && std::fabs(*v) < kOverflowMarker;
          if (plain) out.values[at + c] = *v;
        }
        if (plain && index_column_ >= 0) {
          const auto v = parse_number(cells[static_cast<std::size_t>(index_column_)], mark);
          plain = v.has_value();
          if (plain) index = *v;
        }
        if (plain && time_column_ >= 0) {
          const std::string_view cell = cells[static_cast<std::size_t>(time_column_)];
          const auto v = parse_number(cell, mark);
          plain = v.has_value();
          if (plain) {
            time = *v;
            resolution = printed_resolution(cell, mark);
          }
        }
      }
      if (!plain) {
        out.kind.push_back(RowBatch::other);
        out.values.resize(at);
        continue;
      }
      out.kind.push_back(RowBatch::row);
      // The index and time columns take room only when the capture has them.
      if (index_column_ >= 0) out.index.push_back(index);
      if (time_column_ >= 0) {
        out.time.push_back(time);
        out.resolution.push_back(resolution);
      }
    }
  }

  // A run of whole lines copied out of the line reader (whose buffer moves on), and its rows
  // as parsed by two threads.
  struct Run {
    std::string bytes;
    std::uint64_t first_line = 0;
    RowBatch halves[2];
    std::future<void> parsed[2];
    bool loaded = false;
  };

  // Takes the next run of lines into `run` and starts parsing its two halves on two threads;
  // false when the line reader has no run to give (next_lines()).
  bool start_run(Run& run) {
    std::string_view text;
    if (!lines_.next_lines(kBatchBytes, text, run.first_line)) return false;
    run.bytes.assign(text);
    run.loaded = true;
    const std::string_view all(run.bytes);
    std::string_view head = all, tail;
    if (all.size() >= kParallelBytes) {
      const std::size_t cut = all.find('\n', all.size() / 2);
      if (cut != std::string_view::npos && cut + 1 < all.size()) {
        head = all.substr(0, cut + 1);
        tail = all.substr(cut + 1);
      }
    }
    run.halves[1].clear();
    run.parsed[0] =
        std::async(std::launch::async, [this, head, &run] { parse_lines(head, run.halves[0]); });
    if (!tail.empty()) {
      run.parsed[1] =
          std::async(std::launch::async, [this, tail, &run] { parse_lines(tail, run.halves[1]); });
    }
    return true;
  }

  // Reads the next run of lines as a batch into pending_. Runs are parsed ahead: while this
  // thread accepts the rows of one run in file order exactly as the row-by-row path would
  // (finish_row, or parse_row itself for a line that is not a plain row), two threads parse
  // the next. False when the plain path must go on: the decimal mark still open, or no run of
  // whole lines (next_lines()); then no run is held.
  bool parse_batch() {
    Run& now = runs_[run_at_];
    if (!now.loaded) {
      if (decimal_open_ || footer_active_ || !start_run(now)) return false;
    }
    for (auto& f : now.parsed)
      if (f.valid()) f.get();
    run_at_ ^= 1;
    // The next run is parsed while this one is accepted.
    if (!decimal_open_ && !footer_active_) start_run(runs_[run_at_]);
    now.loaded = false;
    const RowBatch(&batch_)[2] = now.halves;
    const std::uint64_t first_line = now.first_line;
    const std::size_t nch = channel_column_.size();
    // Room for the plain rows of the run at once (they hold a value per channel already, so
    // this is bounded by what the parsing threads held); a line left to the plain path gets
    // its room when it comes. Trimmed to the rows accepted at the end.
    std::size_t used = pending_.size();
    pending_.resize(used + batch_[0].values.size() + batch_[1].values.size());
    std::uint64_t line_no = first_line;
    std::string_view last_row;
    for (const RowBatch& b : batch_) {
      std::size_t text_at = 0;  // the next line's text in b.text (rows and other lines)
      std::size_t row_at = 0;   // the next plain row's index, time and resolution
      for (std::size_t r = 0; r < b.kind.size(); ++r, ++line_no) {
        if (b.kind[r] == RowBatch::skip) continue;
        const std::string_view text = b.text[text_at++];
        if (b.kind[r] == RowBatch::other) {
          // The plain path judges it (and may throw, skip it or start a footer).
          if (pending_.size() < used + nch) pending_.resize(used + nch);
          if (parse_row(text, line_no, pending_.data() + used, false)) {
            last_row = text;
            used += nch;
          }
          continue;
        }
        finish_row(line_no, index_column_ >= 0 ? b.index[row_at] : 0.0,
                   time_column_ >= 0 ? b.time[row_at] : 0.0,
                   time_column_ >= 0 ? b.resolution[row_at] : 0.0);
        if (pending_.size() < used + nch) pending_.resize(used + nch);
        const double* v = b.values.data() + row_at * nch;
        ++row_at;
        double* out = pending_.data() + used;
        for (std::size_t c = 0; c < nch; ++c) out[c] = v[c] * gains_[c];
        used += nch;
        last_row = text;
      }
    }
    pending_.resize(used);
    if (!last_row.empty()) last_row_line_.assign(last_row);
    return true;
  }

  // Lines of text after the data ("End of data", "Mean,0.001"): a footer, left out and said,
  // as long as no row of data follows; a row of data after one makes it an error at its line.
  bool looks_like_footer(std::string_view text) const {
    std::size_t i = 0;
    while (i < text.size() && std::strchr(" \t,;\"", text[i]) != nullptr) ++i;
    if (i >= text.size() || !std::isalpha(static_cast<unsigned char>(text[i]))) return false;
    split_cells(text, dialect_.delimiter, footer_cells_, footer_scratch_);
    return footer_cells_.empty() || !is_nan_or_inf_text(footer_cells_.front());
  }

  void end_of_footer(std::uint64_t line_no) const {
    if (!footer_active_) return;
    throw InputError(path_, InputLocation::at_line(footer_line_),
                     footer_what_ +
                         " (a line of text between rows of data, which continue at "
                         "line " +
                         std::to_string(line_no) + ")");
  }

  bool bad_row(std::uint64_t line_no, const std::string& what) {
    if (footer_active_ || (!options_.skip_bad_rows && looks_like_footer(current_text_))) {
      if (!footer_active_) {
        footer_active_ = true;
        footer_line_ = line_no;
        footer_what_ = what;
        footer_text_ = shorten(trim(current_text_));
      }
      ++footer_lines_;
      if (auto kv = split_key_value(current_text_))
        keep_metadata(std::move(kv->first), std::move(kv->second), line_no);
      return false;
    }
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
  // it stays within half the printed resolution (plus the fit's own small error). The printed
  // resolution is the one the column's printing gives the row (TimePrinting), so a row whose
  // trailing zeros were dropped is held to the digits the export really kept.
  // `t_printed` and `q_printed` are as written, in the column's unit.
  void track_time(double t_printed, double q_printed, std::uint64_t line_no) {
    time_printing_.add(t_printed, q_printed);
    const double factor = column_factor_[static_cast<std::size_t>(time_column_)];
    const double t = t_printed * factor;
    const double q = time_printing_.resolution(t_printed, q_printed) * factor;
    const auto k = static_cast<double>(row_index_);
    if (fit_.count() == 0) {
      t0_ = t;
      // As printed: a first row of "0" is kept as 0 against a fit's rounding noise, however
      // fine the column's printing (start_time).
      first_q_ = q_printed * factor;
      prev_t_ = t;
      prev_q_ = q;
    }
    const double rel = t - t0_;
    if (t < prev_t_ - std::max(q, prev_q_)) {
      const std::string expected = fit_.count() >= 2
                                       ? "expected about " + format_g(t0_ + predict(k), 10) + " s"
                                       : "expected a time after " + format_g(prev_t_, 10) + " s";
      throw InputError(path_, InputLocation::at_line(line_no),
                       "time goes backwards: " + format_g(t, 10) + " s after " +
                           format_g(prev_t_, 10) + " s (" + expected + "); expected rising times");
    }
    if (fit_.count() > 0) {
      // Printed coarser than a step, the time repeats and then moves on by one printed digit;
      // the value crossed the midpoint between the two printed values halfway between the two
      // rows (round to nearest), so a line through those crossings is exact where a line
      // through the staircase itself is not.
      if (t == prev_t_) {
        ++repeats_;
      } else {
        steps_fit_.add(0.5 * (prev_k_ + k), 0.5 * (prev_t_ - t0_ + rel));
      }
    }
    if (dt_s_ > 0) {
      check_time(k, rel, q, line_no, predict(k), prev_t_ - t0_, prev_q_, prev_k_, true, true,
                 coarse() ? steps_fit_.count() : fit_.count());
    } else {
      lookahead_times_.push_back({k, rel, q, line_no});
    }
    fit_.add(k, rel);
    prev_t_ = t;
    prev_q_ = q;
    prev_k_ = k;
  }

  bool coarse() const { return repeats_ > 0 && steps_fit_.count() >= 2; }

  // A time column printed so coarsely that only a few printed values change gives the interval
  // to about ±1 row at each end of the span of its crossings (a value that falls exactly on a
  // half rounds one way or the other). Digitisers run at preferred intervals (1, 2, 2.5, 4, 5
  // and 8 times a power of ten, common practice), so where one lies within that uncertainty it
  // is the interval; otherwise the fit stands.
  void snap_coarse_interval() {
    if (!coarse()) return;
    const double span = steps_fit_.span();
    const auto fitted = static_cast<double>(steps_fit_.fitted_slope());
    if (!(span > 0) || !(fitted > 0)) return;
    const double tolerance = 1.5 / span;
    double best = 0, best_rel = 1e300;
    const int decade = static_cast<int>(std::floor(std::log10(fitted)));
    for (int e = decade - 1; e <= decade + 1; ++e) {
      for (const double m : {1.0, 2.0, 2.5, 4.0, 5.0, 8.0}) {
        const double candidate = m * std::pow(10.0, e);
        const double rel = std::fabs(candidate / fitted - 1.0);
        if (rel < best_rel) {
          best_rel = rel;
          best = candidate;
        }
      }
    }
    if (best_rel <= tolerance && best_rel > 0) {
      steps_fit_.fix_slope(best);
      snapped_note_ = "interval " + format_g(best) + " s: the preferred value within ±" +
                      format_g(tolerance * 100, 2) + " % of the coarse time column's fit (" +
                      format_g(fitted, 8) + " s)";
    } else {
      steps_fit_.fix_slope(std::nullopt);
      snapped_note_.clear();
    }
  }
  const TimeFit& best_fit() const { return coarse() ? steps_fit_ : fit_; }
  double predict(double k) const { return static_cast<double>(best_fit().predict(k)); }

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
    const double n = std::max<double>(2.0, static_cast<double>(fit_n));
    if (std::fabs(residual) > 0.5 * dt_s_) {
      // Where printing resolves a step, a row nearer another sample's slot than its own is a
      // gap or a repeat: off by more than half a step, and by more than printing and the
      // fitted line's error (below) explain. A row printed to one step's resolution (a 10 µs
      // time column to five decimals) has no half step to spare beyond its printing: a single
      // missing sample puts it a whole step off. Where printing does not resolve a step, the
      // row must be off by half a step beyond what printing explains.
      const double limit = resolves_step(q) ? std::max(0.5 * dt_s_, printed + fit_error(q, n))
                                            : printed + 0.5 * dt_s_;
      if (std::fabs(residual) > limit) time_error(residual, rel, printed, line_no);
    }
    // Jitter: off the grid by more than printing explains, plus the fitted line's own error,
    // plus 2 % of a step for the rounding of the recorder's own time arithmetic (common
    // practice for exported time stamps). A line through n rows whose times carry uniform
    // rounding of width q (standard deviation q/√12) predicts the next row with a standard
    // deviation of (q/√12)·2/√n (least-squares prediction variance σ²(1/n + (x − x̄)²/Sxx) at the
    // end of the range); four of those are allowed.
    // The fit's error only lowers `beyond`: a row within printing plus 2 % of a step needs no
    // square root (every row of a clean capture).
    if (std::fabs(residual) - printed <= 0.02 * dt_s_) return;
    const double beyond = std::fabs(residual) - printed - fit_error(q, n);
    if (beyond > 0.02 * dt_s_) {
      if (jitter_rows_ == 0) first_jitter_line_ = line_no;
      ++jitter_rows_;
      max_jitter_s_ = std::max(max_jitter_s_, beyond);
    }
  }

  // Four standard deviations of a least-squares line's prediction of the next row, the line
  // being through n rows whose times carry rounding of width q (see check_time).
  static double fit_error(double q, double n) {
    return 4.0 * (q / std::sqrt(12.0)) * 2.0 / std::sqrt(n);
  }

  // True when times printed to resolution q (in seconds) place a row on its sample's slot:
  // rounding moves it by at most half a step.
  bool resolves_step(double q) const { return q <= dt_s_ * (1 + 1e-9); }

  // `off` includes up to half the printed resolution of rounding, which is not a sample.
  [[noreturn]] void time_error(double off, double rel, double printed,
                               std::uint64_t line_no) const {
    // Where the printing resolves a step, the nearest slot is the count; where it does not,
    // only what exceeds the rounding allowance is certain ("at least").
    const bool coarse = !resolves_step(2 * printed);
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
  double lookahead_interval() {
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
    snap_coarse_interval();
    return static_cast<double>(best_fit().slope());
  }

  // The look-ahead rows: first row to row, so a gap is named at its own line; then against a
  // fitted line. A line through a few rows is too uncertain when printing is coarse, so the
  // first kSettleRows rows are held against the line through all of them, and every later row
  // against the line through the rows before it (as in streaming), which a gap cannot bias.
  void check_lookahead_times() {
    constexpr std::size_t kSettleRows = 512;
    const auto& rows = lookahead_times_;
    if (coarse()) {
      // The crossings' line is already immune to a few missing rows: every row against it.
      for (std::size_t i = 1; i < rows.size(); ++i) {
        check_time(rows[i].k, rows[i].rel, rows[i].q, rows[i].line, predict(rows[i].k),
                   rows[i - 1].rel, rows[i - 1].q, rows[i - 1].k, true, true, steps_fit_.count());
      }
      lookahead_times_.clear();
      lookahead_times_.shrink_to_fit();
      return;
    }
    for (std::size_t i = 1; i < rows.size(); ++i) {
      check_time(rows[i].k, rows[i].rel, rows[i].q, rows[i].line, 0.0, rows[i - 1].rel,
                 rows[i - 1].q, rows[i - 1].k, true, false);
    }
    TimeFit settle;
    for (std::size_t i = 0; i < std::min(rows.size(), kSettleRows); ++i)
      settle.add(rows[i].k, rows[i].rel);
    TimeFit running;
    for (std::size_t i = 0; i < rows.size(); ++i) {
      // A row whose printing resolves a step is held to the line through the rows before it
      // from the third row on, as every row after the look-ahead is (check_time allows for
      // the error of a line through few rows): a gap among the first rows would bias a line
      // through all of them by half its size and pass.
      // The first two such rows are left to check_head_times: a line through all rows,
      // moved by a gap among them, would misplace it.
      const bool own_line = i >= 2 && resolves_step(rows[i].q);
      const bool head = i < 2 && resolves_step(rows[i].q);
      const TimeFit& against = i < kSettleRows && !own_line ? settle : running;
      if (i > 0 && !head) {
        check_time(rows[i].k, rows[i].rel, rows[i].q, rows[i].line,
                   static_cast<double>(against.predict(rows[i].k)), 0.0, 0.0, 0.0, false, true,
                   against.count());
      }
      running.add(rows[i].k, rows[i].rel);
    }
    check_head_times();
    lookahead_times_.clear();
    lookahead_times_.shrink_to_fit();
  }

  // The first rows have too few rows before them for a line through those to place a gap
  // among them: printed to one step's resolution, a gap within the first ~20 rows moves a line
  // through the rows before the next one by less than that line's own uncertainty. They are
  // held to the line through the rows after them instead, the mirror image of the streaming
  // test. The rows before a gap (or a repeat) all lie a whole step off that line: the last of
  // them names the place, the row after it is reported as the row after the gap.
  void check_head_times() {
    // 32 rows: from there on the line through the rows before a row places a gap of one step
    // printed to one step's resolution (check_time: ½ + 2.31/√n < 1 for n ≥ 22). A short
    // capture holds its first third to the rest.
    constexpr std::size_t kHeadRows = 32, kAfterRows = 512, kMinAfterRows = 8;
    const auto& rows = lookahead_times_;
    const std::size_t head = std::min(kHeadRows, rows.size() / 3);
    if (rows.size() < head + kMinAfterRows || head == 0) return;
    TimeFit after;
    for (std::size_t i = head; i < std::min(rows.size(), head + kAfterRows); ++i)
      after.add(rows[i].k, rows[i].rel);
    // The residual of row i from that line where it is off the line (0 where not).
    const auto off = [&](std::size_t i) {
      const PendingTime& r = rows[i];
      if (!resolves_step(r.q)) return 0.0;
      const double residual = r.rel - static_cast<double>(after.predict(r.k));
      if (std::fabs(residual) <= 0.5 * dt_s_) return 0.0;
      // As in check_time: four standard deviations of the line's prediction at this row
      // (σ²(1/n + (k − k̄)²/Sxx), rounding of width q having standard deviation q/√12).
      const double line_error = 4.0 * (r.q / std::sqrt(12.0)) * after.spread(r.k);
      return std::fabs(residual) > std::max(0.5 * dt_s_, 0.5 * r.q + line_error) ? residual : 0.0;
    };
    for (std::size_t i = head; i-- > 0;) {
      const double residual = off(i);
      if (residual == 0.0) continue;
      if (i > 0 && off(i - 1) == 0.0) {
        // A row off the line between rows on it: the row itself (a repeated time).
        time_error(residual, rows[i].rel, 0.5 * rows[i].q, rows[i].line);
      }
      const PendingTime& next = rows[i + 1];
      time_error(-residual, next.rel, 0.5 * next.q, next.line);
    }
  }

  // The first row's time as printed, unless the fitted line says it was rounded: within half
  // its printed resolution the printed value is the better one (and 0 stays 0).
  double start_time() const {
    const double intercept = static_cast<double>(best_fit().intercept());
    return std::fabs(intercept) <= 0.5 * first_q_ ? t0_ : t0_ + intercept;
  }

  void finish() {
    if (done_) return;
    done_ = true;
    info_.frames = rows_;
    if (time_column_ >= 0 && fit_.count() >= 2) {
      steps_fit_.fix_slope(std::nullopt);
      snap_coarse_interval();
      if (!snapped_note_.empty()) info_.detail += ", " + snapped_note_;
      dt_s_ = static_cast<double>(best_fit().slope());
      info_.sample_rate_hz = 1.0 / dt_s_;
      check_rate(info_.sample_rate_hz, InputLocation::at_line(last_data_line_),
                 "the time column's line through all " + std::to_string(rows_) + " rows steps by " +
                     format_g(dt_s_) + " s",
                 "expected times rising in even steps");
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
    if (footer_active_) {
      warnings_.push_back(std::to_string(footer_lines_) +
                          " line(s) of text after the data, from line " +
                          std::to_string(footer_line_) + " ('" + footer_text_ +
                          "'), are not samples: left out (their key/values are in the metadata)");
    }
    if (metadata_dropped_ > 0) {
      warnings_.push_back(std::to_string(metadata_dropped_) +
                          " preamble key/value(s) not kept in the metadata (more than " +
                          std::to_string(kMaxMetadata) + " or 4 MiB); " +
                          (fact_bytes_ >= kMaxFactBytes
                               ? "the time base and units were read from the first 1 MiB of "
                                 "lines stating them"
                               : "the time base and units were still read from every line"));
    }
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
  // preamble
  std::uint64_t preamble_lines_ = 0, comment_lines_ = 0, preamble_first_ = 0, preamble_last_ = 0;
  std::vector<std::string> preamble_keys_;
  std::size_t metadata_bytes_ = 0;
  std::size_t fact_bytes_ = 0;  // kept past the metadata bounds (kMaxFactBytes)
  std::uint64_t metadata_dropped_ = 0;
  std::vector<std::uint64_t> metadata_lines_;  // the line of each of info_.metadata
  // layout
  Dialect dialect_;
  std::size_t columns_ = 0;
  std::size_t last_matched_ = 0;  // rows confirm() found sharing the candidate's shape
  bool decimal_open_ = false;     // the rows so far read with either decimal mark
  bool mark_seen_ = false;        // a cell so far held the chosen decimal mark
  std::vector<bool> is_data_;
  std::vector<std::size_t> data_index_;  // file columns holding numbers, in order
  std::vector<std::string> column_name_, column_unit_, column_unit_text_;
  std::vector<double> column_factor_;
  std::vector<bool> column_unit_stated_;
  std::vector<bool> fraction_seen_;
  std::vector<bool> clock_seen_;  // printed as hh:mm:ss: a clock, never a measured channel
  std::uint64_t first_data_line_ = 0;
  std::uint64_t last_data_line_ = 0;  // the last row accepted so far
  int time_column_ = -1;
  int index_column_ = -1;
  int clock_column_ = -1;  // a column printed as a clock, hh:mm:ss
  std::size_t time_k_ = 0, time_qk_ = 0, index_k_ = 0;
  double index_origin_ = 0;
  std::vector<std::size_t> channel_column_;
  std::vector<std::size_t> channel_k_;
  std::vector<double> gains_;
  // look-ahead, as written: values of the data columns row by row, printed resolutions of the
  // columns that may be the time, line numbers and time-base indices
  std::vector<std::size_t> q_columns_;
  std::vector<double> look_values_;
  std::vector<double> look_q_;
  std::vector<std::uint64_t> look_lines_;
  std::vector<std::uint64_t> look_k_;
  std::string last_row_line_;
  std::string_view current_text_;  // the line being parsed, for the footer rule
  bool footer_active_ = false;
  std::uint64_t footer_line_ = 0, footer_lines_ = 0;
  std::string footer_what_, footer_text_;
  mutable std::vector<std::string_view> footer_cells_;
  mutable std::string footer_scratch_;
  // rows
  std::vector<std::string_view> cells_;
  std::string scratch_;
  std::vector<double> pending_;
  std::size_t pending_at_ = 0;
  // Rows are parsed a run of about kBatchBytes at a time, in two halves on two threads when
  // the run is at least kParallelBytes (below that a thread costs more than it saves).
  static constexpr std::size_t kBatchBytes = std::size_t{256} << 10;
  static constexpr std::size_t kParallelBytes = std::size_t{64} << 10;
  Run runs_[2];
  std::size_t run_at_ = 0;
  std::uint64_t rows_ = 0;       // rows handed out
  std::uint64_t row_index_ = 0;  // rows including skipped ones: the time base index
  std::uint64_t skipped_ = 0;
  std::uint64_t first_skipped_line_ = 0;
  std::string first_skipped_what_;
  bool finished_ = false;
  bool done_ = false;
  // time column state
  TimeFit fit_;
  TimeFit steps_fit_;
  std::string snapped_note_;
  std::uint64_t repeats_ = 0;
  double t0_ = 0, first_q_ = 0, prev_t_ = 0, prev_q_ = 0, prev_k_ = 0, dt_s_ = 0;
  TimePrinting time_printing_;
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
