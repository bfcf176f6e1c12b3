// The libsndfile seam: the only file of lopside that includes <sndfile.h>. It reads WAV, RF64,
// W64, FLAC, AIFF and the other containers libsndfile knows (open_sound_file), and writes WAV,
// RF64, W64 and FLAC (SoundFileWriter).

#include <fcntl.h>
#include <sndfile.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <bit>
#include <cerrno>
#include <cmath>
#include <cstdint>
#include <cstring>
#include <fstream>
#include <limits>
#include <optional>
#include <string>
#include <system_error>
#include <vector>

#include "lopside/atomic_file.hpp"
#include "lopside/capture_reader.hpp"
#include "lopside/channel_roles.hpp"
#include "lopside/error.hpp"
#include "lopside/sound_file_writer.hpp"
#include "sound_file_checks.hpp"
#include "unique_fd.hpp"

namespace lopside {
namespace {

namespace fs = std::filesystem;
using sound_checks::ContainerFacts;
using sound_checks::DataExtent;
using sound_checks::HeaderReader;
// A number as the user typed it in messages ("44100.5", "1e+06"), not std::to_string's fixed
// six decimals.
using sound_checks::number_text;

// ---------------------------------------------------------------------------------------------
// Format names.

struct MajorName {
  int major;
  const char* id;     // CaptureInfo::format
  const char* label;  // start of CaptureInfo::detail
};
constexpr MajorName major_names[] = {
    {SF_FORMAT_WAV, "wav", "WAV"},    {SF_FORMAT_WAVEX, "wav", "WAV (extensible)"},
    {SF_FORMAT_RF64, "rf64", "RF64"}, {SF_FORMAT_W64, "w64", "W64"},
    {SF_FORMAT_FLAC, "flac", "FLAC"}, {SF_FORMAT_AIFF, "aiff", "AIFF"},
    {SF_FORMAT_CAF, "caf", "CAF"},    {SF_FORMAT_AU, "au", "AU"},
    {SF_FORMAT_OGG, "ogg", "Ogg"},    {SF_FORMAT_MPEG, "mpeg", "MPEG"},
};

std::string format_id(int format, std::string& label) {
  const int major = format & SF_FORMAT_TYPEMASK;
  for (const auto& m : major_names) {
    if (m.major == major) {
      label = m.label;
      return m.id;
    }
  }
  SF_FORMAT_INFO fi{};
  fi.format = major;
  if (sf_command(nullptr, SFC_GET_FORMAT_INFO, &fi, sizeof fi) == 0 && fi.name != nullptr) {
    label = fi.name;
    return fi.extension != nullptr ? fi.extension : "sound";
  }
  label = "sound file";
  return "sound";
}

std::string subformat_label(int format) {
  switch (format & SF_FORMAT_SUBMASK) {
    case SF_FORMAT_PCM_S8:
      return "8-bit PCM";
    case SF_FORMAT_PCM_U8:
      return "8-bit unsigned PCM";
    case SF_FORMAT_PCM_16:
      return "16-bit PCM";
    case SF_FORMAT_PCM_24:
      return "24-bit PCM";
    case SF_FORMAT_PCM_32:
      return "32-bit PCM";
    case SF_FORMAT_FLOAT:
      return "32-bit float";
    case SF_FORMAT_DOUBLE:
      return "64-bit float";
    default:
      break;
  }
  SF_FORMAT_INFO fi{};
  fi.format = format & SF_FORMAT_SUBMASK;
  if (sf_command(nullptr, SFC_GET_FORMAT_INFO, &fi, sizeof fi) == 0 && fi.name != nullptr) {
    return fi.name;
  }
  return "unknown sample format";
}

/// Bytes one sample occupies in the data chunk, 0 for compressed encodings (no fixed size).
std::uint64_t bytes_per_sample(int format) {
  switch (format & SF_FORMAT_SUBMASK) {
    case SF_FORMAT_PCM_S8:
    case SF_FORMAT_PCM_U8:
    case SF_FORMAT_ULAW:
    case SF_FORMAT_ALAW:
      return 1;
    case SF_FORMAT_PCM_16:
      return 2;
    case SF_FORMAT_PCM_24:
      return 3;
    case SF_FORMAT_PCM_32:
    case SF_FORMAT_FLOAT:
      return 4;
    case SF_FORMAT_DOUBLE:
      return 8;
    default:
      return 0;
  }
}

/// Bits of a linear integer PCM encoding, 0 for float, companded, lossy and other encodings.
int pcm_bits(int format) {
  switch (format & SF_FORMAT_SUBMASK) {
    case SF_FORMAT_PCM_S8:
    case SF_FORMAT_PCM_U8:
      return 8;
    case SF_FORMAT_PCM_16:
      return 16;
    case SF_FORMAT_PCM_24:
      return 24;
    case SF_FORMAT_PCM_32:
      return 32;
    default:
      return 0;
  }
}

/// Encodings whose decoded values differ from what was recorded by more than one step.
bool is_lossy(int format) {
  switch (format & SF_FORMAT_SUBMASK) {
    case SF_FORMAT_ULAW:
    case SF_FORMAT_ALAW:
    case SF_FORMAT_IMA_ADPCM:
    case SF_FORMAT_MS_ADPCM:
    case SF_FORMAT_GSM610:
    case SF_FORMAT_VOX_ADPCM:
    case SF_FORMAT_NMS_ADPCM_16:
    case SF_FORMAT_NMS_ADPCM_24:
    case SF_FORMAT_NMS_ADPCM_32:
    case SF_FORMAT_G721_32:
    case SF_FORMAT_G723_24:
    case SF_FORMAT_G723_40:
    case SF_FORMAT_VORBIS:
    case SF_FORMAT_OPUS:
    case SF_FORMAT_MPEG_LAYER_I:
    case SF_FORMAT_MPEG_LAYER_II:
    case SF_FORMAT_MPEG_LAYER_III:
      return true;
    default:
      return false;
  }
}

// ---------------------------------------------------------------------------------------------
// Reading.

struct SndfileCloser {
  void operator()(SNDFILE* f) const noexcept { sf_close(f); }
};
using SndfileHandle = std::unique_ptr<SNDFILE, SndfileCloser>;

/// Fails early, with the operating system's reason, on what libsndfile would only call
/// "System error".
void check_readable(const fs::path& path, const std::string& shown) {
  std::error_code ec;
  const auto status = fs::status(path, ec);
  if (ec || !fs::exists(status)) throw InputError(shown, "no such file");
  if (fs::is_directory(status)) throw InputError(shown, "is a directory, expected a capture file");
  std::ifstream probe(path, std::ios::binary);
  if (!probe) {
    throw InputError(shown, std::string("cannot be opened for reading: ") + std::strerror(errno));
  }
  if (fs::file_size(path, ec) == 0 && !ec) throw InputError(shown, "the file is empty");
}

class SoundFileSource final : public SampleSource {
 public:
  SoundFileSource(SndfileHandle file, CaptureInfo info, std::vector<double> multipliers,
                  std::vector<std::string> warnings, std::optional<DataExtent> extent,
                  std::uint64_t bytes_per_frame, detail::UniqueFd direct_fd = {})
      : file_(std::move(file)),
        info_(std::move(info)),
        multipliers_(std::move(multipliers)),
        warnings_(std::move(warnings)),
        extent_(extent),
        bytes_per_frame_(bytes_per_frame),
        direct_fd_(std::move(direct_fd)) {}

