// Several files of one acquisition read side by side. Scopes commonly save each channel of one
// trigger to its own file on the same sample clock; measuring the power needs the current of
// one file and the voltage of the other, frame by frame, so the files are read in lockstep and
// their time bases are checked to be one and the same.
#include "lopside/joined_source.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>
#include <string_view>
#include <utility>

#include "lopside/channel_roles.hpp"
#include "lopside/error.hpp"
#include "lopside/units.hpp"

namespace lopside {
namespace {

// Two files of one scope clock print the same time column, so their fitted intervals agree to
// rounding; 1e-6 relative is the drift over a million samples of one sample's width at most.
constexpr double kIntervalTolerance = 1e-6;
// Starts may differ by rounding of the first printed time: a tenth of a sample interval shifts
// the voltage against the current by 0.1·2π/N rad at N samples per period (2.5 mrad at 250),
// a power error of at most 1 − cos(2.5 mrad) ≈ 3e-6 relative (plus sin(φ)·2.5e-3 of the
// reactive part), below any probe's tolerance; more is another acquisition.
constexpr double kStartTolerance = 0.1;  // share of the sample interval

// The formats of the text reader: channels there carry their unit, so `--scale` (a WAV-family
// file's full-scale value) does not apply to them.
bool is_text_format(const std::string& format) {
  return format == "csv" || format == "csv-semicolon" || format == "tsv" || format == "text";
}

bool starts_with(std::string_view s, std::string_view prefix) {
  return s.substr(0, prefix.size()) == prefix;
}

// What each file's reader said while guessing roles on its own numbering ("channel 1 'U' taken
// as the voltage (unit V)", assign_roles in channel_roles.cpp) or about its own missing
// --scale (sound_file.cpp): both are said again, once, for the joined channels.
bool is_per_file_note(const std::string& w) {
  if (starts_with(w, "no --scale for channel(s) ")) return true;
  return starts_with(w, "channel ") && (w.find("' taken as the current (") != std::string::npos ||
                                        w.find("' taken as the voltage (") != std::string::npos);
}

// Two values printed with enough digits to tell them apart (4 to 12 significant), so the
// message never reads "starts at 1 ms, the capture at 1 ms".
std::pair<std::string, std::string> distinct_si(double a, double b, std::string_view unit) {
  for (int digits = 4; digits < 12; ++digits) {
    std::string x = format_si(a, unit, digits), y = format_si(b, unit, digits);
    if (x != y) return {std::move(x), std::move(y)};
  }
  return {format_si(a, unit, 12), format_si(b, unit, 12)};
}

const char* kSameAcquisition = "; expected files of one acquisition (the same time base)";

class JoinedSource final : public SampleSource {
 public:
  JoinedSource(std::unique_ptr<SampleSource> main,
               std::vector<std::unique_ptr<SampleSource>> companions, const ReaderOptions& options)
      : info_(main->info()) {
    check_joinable(options, info_.path);
    parts_.resize(1 + companions.size());
    parts_[0].source = std::move(main);
    for (std::size_t k = 0; k < companions.size(); ++k)
      parts_[k + 1].source = std::move(companions[k]);

    info_.channels.clear();
    for (Part& p : parts_) {
      const CaptureInfo& pi = p.source->info();
      p.first_channel = info_.channels.size();
      p.channels = pi.channels.size();
      p.text = is_text_format(pi.format);
      for (ChannelInfo c : pi.channels) {
        c.index = info_.channels.size() + 1;
        c.role = ChannelRole::other;
        info_.channels.push_back(std::move(c));
      }
    }
    for (std::size_t k = 1; k < parts_.size(); ++k) {
      const CaptureInfo& ci = parts_[k].source->info();
      check_time_base(ci);
      if (info_.frames && ci.frames) check_lengths(ci.path, *ci.frames, *info_.frames);
      const std::size_t first = parts_[k].first_channel + 1;
      const std::size_t last = parts_[k].first_channel + parts_[k].channels;
      detail_suffix_ +=
          "; " +
          (first == last ? "channel " + std::to_string(first)
                         : "channels " + std::to_string(first) + "–" + std::to_string(last)) +
          " from " + ci.path;
      // Kept apart by the file's name: both files of a scope state "Sample interval" and the
      // like, and a key must still say which file it came from.
      for (const auto& [key, value] : ci.metadata)
        info_.metadata.emplace_back(ci.path + ": " + key, value);
    }

    info_.detail += detail_suffix_;

    multipliers_.assign(info_.channels.size(), 1.0);
    apply_scales(options);
    const std::vector<double> gains = channel_gains(info_.channels, options, info_.path);
    for (std::size_t c = 0; c < gains.size(); ++c) multipliers_[c] *= gains[c];
    // The member files were opened without --scale/--gain, so their integer full scale is in
    // unscaled units: it is scaled exactly as the samples are, so a sample on a rail still
    // equals its bound (a negative factor swaps the two).
    for (std::size_t c = 0; c < info_.channels.size() && c < multipliers_.size(); ++c) {
      ChannelInfo& ch = info_.channels[c];
      if (!ch.full_scale_low || !ch.full_scale_high) continue;
      const double a = *ch.full_scale_low * multipliers_[c];
      const double b = *ch.full_scale_high * multipliers_[c];
      ch.full_scale_low = std::min(a, b);
      ch.full_scale_high = std::max(a, b);
    }
    assign_roles(info_.channels, options, info_.path, notes_);
  }

