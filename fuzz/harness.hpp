#pragma once
// The fuzz harnesses' checks, shared by the libFuzzer entry points (fuzz_*.cpp, clang only) and
// by the corpus replay in the normal test suite (tests/fuzz_corpus_test.cpp), so that every
// input that ever broke a promise keeps being checked by the ordinary build.
#include <cstddef>
#include <cstdint>
#include <string>

namespace lopside::fuzz {

/// Each returns "" when the input kept every promise, else what broke. An input may be refused
/// (InputError: exit 2 with the place); anything else thrown, a non-finite sample where the
/// reader promises finite ones, a count beyond the stated limits, invalid JSON or "nan"/"inf" in
/// a report is a broken promise.
std::string check_text_reader(const std::uint8_t* data, std::size_t size);
std::string check_sound_reader(const std::uint8_t* data, std::size_t size);
std::string check_measure(const std::uint8_t* data, std::size_t size);

/// True when a report prints "nan" or "inf" as a word (not inside "information").
bool prints_non_number(const std::string& text);

}  // namespace lopside::fuzz