  const CaptureInfo& info() const override { return info_; }
  const std::vector<std::string>& warnings() const override { return warnings_; }

  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    const std::size_t channels = info_.channels.size();
    block.channels = channels;
    if (ended_ || max_frames == 0) {
      block.data.clear();
      block.frames = 0;
      return 0;
    }
    // The block never outgrows kMaxBlockSamples values nor the frames the header has left,
    // whatever the caller asks and the channel count: 1024 channels × 65536 frames would be
    // 512 MiB of doubles for a file of a few kilobytes.
    std::size_t want =
        std::min(max_frames, std::max<std::size_t>(1, sound_checks::kMaxBlockSamples / channels));
    if (info_.frames) {
      const std::uint64_t left = *info_.frames - std::min(*info_.frames, frames_read_);
      want = static_cast<std::size_t>(std::min<std::uint64_t>(want, left));
    }
    block.data.resize(want * channels);
    const sf_count_t got = want == 0               ? 0
                           : direct_fd_.get() >= 0 ? read_pcm16(block.data.data(), want, channels)
                                                   : sf_readf_double(file_.get(), block.data.data(),
                                                                     static_cast<sf_count_t>(want));
    // libsndfile reports decoding failures (a FLAC frame that lost sync, an I/O error) through
    // sf_error while still returning a full count, the damaged frames set to zero (measured
    // on 1.2.0), so the count alone cannot be trusted.
    if ((direct_fd_.get() < 0 && sf_error(file_.get()) != SF_ERR_NO_ERROR) || got < 0) {
      std::string where = "after the first " + std::to_string(frames_read_) + " frames";
      if (got > 0) {
        where +=
            " (by frame " + std::to_string(frames_read_ + static_cast<std::uint64_t>(got)) + ")";
      }
      std::string why = direct_fd_.get() >= 0
                            ? std::string("read: ") + std::strerror(direct_errno_)
                            : std::string("libsndfile: ") + sf_strerror(file_.get());
      if (!extent_ || bytes_per_frame_ == 0) {
        std::error_code ec;
        const auto size = fs::file_size(info_.path, ec);
        why += "; compressed data damaged or cut short";
        if (!ec) why += ", the file has " + std::to_string(size) + " bytes";
      }
      throw InputError(info_.path, location_of(frames_read_),
                       "cannot decode the samples " + where + " (" + why + ")");
    }
    const auto frames = static_cast<std::size_t>(got);
    for (std::size_t f = 0; direct_fd_.get() < 0 && f < frames; ++f) {  // (read_pcm16 scales)
      double* frame = block.data.data() + f * channels;
      for (std::size_t c = 0; c < channels; ++c) frame[c] *= multipliers_[c];
    }
    frames_read_ += frames;
    block.frames = frames;
    block.data.resize(frames * channels);
    if (frames == 0) {
      ended_ = true;
      if (info_.frames && frames_read_ < *info_.frames) {
        throw InputError(info_.path, location_of(frames_read_),
                         "the sample data ends after " + std::to_string(frames_read_) + " of the " +
                             std::to_string(*info_.frames) +
                             " frames the header promises (file cut short while being read?)");
      }
    }
    return frames;
  }