  const CaptureInfo& info() const override { return info_; }

  std::size_t read(SampleBlock& block, std::size_t max_frames) override {
    block.channels = info_.channels.size();
    block.frames = 0;
    block.data.clear();
    if (ended_) return 0;
    Part& main = parts_.front();
    const std::size_t n = main.source->read(main.block, max_frames);
    if (n == 0) {
      finish();
      return 0;
    }
    // Each companion gives exactly the main file's n frames; a reader may hand out fewer than
    // asked without having ended, so it is asked again until it has them or ends.
    for (std::size_t k = 1; k < parts_.size(); ++k) {
      Part& p = parts_[k];
      p.gathered.clear();
      std::size_t got = 0;
      while (got < n) {
        const std::size_t m = p.source->read(p.block, n - got);
        if (m == 0) {
          const std::uint64_t main_total = frames_ + n + drain(*main.source);
          check_lengths(p.source->info().path, frames_ + got, main_total);
        }
        p.gathered.insert(p.gathered.end(), p.block.data.begin(),
                          p.block.data.begin() + static_cast<std::ptrdiff_t>(m * p.channels));
        got += m;
      }
    }
    const std::size_t width = info_.channels.size();
    block.frames = n;
    block.data.resize(n * width);
    for (std::size_t f = 0; f < n; ++f) {
      for (std::size_t c = 0; c < main.channels; ++c) {
        block.data[f * width + c] = main.block.value(f, c) * multipliers_[c];
      }
      for (std::size_t k = 1; k < parts_.size(); ++k) {
        const Part& p = parts_[k];
        for (std::size_t c = 0; c < p.channels; ++c) {
          const std::size_t j = p.first_channel + c;
          block.data[f * width + j] = p.gathered[f * p.channels + c] * multipliers_[j];
        }
      }
    }
    frames_ += n;
    return n;
  }

  const std::vector<std::string>& warnings() const override {
    // Rebuilt on each call: the parts' warnings are complete only at their end.
    warnings_.clear();
    for (std::size_t k = 0; k < parts_.size(); ++k) {
      for (const std::string& w : parts_[k].source->warnings()) {
        if (is_per_file_note(w)) continue;
        // A companion's messages use its own channel numbers: its name says whose they are.
        warnings_.push_back(k == 0 ? w : parts_[k].source->info().path + ": " + w);
      }
    }
    for (const std::string& n : notes_) warnings_.push_back(n);
    return warnings_;
  }

  double progress() const override { return parts_.front().source->progress(); }

 private:
  struct Part {
    std::unique_ptr<SampleSource> source;
    std::size_t first_channel = 0;  // 0-based index of its first channel in the joined list
    std::size_t channels = 0;
    bool text = true;
    SampleBlock block;
    std::vector<double> gathered;  // a companion's frames for the current block
  };

  // Start and interval of a companion against the main file's, as known now.
  void check_time_base(const CaptureInfo& ci) const {
    const double dt = 1.0 / info_.sample_rate_hz;
    const double dt_c = 1.0 / ci.sample_rate_hz;
    if (!(std::fabs(dt_c / dt - 1.0) <= kIntervalTolerance)) {
      const auto [a, b] = distinct_si(dt_c, dt, "s");
      throw InputError(ci.path, "sample interval " + a + ", the capture " + info_.path + "'s " + b +
                                    kSameAcquisition);
    }
    if (!(std::fabs(ci.start_time_s - info_.start_time_s) <= kStartTolerance * dt)) {
      const auto [a, b] = distinct_si(ci.start_time_s, info_.start_time_s, "s");
      throw InputError(ci.path, "starts at " + a + ", the capture " + info_.path + " at " + b +
                                    kSameAcquisition);
    }
  }

