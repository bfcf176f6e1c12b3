#pragma once
/// \file
/// The streaming seam between readers (io) and measurements (core): a source hands out blocks
/// of frames in SI units, so no layer ever holds a whole capture.

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <utility>
#include <vector>

namespace lopside {

/// What a channel carries, as far as the analysis is concerned.
enum class ChannelRole { current, voltage, other };

/// "current", "voltage" or "other": the spelling used in every output.
const char* to_string(ChannelRole role) noexcept;

/// One recorded channel (the time column of a text capture is not a channel).
struct ChannelInfo {
  std::string name;  ///< header name, or "ch1", "ch2", … when the file has none
  std::string unit;  ///< SI unit of the values handed out: "A", "V", "s", or "" if unknown
  /// The unit as the file states it when it is not one lopside converts ("a.u.", "counts",
  /// "%"); empty when `unit` is set or nothing is stated.
  std::string unit_text;
  ChannelRole role = ChannelRole::other;
  std::size_t index = 0;  ///< 1-based channel number, the one `--current 2` refers to
  /// The lowest and highest value the file's integer encoding can hold, in the delivered units
  /// (after --scale and --gain): a sample on either is the recorder's range reached. Unset for
  /// float formats, lossy or companded encodings, and text.
  std::optional<double> full_scale_low, full_scale_high;
};

/// "1 'current' [A], 2 'voltage' [V]": the channels as error messages list them ("none" if
/// there are none).
std::string describe_channels(const std::vector<ChannelInfo>& channels);

/// Facts about a capture. Readers of formats that state them up front (WAV) fill them at open;
/// text readers refine `frames` and `sample_rate_hz` once `read()` has returned 0.
struct CaptureInfo {
  std::string path;    ///< as given by the user
  std::string format;  ///< e.g. "csv", "tsv", "text", "wav", "rf64", "w64", "flac"
  double sample_rate_hz = 0.0;
  double start_time_s = 0.0;            ///< time of the first frame (0 without a time column)
  std::optional<std::uint64_t> frames;  ///< known up front for containers, at the end for text
  std::vector<ChannelInfo> channels;
  std::string detail;  ///< one line on how the file was read (delimiter, sample format, …)
  /// Every key/value the file states besides the samples (a preamble, `#` comment lines, keyed
  /// header cells), in file order, as written (valid UTF-8): a serial number or a probe setting
  /// travels with the result.
  std::vector<std::pair<std::string, std::string>> metadata;
};

/// A block of frames, interleaved: value(f, c) = data[f * channels + c], in SI units.
struct SampleBlock {
  std::vector<double> data;
  std::size_t frames = 0;
  std::size_t channels = 0;
  double value(std::size_t frame, std::size_t channel) const {
    return data[frame * channels + channel];
  }
};

/// A capture opened for streaming. Implementations throw lopside::InputError on bad input.
class SampleSource {
 public:
  virtual ~SampleSource() = default;
  virtual const CaptureInfo& info() const = 0;
  /// Replaces the contents of `block` with up to `max_frames` frames (max_frames > 0).
  /// Returns the number of frames read; 0 means the capture has ended.
  virtual std::size_t read(SampleBlock& block, std::size_t max_frames) = 0;
  /// Things the reader noticed that weaken but do not invalidate the data (complete at end).
  virtual const std::vector<std::string>& warnings() const = 0;
  /// Share of the input consumed so far, in [0, 1], or a negative value when unknown; for
  /// progress display only.
  virtual double progress() const { return -1.0; }
};

}  // namespace lopside