 private:
  // 16-bit PCM read straight from the data chunk in large blocks, without libsndfile's own
  // buffer: code k reads k · 2^−15, the product libsndfile forms (its s2d conversion with the
  // SFC_SET_NORM_DOUBLE default, exact in double), then times the channel's multiplier as
  // read() does libsndfile's values, so the samples are the same to the bit.
  // Returns the whole frames read (0 at the end), or −1 with direct_errno_ set.
  sf_count_t read_pcm16(double* out, std::size_t frames, std::size_t channels) {
    const std::size_t bytes = frames * bytes_per_frame_;
    raw_.resize(bytes);
    std::size_t have = 0;
    const auto at = static_cast<off_t>(extent_->offset + frames_read_ * bytes_per_frame_);
    while (have < bytes) {
      const ssize_t n = ::pread(direct_fd_.get(), raw_.data() + have, bytes - have,
                                at + static_cast<off_t>(have));
      if (n < 0 && errno == EINTR) continue;
      if (n < 0) {
        direct_errno_ = errno;
        return -1;
      }
      if (n == 0) break;
      have += static_cast<std::size_t>(n);
    }
    const std::size_t whole = have / bytes_per_frame_;
    const unsigned char* b = raw_.data();
    const auto code = [b](std::size_t k) {
      std::int16_t v;
      if constexpr (std::endian::native == std::endian::little) {
        std::memcpy(&v, b + 2 * k, 2);
      } else {
        v = static_cast<std::int16_t>(
            static_cast<std::uint16_t>(b[2 * k] | static_cast<unsigned>(b[2 * k + 1]) << 8));
      }
      return static_cast<double>(v);
    };
    if (channels == 1) {
      const double m = multipliers_[0];
      for (std::size_t k = 0; k < whole; ++k) out[k] = ((1.0 / 32768.0) * code(k)) * m;
    } else {
      for (std::size_t f = 0; f < whole; ++f)
        for (std::size_t c = 0; c < channels; ++c)
          out[f * channels + c] = ((1.0 / 32768.0) * code(f * channels + c)) * multipliers_[c];
    }
    return static_cast<sf_count_t>(whole);
  }

