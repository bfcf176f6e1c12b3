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
///
/// `path` may be "-" (standard input, named "standard input" in messages and in
/// CaptureInfo::path), a FIFO or `/dev/fd/N`: the input is read strictly forward, never seeked.
/// Text compressed with gzip, xz or zstd is decompressed on the fly, and UTF-16 text with a
/// byte order mark is transcoded to UTF-8, both recognised by their first bytes. A sound
/// container that arrives on a pipe is spooled to an unlinked temporary file first, since
/// libsndfile seeks.
///
/// With `options.with_paths`, each of those files is opened too and joined on (see
/// lopside/joined_source.hpp): one capture whose channels are the main file's, then each
/// companion's, with the channel options applied on that joined numbering.
std::unique_ptr<SampleSource> open_capture(const std::filesystem::path& path,
                                           const ReaderOptions& options);

/// Lets open_capture() open `path` more than once (measure's `--zero` reads the capture twice,
/// since the stretch may lie anywhere in it). A regular file is left as it is. Standard input
/// ("-"), a FIFO or a pipe's `/dev/fd/N` is copied once, as it comes (compressed or not), to an
/// unlinked temporary file in $TMPDIR, from whose start every later open_capture() of the same
/// `path` reads; memory stays at one copy buffer, but the disk must hold the whole input. The
/// copy lives until the program ends. Throws InputError naming the input when it cannot be read
/// or copied.
void keep_for_rereading(const std::filesystem::path& path);

/// The delimited-text reader on a stream, for tests and for pipes. `display_path` names the
/// input in messages. The stream must outlive the returned source.
std::unique_ptr<SampleSource> open_text_capture(std::istream& in, const std::string& display_path,
                                                const ReaderOptions& options);

/// The libsndfile reader (WAV, RF64, W64, FLAC, AIFF, …).
std::unique_ptr<SampleSource> open_sound_file(const std::filesystem::path& path,
                                              const ReaderOptions& options);

/// The libsndfile reader on an open, seekable descriptor positioned at the container's first
/// byte (a spooled pipe). Takes the descriptor over and closes it. `display_path` names the
/// input in messages.
std::unique_ptr<SampleSource> open_sound_file(int fd, const std::string& display_path,
                                              const ReaderOptions& options);

}  // namespace lopside
