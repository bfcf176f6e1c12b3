// The fuzzers' corpus replayed by the ordinary build (issue 14, point 4): every seed and every
// input that ever broke a promise (fuzz/corpus/<harness>/) goes through the same checks the
// libFuzzer harnesses make (fuzz/harness.cpp), so a fixed bug stays fixed without clang.
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

#include "harness.hpp"

namespace {

namespace fs = std::filesystem;

std::vector<fs::path> corpus(const std::string& harness) {
  std::vector<fs::path> files;
  for (const auto& e :
       fs::directory_iterator(fs::path(LOPSIDE_SOURCE_DIR) / "fuzz/corpus" / harness))
    if (e.is_regular_file()) files.push_back(e.path());
  std::sort(files.begin(), files.end());
  return files;
}

std::vector<std::uint8_t> bytes(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  return {std::istreambuf_iterator<char>(in), std::istreambuf_iterator<char>()};
}

template <typename Check>
void replay(const std::string& harness, Check check) {
  const std::vector<fs::path> files = corpus(harness);
  // Seeds of every layout are committed (fuzz/make-seeds): an empty folder is a lost corpus.
  ASSERT_GE(files.size(), 3u) << harness;
  for (const fs::path& p : files) {
    const std::vector<std::uint8_t> b = bytes(p);
    EXPECT_EQ(check(b.data(), b.size()), "") << p.filename();
  }
}

TEST(FuzzCorpus, TextReaderKeepsItsPromises) {
  replay("text_reader", lopside::fuzz::check_text_reader);
}
TEST(FuzzCorpus, SoundReaderKeepsItsPromises) {
  replay("sound_reader", lopside::fuzz::check_sound_reader);
}
TEST(FuzzCorpus, MeasureKeepsItsPromises) {
  replay("measure", lopside::fuzz::check_measure);
}

// The checks themselves must catch what they look for, or the replay proves nothing.
TEST(FuzzCorpus, TheReportCheckCatchesNonNumbersOnly) {
  EXPECT_TRUE(lopside::fuzz::prints_non_number("  DC offset  nan A"));
  EXPECT_TRUE(lopside::fuzz::prints_non_number("RMS -inf mA"));
  EXPECT_TRUE(lopside::fuzz::prints_non_number("ratio NaN"));
  EXPECT_FALSE(lopside::fuzz::prints_non_number("more information: infinite loops, finance"));
  EXPECT_FALSE(lopside::fuzz::prints_non_number("DC offset +1.23 mA ± 0.05 mA"));
}

// A refused input keeps the promise (an InputError with its place); a good one is read whole.
TEST(FuzzCorpus, RefusalIsAKeptPromise) {
  const std::string bad = "RIFF\x10\0\0\0WAVEjunk";
  const std::string ok = "time,current\ns,A\n0,0.1\n0.001,0.2\n0.002,0.1\n";
  for (const std::string* s : {&bad, &ok}) {
    const auto* d = reinterpret_cast<const std::uint8_t*>(s->data());
    EXPECT_EQ(lopside::fuzz::check_text_reader(d, s->size()), "");
    EXPECT_EQ(lopside::fuzz::check_sound_reader(d, s->size()), "");
    EXPECT_EQ(lopside::fuzz::check_measure(d, s->size()), "");
  }
}

}  // namespace