  InputLocation location_of(std::uint64_t frame) const {
    if (extent_ && bytes_per_frame_ > 0) {
      return InputLocation::at_byte(extent_->offset + frame * bytes_per_frame_);
    }
    return {};  // compressed data: frame numbers do not map to byte offsets
  }

  SndfileHandle file_;
  CaptureInfo info_;
  std::vector<double> multipliers_;
  std::vector<std::string> warnings_;
  std::optional<DataExtent> extent_;
  std::uint64_t bytes_per_frame_ = 0;
  detail::UniqueFd direct_fd_;  // the capture opened again for read_pcm16, or none: libsndfile
  int direct_errno_ = 0;
  std::vector<unsigned char> raw_;
  std::uint64_t frames_read_ = 0;
  bool ended_ = false;
};

std::string channel_label(const ChannelInfo& c) {
  return std::to_string(c.index) + " '" + c.name + "'";
}

}  // namespace

namespace {

// libsndfile's reading of the file, checked against the stated limits and against the header
// as check_container read it.
// `raw_fd`: the capture opened once more, for reading 16-bit PCM directly, or none; this
// function owns it.
std::unique_ptr<SampleSource> open_opened_sound_file(
    SndfileHandle file, const SF_INFO& sf_info, HeaderReader& header, const ContainerFacts& facts,
    const std::string& shown, const ReaderOptions& options, detail::UniqueFd raw_fd) {
  using sound_checks::kMaxChannels;
  using sound_checks::kMaxSampleRateHz;
  using sound_checks::kMinSampleRateHz;
  if (!file) {
    const std::string why = sf_strerror(nullptr);
    if (facts.have_format && !facts.format_known) {
      throw InputError(shown, InputLocation::at_byte(facts.format_field),
                       "damaged or unsupported sound file header: the header gives " +
                           facts.format_text +
                           ", an encoding libsndfile cannot read (libsndfile: " + why +
                           "); expected integer PCM, IEEE float, A-law or µ-law");
    }
    if (sound_checks::has_sound_magic(header)) {
      throw InputError(shown, InputLocation::at_byte(0),
                       "damaged or unsupported sound file header (libsndfile: " + why + ")");
    }
    throw InputError(shown,
                     "not a sound file libsndfile can read (expected WAV, RF64, W64, "
                     "FLAC, AIFF, …; libsndfile: " +
                         why + ")");
  }
  // For a file it cannot identify, libsndfile falls back on the extension (".au", ".snd",
  // ".gsm", ".vox") and reports a headerless RAW stream: a guess, not a recognised file.
  if ((sf_info.format & SF_FORMAT_TYPEMASK) == SF_FORMAT_RAW) {
    throw InputError(shown,
                     "not a sound file libsndfile can read: no known header (expected "
                     "WAV, RF64, W64, FLAC, AIFF, …)");
  }
  // Containers check_container does not read (FLAC, CAF, …) meet the same limits here, before
  // anything is sized by the channel count.
  if (sf_info.channels < 1 || static_cast<std::uint64_t>(sf_info.channels) > kMaxChannels) {
    throw InputError(shown, InputLocation::at_byte(facts.channels_field),
                     "damaged header: " + std::to_string(sf_info.channels) +
                         " channels; expected 1 to " + std::to_string(kMaxChannels));
  }
  const double rate_hz = sf_info.samplerate;
  if (!(rate_hz >= kMinSampleRateHz) || rate_hz > kMaxSampleRateHz) {
    throw InputError(shown, InputLocation::at_byte(facts.rate_field),
                     "damaged header: a sample rate of " + std::to_string(sf_info.samplerate) +
                         " Hz; expected a sample rate from 1 Hz to 100 GHz");
  }
  // libsndfile 1.2.0 turns AIFF's 80-bit rate into an int by hand (tenbytefloat2int in
  // src/aiff.c): it drops any fraction, reads 0 as 1 Hz, and anything from 2^30 Hz up as
  // 800 MHz (measured: 1e12 Hz reads as 800000000). Only a rate it reproduces exactly is used.
  if (facts.header_rate_hz && (!facts.header_rate_whole || *facts.header_rate_hz != rate_hz)) {
    const std::string stated = number_text(*facts.header_rate_hz);
    throw InputError(
        shown, InputLocation::at_byte(facts.rate_field),
        "the header states a sample rate of " + stated + " Hz, which libsndfile reads as " +
            std::to_string(sf_info.samplerate) +
            " Hz, and every sample's time would be wrong; expected " +
            (facts.header_rate_whole ? "a rate below 1073741824 Hz (2^30), the largest "
                                       "libsndfile converts exactly"
                                     : "a whole number of hertz"));
  }

  const auto channel_count = static_cast<std::size_t>(sf_info.channels);
  CaptureInfo info;
  info.path = shown;
  std::string label;
  info.format = format_id(sf_info.format, label);
  info.sample_rate_hz = sf_info.samplerate;
  if (sf_info.frames >= 0 && sf_info.frames < SF_COUNT_MAX) {
    info.frames = static_cast<std::uint64_t>(sf_info.frames);
  }
  info.detail = label + ", " + subformat_label(sf_info.format) + ", " +
                std::to_string(channel_count) + (channel_count == 1 ? " channel" : " channels");
  info.channels.resize(channel_count);
  for (std::size_t c = 0; c < channel_count; ++c) {
    info.channels[c].name = "ch" + std::to_string(c + 1);
    info.channels[c].index = c + 1;
  }

  // value = normalised × full scale × gain. libsndfile normalises integer PCM so that code k
  // of a b-bit format reads k / 2^(b−1) (its documented SFC_SET_NORM_DOUBLE default);
  // float formats read as stored.
  std::vector<double> multipliers(channel_count, 1.0);
  std::vector<bool> scaled(channel_count, false);
  for (const auto& [selector, scale] : options.scales) {
    const std::size_t c = find_channel(info.channels, selector, shown);
    if (!std::isfinite(scale) || !(scale > 0.0)) {
      throw InputError(shown, "--scale " + selector + "=" + number_text(scale) +
                                  ": expected the positive physical value of full scale");
    }
    if (scaled[c]) {
      throw InputError(shown, "--scale given twice for channel " + channel_label(info.channels[c]));
    }
    scaled[c] = true;
    multipliers[c] = scale;
  }
  const std::vector<double> gains = channel_gains(info.channels, options, shown);
  for (std::size_t c = 0; c < channel_count; ++c) multipliers[c] *= gains[c];

  // The ends of the integer range, as read: b-bit PCM holds codes −2^(b−1) … 2^(b−1) − 1, read
  // as code / 2^(b−1), so −1 and 1 − 2^−(b−1) of full scale (8-bit unsigned WAV too: libsndfile
  // reads byte u as (u − 128)/128). Both products are formed as read() forms a sample's, so a
  // sample on a rail equals the bound exactly; a negative gain turns them over.
  if (const int bits = pcm_bits(sf_info.format); bits > 0) {
    const double full = std::ldexp(1.0, bits - 1);
    for (std::size_t c = 0; c < channel_count; ++c) {
      const double bottom = -1.0 * multipliers[c];
      const double top = ((full - 1.0) / full) * multipliers[c];
      info.channels[c].full_scale_low = std::min(bottom, top);
      info.channels[c].full_scale_high = std::max(bottom, top);
    }
  }

  std::vector<std::string> warnings;
  std::string unscaled;
  for (std::size_t c = 0; c < channel_count; ++c) {
    if (scaled[c]) continue;
    if (!unscaled.empty()) unscaled += ", ";
    unscaled += channel_label(info.channels[c]);
  }
  if (!unscaled.empty()) {
    warnings.push_back("no --scale for channel(s) " + unscaled +
                       ": values are fractions of full scale (±1), their unit unknown; give "
                       "--scale CH=VALUE (the physical value of full scale) and --unit CH=UNIT");
  }
  if (is_lossy(sf_info.format)) {
    warnings.push_back("the sample format (" + subformat_label(sf_info.format) +
                       ") is lossy: values carry coding error beyond the quantisation step");
  }
  assign_roles(info.channels, options, shown, warnings);

  const std::uint64_t bytes_per_frame = bytes_per_sample(sf_info.format) * channel_count;
  // Little-endian 16-bit PCM in a WAV, RF64 or W64 whose data chunk holds every frame
  // libsndfile counts: read directly (SoundFileSource::read_pcm16); anything else, libsndfile.
  detail::UniqueFd direct_fd;
  const int container = sf_info.format & SF_FORMAT_TYPEMASK;
  const int endian = sf_info.format & SF_FORMAT_ENDMASK;
  struct stat st {};
  if (raw_fd.get() >= 0 && (sf_info.format & SF_FORMAT_SUBMASK) == SF_FORMAT_PCM_16 &&
      (container == SF_FORMAT_WAV || container == SF_FORMAT_WAVEX || container == SF_FORMAT_RF64 ||
       container == SF_FORMAT_W64) &&
      (endian == SF_ENDIAN_FILE || endian == SF_ENDIAN_LITTLE) && facts.extent && info.frames &&
      *info.frames <= facts.extent->bytes / bytes_per_frame && ::fstat(raw_fd.get(), &st) == 0 &&
      S_ISREG(st.st_mode) &&
      facts.extent->offset + *info.frames * bytes_per_frame <=
          static_cast<std::uint64_t>(st.st_size)) {
    direct_fd = std::move(raw_fd);
  }
  return std::make_unique<SoundFileSource>(std::move(file), std::move(info), std::move(multipliers),
                                           std::move(warnings), facts.extent, bytes_per_frame,
                                           std::move(direct_fd));
}

}  // namespace