  void check_lengths(const std::string& companion, std::uint64_t companion_frames,
                     std::uint64_t main_frames) const {
    if (companion_frames == main_frames) return;
    throw InputError(companion, "holds " + std::to_string(companion_frames) +
                                    " samples, the capture " + info_.path + " " +
                                    std::to_string(main_frames) +
                                    "; expected files of one acquisition (the same length)");
  }

  // Reads a source to its end, in bounded blocks, and returns how many frames that was: the
  // exact count makes the length message say by how much the files differ.
  static std::uint64_t drain(SampleSource& s) {
    SampleBlock scratch;
    std::uint64_t total = 0;
    while (const std::size_t m = s.read(scratch, std::size_t{1} << 16)) total += m;
    return total;
  }

  void finish() {
    ended_ = true;
    // Text readers settle rate, start and length only now: check again on the final figures.
    const CaptureInfo& mi = parts_.front().source->info();
    info_.sample_rate_hz = mi.sample_rate_hz;
    info_.start_time_s = mi.start_time_s;
    info_.frames = frames_;
    info_.detail = mi.detail + detail_suffix_;
    for (std::size_t k = 1; k < parts_.size(); ++k) {
      SampleSource& s = *parts_[k].source;
      const std::uint64_t rest = drain(s);
      check_lengths(s.info().path, frames_ + rest, frames_);
      check_time_base(s.info());
    }
  }

  // `--scale` on the joined numbering, applied here since each file was opened without it;
  // value = fraction of full scale × full scale, as the sound reader would have done.
  void apply_scales(const ReaderOptions& options) {
    std::vector<bool> scaled(info_.channels.size(), false);
    for (const auto& [selector, scale] : options.scales) {
      const std::size_t c = find_channel(info_.channels, selector, info_.path);
      const Part& p = part_of(c);
      const ChannelInfo& ch = info_.channels[c];
      const std::string label = std::to_string(ch.index) + " '" + ch.name + "'";
      if (p.text) {
        throw InputError(info_.path, "--scale " + selector + ": channel " + label +
                                         " comes from the text file " + p.source->info().path +
                                         ", whose values are read as written; expected --scale "
                                         "for channels of WAV-like files, --gain otherwise");
      }
      if (!std::isfinite(scale) || !(scale > 0.0)) {
        throw InputError(info_.path, "--scale " + selector +
                                         ": expected the positive physical value of full scale");
      }
      if (scaled[c]) throw InputError(info_.path, "--scale given twice for channel " + label);
      scaled[c] = true;
      multipliers_[c] *= scale;
    }
    std::string unscaled;
    for (std::size_t c = 0; c < info_.channels.size(); ++c) {
      if (scaled[c] || part_of(c).text) continue;
      if (!unscaled.empty()) unscaled += ", ";
      unscaled += std::to_string(c + 1) + " '" + info_.channels[c].name + "'";
    }
    if (!unscaled.empty()) {
      notes_.push_back("no --scale for channel(s) " + unscaled +
                       ": values are fractions of full scale (±1), their unit unknown; give "
                       "--scale CH=VALUE (the physical value of full scale) and --unit CH=UNIT");
    }
  }

  const Part& part_of(std::size_t channel) const {
    for (const Part& p : parts_) {
      if (channel >= p.first_channel && channel < p.first_channel + p.channels) return p;
    }
    return parts_.front();
  }

  std::vector<Part> parts_;
  CaptureInfo info_;
  std::vector<double> multipliers_;
  std::vector<std::string> notes_;  // the joined source's own: roles, scales
  mutable std::vector<std::string> warnings_;
  std::uint64_t frames_ = 0;
  std::string detail_suffix_;  // "; channel 2 from V.csv": appended to the main's detail
  bool ended_ = false;
};

}  // namespace

void check_joinable(const ReaderOptions& options, const std::string& path) {
  if (options.skip_bad_rows) {
    throw InputError(path,
                     "--skip-bad-rows cannot be combined with --with: a row skipped in one file "
                     "would shift every later sample against the other file's; expected files "
                     "without malformed rows");
  }
}

ReaderOptions part_reader_options(const ReaderOptions& options) {
  ReaderOptions part;
  part.rate_hz = options.rate_hz;
  part.skip_bad_rows = false;
  return part;
}

std::unique_ptr<SampleSource> join_captures(std::unique_ptr<SampleSource> main,
                                            std::vector<std::unique_ptr<SampleSource>> companions,
                                            const ReaderOptions& options) {
  return std::make_unique<JoinedSource>(std::move(main), std::move(companions), options);
}

}  // namespace lopside
