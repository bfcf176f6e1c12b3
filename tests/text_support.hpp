#pragma once
// Reading a text capture from a string, as the reader tests do (ninja's ParseTest habit): the
// whole capture into columns, or the InputError it must raise.
#include <gtest/gtest.h>

#include <sstream>
#include <string>
#include <vector>

#include "lopside/capture_reader.hpp"
#include "lopside/error.hpp"

namespace lopside::test {

struct Read {
  CaptureInfo info;
  std::vector<std::vector<double>> columns;  // per channel
  std::vector<std::string> warnings;
};

inline Read read_text(const std::string& text, const ReaderOptions& options,
                      std::size_t block_frames, const std::string& name) {
  std::istringstream in(text);
  auto source = open_text_capture(in, name, options);
  Read r;
  r.columns.resize(source->info().channels.size());
  SampleBlock block;
  while (const std::size_t n = source->read(block, block_frames)) {
    for (std::size_t f = 0; f < n; ++f) {
      for (std::size_t c = 0; c < block.channels; ++c) r.columns[c].push_back(block.value(f, c));
    }
  }
  r.info = source->info();
  r.warnings = source->warnings();
  return r;
}

inline InputError text_error(const std::string& text, const ReaderOptions& options,
                             const std::string& name) {
  try {
    read_text(text, options, 4096, name);
  } catch (const InputError& e) {
    return e;
  }
  ADD_FAILURE() << "no InputError for:\n" << text.substr(0, 300);
  return InputError("", "none");
}

}  // namespace lopside::test
