#pragma once
/// \file
/// Opening captures: the one entry point of the io layer's readers.

#include <filesystem>
#include <istream>
#include <memory>
#include <string>

#include "lopside/reader_options.hpp"
#include "lopside/sample_source.hpp"

namespace lopside {

/// Opens a capture by content (not by extension alone): RIFF/RF64/W64/FLAC/… containers go to
/// the libsndfile reader, anything else to the delimited-text reader. Applies gains, scales,
/// units and channel roles from `options`. Throws InputError naming the file on bad input.
std::unique_ptr<SampleSource> open_capture(const std::filesystem::path& path,
                                           const ReaderOptions& options);

/// The delimited-text reader on a stream, for tests and for pipes. `display_path` names the
/// input in messages. The stream must outlive the returned source.
std::unique_ptr<SampleSource> open_text_capture(std::istream& in, const std::string& display_path,
                                                const ReaderOptions& options);

/// The libsndfile reader (WAV, RF64, W64, FLAC, AIFF, …).
std::unique_ptr<SampleSource> open_sound_file(const std::filesystem::path& path,
                                              const ReaderOptions& options);

}  // namespace lopside