std::unique_ptr<SampleSource> open_sound_file(const std::filesystem::path& path,
                                              const ReaderOptions& options) {
  const std::string shown = path.string();
  check_readable(path, shown);
  HeaderReader header(path);
  std::error_code ec;
  const std::uint64_t file_size = fs::file_size(path, ec);
  // The header is checked before libsndfile reads it: some headers make sf_open loop forever.
  const ContainerFacts facts = sound_checks::check_container(
      header, ec ? std::nullopt : std::optional<std::uint64_t>(file_size), shown);
  SF_INFO sf_info{};
  SndfileHandle file(sf_open(shown.c_str(), SFM_READ, &sf_info));
  return open_opened_sound_file(
      std::move(file), sf_info, header, facts, shown, options,
      detail::UniqueFd(::open(shown.c_str(), O_RDONLY | O_CLOEXEC), true));
}

std::unique_ptr<SampleSource> open_sound_file(int fd, const std::string& display_path,
                                              const ReaderOptions& options) {
  HeaderReader header(fd);
  struct stat st {};
  const bool sized = ::fstat(fd, &st) == 0 && S_ISREG(st.st_mode);
  ContainerFacts facts;
  try {
    // A spooled pipe is a regular file by now, so the same checks as for a file by name guard
    // sf_open_fd against headers that make it loop forever.
    facts = sound_checks::check_container(
        header,
        sized ? std::optional<std::uint64_t>(static_cast<std::uint64_t>(st.st_size)) : std::nullopt,
        display_path);
  } catch (...) {
    ::close(fd);  // the descriptor is ours to close, as libsndfile would have
    throw;
  }
  // libsndfile takes the descriptor over (close_desc): sf_close closes it, and so does a failed
  // open (libsndfile 1.2.0 source, sf_open_fd → psf_open_file → psf_close; from memory).
  // A second descriptor of the same (regular) file for the direct 16-bit path: pread keeps no
  // offset, so libsndfile's own position is not disturbed.
  detail::UniqueFd raw_fd(sized ? ::fcntl(fd, F_DUPFD_CLOEXEC, 0) : -1, true);
  SF_INFO sf_info{};
  SndfileHandle file(sf_open_fd(fd, SFM_READ, &sf_info, SF_TRUE));
  return open_opened_sound_file(std::move(file), sf_info, header, facts, display_path, options,
                                std::move(raw_fd));
}

