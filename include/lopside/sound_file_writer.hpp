#pragma once
/// \file
/// Writing WAV-like sound files (WAV, RF64, W64, FLAC) of normalised samples, through
/// lopside::AtomicOutput so that a failed write never leaves a half file under the target name.
/// The implementation lives in src/io/sound_file.cpp, the one file that includes libsndfile.

#include <cstddef>
#include <filesystem>
#include <memory>

namespace lopside {

/// The container of a sound file.
enum class SoundContainer { wav, rf64, w64, flac };

/// How each sample is stored. Integer formats hold k / 2^(bits−1) of full scale, k an integer
/// in [−2^(bits−1), 2^(bits−1) − 1]; float formats hold the value itself (IEEE 754).
enum class SoundSampleFormat { pcm16, pcm24, pcm32, float32, float64 };

/// "wav", "rf64", "w64", "flac".
const char* to_string(SoundContainer container) noexcept;
/// "pcm16", "pcm24", "pcm32", "float32", "float64".
const char* to_string(SoundSampleFormat format) noexcept;

/// A sound file being written: open(), write() blocks of frames, close(). Destroying a writer
/// that was not closed discards the temporary file and leaves the target untouched.
class SoundFileWriter {
 public:
  SoundFileWriter();
  ~SoundFileWriter();
  SoundFileWriter(const SoundFileWriter&) = delete;
  SoundFileWriter& operator=(const SoundFileWriter&) = delete;

  /// Starts writing `path` (a temporary file beside it until close()).
  /// `channels` ≥ 1; `sample_rate_hz` a whole number of hertz, 1 ≤ rate ≤ 2^31 − 1 (the
  /// containers store an integer rate). FLAC holds pcm16 and pcm24 only, at rates up to 655350 Hz.
  /// Throws InputError naming `path` on a bad combination or when the file cannot be created.
  void open(const std::filesystem::path& path, SoundContainer container, SoundSampleFormat format,
            std::size_t channels, double sample_rate_hz);

  /// Appends `frame_count` interleaved frames: `frames[f * channels + c]`, normalised so that
  /// ±1 is full scale. For integer formats each value is clipped to [−1, 1] and rounded to the
  /// nearest step 2^−(bits−1) (+1 itself becomes the largest code, 1 − 2^−(bits−1)).
  /// Throws InputError on a non-finite value or a failed write (disk full).
  void write(const double* frames, std::size_t frame_count);

  /// Finishes the header, closes the file and renames it over the target.
  /// Throws InputError if any of that fails (the target is then left untouched).
  void close();

  bool is_open() const noexcept;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace lopside
