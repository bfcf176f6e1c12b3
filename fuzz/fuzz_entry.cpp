// libFuzzer entry point (clang -fsanitize=fuzzer), built once per harness with
// LOPSIDE_FUZZ_CHECK naming its check (fuzz/CMakeLists.txt); harness.hpp says what is checked.
#include <cstdio>
#include <cstdlib>

#include "harness.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  const std::string broken = lopside::fuzz::LOPSIDE_FUZZ_CHECK(data, size);
  if (!broken.empty()) {
    std::fprintf(stderr, "broken promise: %s\n", broken.c_str());
    std::abort();
  }
  return 0;
}