// ---------------------------------------------------------------------------------------------
// Writing.

const char* to_string(SoundContainer container) noexcept {
  switch (container) {
    case SoundContainer::wav:
      return "wav";
    case SoundContainer::rf64:
      return "rf64";
    case SoundContainer::w64:
      return "w64";
    case SoundContainer::flac:
      return "flac";
  }
  return "wav";
}

const char* to_string(SoundSampleFormat format) noexcept {
  switch (format) {
    case SoundSampleFormat::pcm16:
      return "pcm16";
    case SoundSampleFormat::pcm24:
      return "pcm24";
    case SoundSampleFormat::pcm32:
      return "pcm32";
    case SoundSampleFormat::float32:
      return "float32";
    case SoundSampleFormat::float64:
      return "float64";
  }
  return "pcm16";
}

namespace {

int integer_bits(SoundSampleFormat format) {
  switch (format) {
    case SoundSampleFormat::pcm16:
      return 16;
    case SoundSampleFormat::pcm24:
      return 24;
    case SoundSampleFormat::pcm32:
      return 32;
    case SoundSampleFormat::float32:
    case SoundSampleFormat::float64:
      break;
  }
  return 0;
}

int sf_major(SoundContainer container) {
  switch (container) {
    case SoundContainer::wav:
      return SF_FORMAT_WAV;
    case SoundContainer::rf64:
      return SF_FORMAT_RF64;
    case SoundContainer::w64:
      return SF_FORMAT_W64;
    case SoundContainer::flac:
      return SF_FORMAT_FLAC;
  }
  return SF_FORMAT_WAV;
}

int sf_subtype(SoundSampleFormat format) {
  switch (format) {
    case SoundSampleFormat::pcm16:
      return SF_FORMAT_PCM_16;
    case SoundSampleFormat::pcm24:
      return SF_FORMAT_PCM_24;
    case SoundSampleFormat::pcm32:
      return SF_FORMAT_PCM_32;
    case SoundSampleFormat::float32:
      return SF_FORMAT_FLOAT;
    case SoundSampleFormat::float64:
      return SF_FORMAT_DOUBLE;
  }
  return SF_FORMAT_PCM_16;
}

// Frames converted per libsndfile call: bounds the conversion buffer whatever the caller's
// block size.
constexpr std::size_t write_chunk_frames = 4096;

}  // namespace

