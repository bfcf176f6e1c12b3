// The limits file of the lot command, fed strings (ninja's ParseTest habit): a good file read
// back whole, and every fault a hand-written file can have, each checked for its line and for
// a word that says what was expected. The files are those of an invented QA bench at a maker
// of supplies for cold-cathode tubes.

#include "lopside/limits_file.hpp"

#include <gtest/gtest.h>
#include <unistd.h>

#include <cstdint>
#include <filesystem>
#include <fstream>
#include <optional>
#include <string>
#include <vector>

#include "lopside/error.hpp"

namespace lopside {
namespace {

namespace fs = std::filesystem;

// Names from measure's JSON (src/report/measure_report.cpp): more than the 12 an "unknown
// figure" message lists, so the shortening shows.
const std::vector<std::string> kFigures = {"dc_offset_a",       "rms_a",
                                           "ac_rms_a",          "dc_to_rms",
                                           "dc_to_ac_rms",      "charge_asymmetry",
                                           "positive_share",    "peak_positive_a",
                                           "peak_negative_a",   "crest_factor",
                                           "form_factor",       "thd",
                                           "thd_with_dc",       "even_harmonic_share",
                                           "dc_to_fundamental", "voltage.rms_v",
                                           "voltage.power_w"};

LimitsFile parse(const std::string& text) {
  return parse_limits(text, "bench7.toml", kFigures);
}

// Runs the parser and returns the InputError it must raise.
InputError error_of(const std::string& text) {
  try {
    parse(text);
  } catch (const InputError& e) {
    return e;
  }
  ADD_FAILURE() << "no InputError for:\n" << text;
  return InputError("", "none");
}

// The error's line (0 if none) and whether its message holds `word`, checked in one go so a
// failure prints the whole message.
void expect_error(const std::string& text, std::uint64_t line, const std::string& word) {
  const InputError e = error_of(text);
  EXPECT_EQ(e.path(), "bench7.toml");
  EXPECT_EQ(e.where().line.value_or(0), line) << e.what();
  EXPECT_NE(e.message().find(word), std::string::npos) << "'" << word << "' not in: " << e.what();
}

/// A directory of its own under the system temp dir, removed with everything in it.
class TempDir {
 public:
  TempDir() {
    static int counter = 0;
    path_ = fs::temp_directory_path() / ("lopside_limits_file_test_" + std::to_string(::getpid()) +
                                         "_" + std::to_string(counter++));
    fs::create_directories(path_);
  }
  ~TempDir() {
    std::error_code ignored;
    fs::remove_all(path_, ignored);
  }
  fs::path write(const std::string& name, const std::string& text) const {
    const fs::path p = path_ / name;
    std::ofstream(p, std::ios::binary) << text;
    return p;
  }
  const fs::path& path() const { return path_; }