struct SoundFileWriter::Impl {
  std::string shown;
  std::unique_ptr<AtomicOutput> output;
  SndfileHandle file;
  std::size_t channels = 0;
  int bits = 0;  // 0 for float formats
  std::uint64_t frames_written = 0;
  std::vector<std::int32_t> codes;
};

SoundFileWriter::SoundFileWriter() = default;
SoundFileWriter::~SoundFileWriter() {
  // Close libsndfile's handle before AtomicOutput removes the uncommitted temporary file.
  if (impl_) impl_->file.reset();
}

bool SoundFileWriter::is_open() const noexcept {
  return impl_ && impl_->file;
}

void SoundFileWriter::open(const std::filesystem::path& path, SoundContainer container,
                           SoundSampleFormat format, std::size_t channels, double sample_rate_hz) {
  const std::string shown = path.string();
  if (is_open()) throw InputError(shown, "sound file writer is already open");
  if (channels < 1 || channels > 1024) {
    throw InputError(shown, "cannot write " + std::to_string(channels) + " channels (1 to 1024)");
  }
  if (!(sample_rate_hz >= 1.0) || sample_rate_hz > std::numeric_limits<int>::max() ||
      sample_rate_hz != std::floor(sample_rate_hz)) {
    throw InputError(shown, "sound files store a whole number of samples per second; " +
                                number_text(sample_rate_hz) + " Hz is not one");
  }
  const int bits = integer_bits(format);
  if (container == SoundContainer::flac && bits != 16 && bits != 24) {
    throw InputError(shown,
                     std::string("FLAC holds 16- or 24-bit PCM only, not ") + to_string(format));
  }
  // libsndfile 1.2.0 refuses FLAC above 655350 Hz (measured), the largest rate a FLAC frame
  // header can code in tens of hertz (FLAC format, frame header sample-rate field).
  if (container == SoundContainer::flac && sample_rate_hz > 655350.0) {
    throw InputError(shown, "FLAC holds sample rates up to 655350 Hz, not " +
                                number_text(sample_rate_hz) + " Hz; use wav, rf64 or w64");
  }
  if (shown == "-") throw InputError(shown, "sound files cannot be written to standard output");

  SF_INFO sf_info{};
  sf_info.samplerate = static_cast<int>(sample_rate_hz);
  sf_info.channels = static_cast<int>(channels);
  sf_info.format = sf_major(container) | sf_subtype(format);
  if (!sf_format_check(&sf_info)) {
    throw InputError(shown, std::string("libsndfile cannot write ") + to_string(container) +
                                " with " + to_string(format) + " samples");
  }

  auto impl = std::make_unique<Impl>();
  impl->shown = shown;
  impl->output = std::make_unique<AtomicOutput>(path);
  const std::string temp = impl->output->temp_path().string();
  impl->file.reset(sf_open(temp.c_str(), SFM_WRITE, &sf_info));
  if (!impl->file) {
    throw InputError(
        shown, std::string("cannot create sound file (libsndfile: ") + sf_strerror(nullptr) + ")");
  }
  impl->channels = channels;
  impl->bits = bits;
  if (bits > 0) impl->codes.resize(write_chunk_frames * channels);
  impl_ = std::move(impl);
}