 private:
  fs::path path_;
};

// The limits of the 32 kHz inverter line on bench 7, in an order that is not alphabetical.
const char* const kGoodFile = R"(# Bench 7, incoming inspection of CCFL inverters (lot release)
[lot]
product = "CCFL inverter 32 kHz, 6 mA"
decision = "guarded"
unit_id = "pattern"
unit_id_pattern = 'inv-(\d{5})'

[limits.thd]
max = 0.05

[limits.dc_to_rms]
min = -0.01
max = 0.01

[limits.rms_a]
min = 5.4e-3   # 6 mA -10 %
max = 6.6e-3   # 6 mA +10 %

[limits.crest_factor]
min = 1.3
max = 1.6
)";

TEST(LimitsFile, GoodFileReadsBackInFileOrder) {
  const LimitsFile f = parse(kGoodFile);
  EXPECT_EQ(f.lot.product, "CCFL inverter 32 kHz, 6 mA");
  EXPECT_EQ(f.lot.decision, DecisionRule::guarded);
  EXPECT_EQ(f.lot.unit_id, UnitIdSource::file_name_pattern);
  EXPECT_EQ(f.lot.unit_id_pattern, "inv-(\\d{5})");
  EXPECT_EQ(f.lot.unit_id_key, "");
  ASSERT_EQ(f.limits.size(), 4u);
  EXPECT_EQ(f.limits[0].first, "thd");
  EXPECT_EQ(f.limits[1].first, "dc_to_rms");
  EXPECT_EQ(f.limits[2].first, "rms_a");
  EXPECT_EQ(f.limits[3].first, "crest_factor");
  // The values are the doubles the decimal texts round to: compared exactly.
  EXPECT_FALSE(f.limits[0].second.min);
  EXPECT_EQ(f.limits[0].second.max, 0.05);
  EXPECT_EQ(f.limits[1].second.min, -0.01);
  EXPECT_EQ(f.limits[1].second.max, 0.01);
  EXPECT_EQ(f.limits[2].second.min, 5.4e-3);
  EXPECT_EQ(f.limits[2].second.max, 6.6e-3);
  EXPECT_EQ(f.limits[3].second.min, 1.3);
  EXPECT_EQ(f.limits[3].second.max, 1.6);
}

TEST(LimitsFile, DefaultsWithoutLotTable) {
  const LimitsFile f = parse("[limits.dc_offset_a]\nmin = -2e-5\nmax = 2e-5\n");
  EXPECT_EQ(f.lot.decision, DecisionRule::simple);
  EXPECT_EQ(f.lot.unit_id, UnitIdSource::file_stem);
  EXPECT_EQ(f.lot.product, "");
  EXPECT_EQ(f.lot.unit_id_pattern, "");
  ASSERT_EQ(f.limits.size(), 1u);
  EXPECT_EQ(f.limits[0].second.min, -2e-5);
}

TEST(LimitsFile, ExplicitDefaultsAndKeySource) {
  const LimitsFile f = parse(
      "[lot]\ndecision = \"simple\"\nunit_id = \"key\"\nunit_id_key = \"Serial\"\n"
      "[limits.thd]\nmax = 0.08\n");
  EXPECT_EQ(f.lot.decision, DecisionRule::simple);
  EXPECT_EQ(f.lot.unit_id, UnitIdSource::capture_key);
  EXPECT_EQ(f.lot.unit_id_key, "Serial");
  EXPECT_EQ(parse("[lot]\nunit_id = \"stem\"\n[limits.thd]\nmax = 1\n").lot.unit_id,
            UnitIdSource::file_stem);
}

TEST(LimitsFile, IntegersAreNumbers) {
  const LimitsFile f =
      parse("[limits.positive_share]\nmin = 0\nmax = 1\n[limits.dc_offset_a]\nmin = -1\nmax = 0\n");
  ASSERT_EQ(f.limits.size(), 2u);
  EXPECT_EQ(f.limits[0].second.min, 0.0);
  EXPECT_EQ(f.limits[0].second.max, 1.0);
  EXPECT_EQ(f.limits[1].second.min, -1.0);
  EXPECT_EQ(f.limits[1].second.max, 0.0);
}

// Written in Notepad on the bench PC: a byte order mark and CRLF line ends.
TEST(LimitsFile, ByteOrderMarkAndCrlf) {
  const LimitsFile f =
      parse("\xEF\xBB\xBF[lot]\r\ndecision = \"guarded\"\r\n[limits.thd]\r\nmax = 0.05\r\n");
  EXPECT_EQ(f.lot.decision, DecisionRule::guarded);
  ASSERT_EQ(f.limits.size(), 1u);
  EXPECT_EQ(f.limits[0].second.max, 0.05);
  expect_error("\xEF\xBB\xBF[lot]\r\n\r\n[limits.thd]\r\nmx = 0.05\r\n", 4, "'mx'");
}

TEST(LimitsFile, MinEqualToMaxIsAllowed) {
  const LimitsFile f = parse("[limits.thd]\nmin = 0.02\nmax = 0.02\n");
  EXPECT_EQ(f.limits[0].second.min, f.limits[0].second.max);
}

TEST(LimitsFile, InlineAndDottedTablesKeepFileOrder) {
  const LimitsFile f = parse(
      "[limits]\n"
      "thd = { max = 0.05 }\n"
      "crest_factor.min = 1.2\n"
      "crest_factor.max = 1.7\n"
      "charge_asymmetry = { min = -0.02, max = 0.02 }\n");
  ASSERT_EQ(f.limits.size(), 3u);
  EXPECT_EQ(f.limits[0].first, "thd");
  EXPECT_EQ(f.limits[1].first, "crest_factor");
  EXPECT_EQ(f.limits[1].second.min, 1.2);
  EXPECT_EQ(f.limits[1].second.max, 1.7);
  EXPECT_EQ(f.limits[2].first, "charge_asymmetry");
}

TEST(LimitsFile, NestedFigureInEitherSpelling) {
  const LimitsFile f = parse(
      "[limits.voltage.rms_v]\nmin = 600\nmax = 720\n"
      "[limits.\"voltage.power_w\"]\nmax = 4.5\n");
  ASSERT_EQ(f.limits.size(), 2u);
  EXPECT_EQ(f.limits[0].first, "voltage.rms_v");
  EXPECT_EQ(f.limits[0].second.min, 600.0);
  EXPECT_EQ(f.limits[1].first, "voltage.power_w");
  expect_error("[limits.voltage.rms_v]\nmax = 720\n\n[limits.\"voltage.rms_v\"]\nmax = 700\n", 4,
               "second limit");
  expect_error("[limits.voltage.rms_a]\nmax = 1\n", 1, "did you mean 'voltage.rms_v'");
  expect_error("[limits.voltage]\nmax = 720\n", 2, "group of figures");
}

TEST(LimitsFile, SyntaxError) {
  expect_error("[lot]\ndecision = \"simple\"\n[limits.thd]\nmax = \n", 4, "TOML");
  expect_error("[limits.thd]\nmax = 0.05\n[limits.thd]\nmin = 0\n", 3, "TOML");
  expect_error("[limits.thd\nmax = 0.05\n", 1, "TOML");
}

TEST(LimitsFile, UnknownFigureListsTheKnownOnes) {
  const InputError e = error_of("[lot]\n\n[limits.dc_ofset_a]\nmax = 1e-5\n");
  EXPECT_EQ(e.where().line.value_or(0), 3u) << e.what();
  const std::string m = e.message();
  EXPECT_NE(m.find("'dc_ofset_a' is not a figure"), std::string::npos) << m;
  EXPECT_NE(m.find("did you mean 'dc_offset_a'"), std::string::npos) << m;
  EXPECT_NE(m.find("; expected one of: dc_offset_a, rms_a"), std::string::npos) << m;
  EXPECT_NE(m.find("rms_a, ac_rms_a"), std::string::npos) << m;
  EXPECT_NE(m.find("and 5 more"), std::string::npos) << m;
  EXPECT_EQ(m.find("voltage.power_w"), std::string::npos) << m;  // past the twelfth
  // Nothing close: no guess.
  const InputError far = error_of("[limits.lamp_current]\nmax = 1\n");
  EXPECT_EQ(far.message().find("did you mean"), std::string::npos) << far.what();
  // Case is not forgiven, but is guessed.
  expect_error("[limits.THD]\nmax = 0.05\n", 1, "did you mean 'thd'");
  // No figure known at all.
  try {
    parse_limits("[limits.thd]\nmax = 1\n", "x.toml", {});
    ADD_FAILURE() << "no error";
  } catch (const InputError& x) {
    EXPECT_NE(x.message().find("(none)"), std::string::npos) << x.what();
  }
}

TEST(LimitsFile, LimitWithoutBounds) {
  expect_error("[limits.thd]\nmax = 0.05\n\n[limits.crest_factor]\n# to be agreed\n", 4,
               "neither min nor max");
  expect_error("[limits]\nthd = {}\n", 2, "neither min nor max");
}

TEST(LimitsFile, MinAboveMax) {
  expect_error("[limits.dc_to_rms]\nmin = 0.01\nmax = -0.01\n", 3, "above");
  expect_error("[limits.dc_to_rms]\nmax = -0.01\nmin = 0.01\n", 2, "min <= max");
}

TEST(LimitsFile, BoundsMustBeFiniteNumbers) {
  expect_error("[limits.thd]\nmax = \"0.05\"\n", 2, "a string; expected a number");
  expect_error("[limits.thd]\nmin = 0\nmax = true\n", 3, "a boolean");
  expect_error("[limits.thd]\nmax = [0.05]\n", 2, "an array");
  expect_error("[limits.thd]\nmax = 2024-05-01\n", 2, "a date");
  expect_error("[limits.thd]\nmax = nan\n", 2, "finite");
  expect_error("[limits.thd]\nmax = inf\n", 2, "finite");
  expect_error("[limits.dc_offset_a]\nmin = -inf\nmax = 1e-5\n", 2, "finite");
}

TEST(LimitsFile, UnknownKeysAreNotIgnored) {
  expect_error("[limits.thd]\nmin = 0\nmx = 0.05\n", 3, "unknown key 'mx' in [limits.thd]");
  expect_error("[lot]\nproduct = \"CCFL 32 kHz\"\ndecison = \"guarded\"\n[limits.thd]\nmax = 1\n",
               3, "unknown key 'decison' in [lot]");
  expect_error("[limits.thd]\nmax = { value = 0.05 }\n", 2, "a table; expected a number");
  expect_error("[limits]\nthd = 0.05\n", 2, "expected a table [limits.thd]");
}

TEST(LimitsFile, UnknownTopLevel) {
  expect_error("[limits.thd]\nmax = 0.05\n[limts.rms_a]\nmax = 1\n", 3, "unknown table [limts]");
  expect_error("decision = \"guarded\"\n[limits.thd]\nmax = 0.05\n", 1, "unknown key 'decision'");
  expect_error("lot = \"A-1142\"\n[limits.thd]\nmax = 0.05\n", 1, "expected a table [lot]");
  expect_error("limits = 3\n", 1, "expected tables such as");
}

TEST(LimitsFile, LotValues) {
  expect_error("[lot]\ndecision = \"strict\"\n[limits.thd]\nmax = 1\n", 2, "not a decision rule");
  expect_error("[lot]\ndecision = 1\n[limits.thd]\nmax = 1\n", 2, "expected a string");
  expect_error("[lot]\nproduct = 32\n[limits.thd]\nmax = 1\n", 2, "expected a string");
  expect_error("[lot]\nunit_id = \"serial\"\n[limits.thd]\nmax = 1\n", 2, "not a source of unit");
}

TEST(LimitsFile, UnitIdSettings) {
  expect_error("[lot]\n\nunit_id = \"pattern\"\n[limits.thd]\nmax = 1\n", 3,
               "needs unit_id_pattern");
  expect_error(
      "[lot]\nunit_id = \"pattern\"\nunit_id_pattern = \"inv-(\\\\d+\"\n"
      "[limits.thd]\nmax = 1\n",
      3, "not a valid regular expression");
  expect_error("[lot]\nunit_id = \"pattern\"\nunit_id_pattern = \"\"\n[limits.thd]\nmax = 1\n", 3,
               "empty");
  expect_error("[lot]\nunit_id = \"key\"\n[limits.thd]\nmax = 1\n", 2, "needs unit_id_key");
  expect_error("[lot]\nunit_id = \"key\"\nunit_id_key = \"  \"\n[limits.thd]\nmax = 1\n", 3,
               "empty");
  // A setting for another source would be ignored: told, not dropped.
  expect_error("[lot]\nunit_id_pattern = 'inv-(\\d+)'\n[limits.thd]\nmax = 1\n", 2,
               "would be ignored");
  expect_error(
      "[lot]\nunit_id = \"pattern\"\nunit_id_pattern = 'inv-(\\d+)'\n"
      "unit_id_key = \"Serial\"\n[limits.thd]\nmax = 1\n",
      4, "would be ignored");
}

TEST(LimitsFile, NoLimits) {
  expect_error("[lot]\nproduct = \"CCFL inverter 32 kHz\"\n", 0, "no limits");
  expect_error("", 0, "no limits");
  expect_error("[lot]\n[limits]\n", 2, "names no figure");
}

TEST(LimitsFile, MessageNamesFileAndLine) {
  const InputError e = error_of("[limits.thd]\nmin = 0\nmx = 0.05\n");
  EXPECT_EQ(std::string(e.what()).rfind("bench7.toml:3: unknown key", 0), 0u) << e.what();
}

TEST(LimitsFile, ReadsAFile) {
  const TempDir dir;
  const LimitsFile f = read_limits_file(dir.write("lot-2024-117.toml", kGoodFile), kFigures);
  ASSERT_EQ(f.limits.size(), 4u);
  EXPECT_EQ(f.limits[2].first, "rms_a");
  EXPECT_EQ(f.lot.decision, DecisionRule::guarded);
  // A fault in the file names the file by its path.
  const fs::path bad = dir.write("bad.toml", "[limits.thd]\nmx = 0.05\n");
  try {
    read_limits_file(bad, kFigures);
    ADD_FAILURE() << "no error";
  } catch (const InputError& e) {
    EXPECT_EQ(e.path(), bad.string());
    EXPECT_EQ(e.where().line.value_or(0), 2u);
  }
}

TEST(LimitsFile, FileThatCannotBeRead) {
  const TempDir dir;
  const auto error_for = [](const fs::path& p) {
    try {
      read_limits_file(p, kFigures);
    } catch (const InputError& e) {
      EXPECT_EQ(e.path(), p.string());
      EXPECT_FALSE(e.where().line);
      return e.message();
    }
    ADD_FAILURE() << "no error for " << p;
    return std::string();
  };
  EXPECT_NE(error_for(dir.path() / "missing.toml").find("cannot open"), std::string::npos);
  EXPECT_NE(error_for(dir.path()).find("directory"), std::string::npos);
  const fs::path big = dir.write("capture.csv", std::string((1u << 20) + 1, '1'));
  EXPECT_NE(error_for(big).find("too large"), std::string::npos);
}

}  // namespace
}  // namespace lopside