void SoundFileWriter::write(const double* frames, std::size_t frame_count) {
  if (!is_open()) throw InputError("", "sound file writer is not open");
  Impl& w = *impl_;
  const std::size_t channels = w.channels;
  for (std::size_t done = 0; done < frame_count;) {
    const std::size_t n = std::min(write_chunk_frames, frame_count - done);
    const double* src = frames + done * channels;
    for (std::size_t i = 0; i < n * channels; ++i) {
      if (!std::isfinite(src[i])) {
        throw InputError(w.shown, "frame " +
                                      std::to_string(w.frames_written + done + i / channels) +
                                      ", channel " + std::to_string(i % channels + 1) +
                                      ": the value to write is not finite");
      }
    }
    sf_count_t written = 0;
    if (w.bits > 0) {
      // Integer codes are made here rather than by libsndfile's double→int path, whose scale
      // differs between releases (0x7FFF or 0x8000) and, in 1.2.0 without SFC_SET_CLIPPING,
      // maps −1.0 to −32767 (measured). Code k = round(x · 2^(b−1)) clipped to
      // [−2^(b−1), 2^(b−1) − 1] reads back as exactly k / 2^(b−1) (libsndfile's read
      // normalisation). sf_writef_int takes codes left-justified in 32 bits and drops the
      // low bits by shifting, so k · 2^(32−b) is written exactly.
      const double full = std::ldexp(1.0, w.bits - 1);
      const double lo = -full;
      const double hi = full - 1.0;
      const double justify = std::ldexp(1.0, 32 - w.bits);
      for (std::size_t i = 0; i < n * channels; ++i) {
        const double k = std::clamp(std::round(src[i] * full), lo, hi);
        w.codes[i] = static_cast<std::int32_t>(k * justify);
      }
      written = sf_writef_int(w.file.get(), w.codes.data(), static_cast<sf_count_t>(n));
    } else {
      written = sf_writef_double(w.file.get(), src, static_cast<sf_count_t>(n));
    }
    if (written != static_cast<sf_count_t>(n)) {
      throw InputError(w.shown, "write failed after " + std::to_string(w.frames_written + done) +
                                    " frames (libsndfile: " + sf_strerror(w.file.get()) + ")");
    }
    done += n;
  }
  w.frames_written += frame_count;
}

void SoundFileWriter::close() {
  if (!is_open()) return;
  Impl& w = *impl_;
  const int err = sf_close(w.file.release());
  if (err != 0) {
    throw InputError(w.shown, std::string("cannot finish the sound file (libsndfile: ") +
                                  sf_error_number(err) + ")");
  }
  w.output->commit();
  impl_.reset();
}

}  // namespace lopside
