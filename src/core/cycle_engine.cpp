// The cycle engine. Three stages run on every frame, each a fixed number of frames behind the
// one before, so that all work is done in one pass with a small ring of recent frames:
//
//   acquisition  the first kAcquireFrames frames are held once to learn the reference's mean
//                and swing, then replayed (a level and a hysteresis band must exist before the
//                first crossing can be told from noise);
//   detector     finds rising crossings of the reference through its running mean plus a band,
//                then refines each with a least-squares line through the samples around it;
//   integrator   kLag frames behind, integrates current and voltage between the fractional
//                boundaries the detector has placed.
#include "lopside/cycle_engine.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <deque>
#include <limits>
#include <stdexcept>

#include "lopside/clipping.hpp"
#include "lopside/edge_weights.hpp"
#include "lopside/harmonic_feed.hpp"

namespace lopside {
namespace {

// The band armed below and triggered above the running mean, as a share of the half swing.
// A quarter of the swing stays clear of white noise up to 3 % of peak rms (its ±4σ excursions
// reach 12 %), and of a DC offset up to 30 % of peak since the band follows the mean; the
// trigger point (14.5° past the mean on a sine) is still on the steep part of the flank, where
// the DOMAIN note says a window edge costs least.
constexpr double kBandShare = 0.25;
// Half-width of the boundary fit as a share of a period, and its limits in samples. ±3 % of a
// period is straight enough on a sine flank (the line's bias is the same every cycle, so it
// cancels in the period) and averages 6 % of the period's samples against noise.
constexpr double kFitShare = 0.03;
constexpr std::size_t kMaxFitHalfWidth = 64;
// The integrator trails the detector by more than the widest fit, so a boundary is always
// known before the integrator reaches it.
constexpr std::size_t kLag = kMaxFitHalfWidth + 4;
constexpr std::size_t kRing = 256;  // ≥ 2·kMaxFitHalfWidth + kLag, a power of two
static_assert(kRing >= 2 * kMaxFitHalfWidth + kLag + 2);
// Smoothing of the level and swing from cycle to cycle: an exponential average over about four
// cycles follows a build-up after ignition or a ±20 % drift without chasing single cycles.
constexpr double kLevelSmoothing = 0.25;
// The swing comes from sample extremes, which noise moves from cycle to cycle more than it
// moves a cycle's mean: it is averaged over about sixteen cycles.
constexpr double kSwingSmoothing = 1.0 / 16;

struct Frame {
  double i = 0, v = 0;  // the reference is one of them (Impl::ref)
};

// Integrands whose integral over a cycle the engine needs, in samples (× dt gives seconds):
// i, i², v, v², v·i, |i| and sign(i)·v·i. Sums over a cycle's samples plus the band-limited
// corrections at its ends and at each zero of the current (edge_weights.hpp): the integral of
// the band-limited signal, not of straight lines between samples (issue 9, item 2).
struct Integrals {
  double i = 0, i2 = 0, v = 0, v2 = 0, p = 0, abs_i = 0, abs_p = 0;
};

struct CycleAccumulator {
  double duration = 0;           // [s]
  double t_pos = 0, t_vpos = 0;  // time with i > 0 and v > 0 [s], zeros by linear interpolation
  Integrals sum;
  // Peaks over the samples of the cycle, and the longest run of equal samples at each.
  double max_i = -std::numeric_limits<double>::infinity();
  double min_i = std::numeric_limits<double>::infinity();
  double max_v = -std::numeric_limits<double>::infinity();
  double min_v = std::numeric_limits<double>::infinity();
  std::uint32_t run_max = 0, best_run_max = 0, run_min = 0, best_run_min = 0;
  // Clipping evidence for the current and the longest run at each peak: three samples of the
  // flank around the run, turned so the peak points up (see CycleEngine::Impl::flank); set by
  // the engine as each run starts and ends.
  CrestFlank flank_run_max, flank_best_max, flank_run_min, flank_best_min;
  double prev_sample_i = std::numeric_limits<double>::quiet_NaN();
  std::uint64_t samples = 0;
  std::uint64_t max_at = 0, min_at = 0;  // frame indices of the current's extremes
  // Burning voltage: the voltage while |i| exceeds these thresholds (set from the previous
  // cycle's peaks; infinite, so nothing counts, in the first cycle).
  double burn_threshold_pos = std::numeric_limits<double>::infinity();
  double burn_threshold_neg = -std::numeric_limits<double>::infinity();
  double burn_v_pos = 0, burn_v_neg = 0;
  std::uint64_t burn_n_pos = 0, burn_n_neg = 0;

  void sample(double i, double v) {
    ++samples;
    sum.i += i;
    sum.i2 += i * i;
    sum.v += v;
    sum.v2 += v * v;
    sum.p += v * i;
    sum.abs_i += std::fabs(i);
    sum.abs_p += i > 0 ? v * i : -(v * i);
    if (i > burn_threshold_pos) {
      burn_v_pos += v;
      ++burn_n_pos;
    } else if (i < burn_threshold_neg) {
      burn_v_neg += v;
      ++burn_n_neg;
    }
    if (i > max_i) {
      max_i = i;
      run_max = best_run_max = 1;
      flank_best_max = flank_run_max;
    } else if (i == max_i) {
      run_max = (prev_sample_i == i) ? run_max + 1 : 1;
      if (run_max > best_run_max) {
        best_run_max = run_max;
        flank_best_max = flank_run_max;
      }
    }
    if (i < min_i) {
      min_i = i;
      run_min = best_run_min = 1;
      flank_best_min = flank_run_min;
    } else if (i == min_i) {
      run_min = (prev_sample_i == i) ? run_min + 1 : 1;
      if (run_min > best_run_min) {
        best_run_min = run_min;
        flank_best_min = flank_run_min;
      }
    }
    prev_sample_i = i;
    max_v = std::max(max_v, v);
    min_v = std::min(min_v, v);
  }

  // The times with i > 0 and v > 0 in one straight piece of duration h [s] from (ia, va) to
  // (ib, vb), split at its zero: the linear zero is within a second-order term of the
  // band-limited one, and a time share needs no more.
  void piece(double h, double ia, double ib, double va, double vb) {
    if (h <= 0) return;
    duration += h;
    if ((ia > 0) == (ib > 0)) {
      if (ia > 0) t_pos += h;
    } else {
      const double z = ia / (ia - ib);
      t_pos += ia > 0 ? z * h : (1 - z) * h;
    }
    if ((va > 0) == (vb > 0)) {
      if (va > 0) t_vpos += h;
    } else {
      const double z = va / (va - vb);
      t_vpos += va > 0 ? z * h : (1 - z) * h;
    }
  }
};

// What a kept cycle tells the detector (its reference's mean and half swing, the current's
// half swing, its period), applied once the cycle is committed.
struct LevelUpdate {
  double ref_mean = 0, ref_half = 0, i_half = 0;
  double period_samples = 0;  // 0: the period does not update the running one
};
struct HeldCycle {
  CycleRecord record;
  double end_s = 0;
  LevelUpdate update;
};

struct Accumulators {
  BatchMeans dc, ms, ac_ms, q_pos, q_neg, asym, share, peak_pos, peak_neg;
  BatchMeans v_mean, v_ms, v_peak_pos, v_peak_neg, v_share, power, e_pos, e_neg, burn_pos, burn_neg;
};

}  // namespace

struct CycleEngine::Impl {
  CycleConfig cfg;
  Sink sink;
  double dt = 0;
  bool ref_is_voltage = false;

  // Acquisition.
  bool acquiring = true;
  std::vector<Frame> held;
  // Which held frames were not finite in the file (held at the last finite value), apart from
  // the frames: a flag in each would pad a frame from 24 to 32 bytes, 8 MB of the look-ahead.
  std::vector<std::uint8_t> held_bad;  // bytes, not bits: read a million times in look()

  // Levels of the reference: running mean and half swing.
  double level_mean = 0, half_swing = 0;
  bool level_known = false;

  // Ring of the last kRing frames, by global index.
  std::vector<Frame> ring = std::vector<Frame>(kRing);
  std::uint64_t next_index = 0;  // global index of the next frame to enter the ring

  // Detector.
  bool armed = false;
  // Triggers waiting for the samples their boundary fit needs: (index, level).
  struct Trigger {
    std::uint64_t index = 0;
    double level = 0, band = 0;
  };
  std::deque<Trigger> pending;
  std::size_t fit_half_width = kMaxFitHalfWidth;
  std::deque<double> boundaries;  // fractional global indices, increasing
  std::uint64_t crossings = 0;

  // Integrator.
  std::uint64_t integrated = 0;  // frames integrated so far (next index to integrate)
  bool in_cycle = false;
  double cycle_start = 0;  // fractional index
  CycleAccumulator acc;
  bool leading_partial = false;
  std::uint64_t cycle_index = 0;

  // Summary.
  Accumulators sums;
  CycleSummary summary;
  double first_start = 0, last_end = 0;
  double prev_period = 0;
  double sum_dperiod2 = 0;
  std::uint64_t n_dperiod = 0;
  double clip_max = -std::numeric_limits<double>::infinity();
  double clip_min = std::numeric_limits<double>::infinity();
  std::uint64_t clip_max_count = 0, clip_min_count = 0;
  // Clipping rule (issue 9): q, the smallest non-zero step between consecutive current samples
  // so far (one quantisation step of the recorder, or less), and the samples per cycle
  // expected for the flank look-back (from the acquisition, then from each closed cycle).
  double min_step = std::numeric_limits<double>::infinity();
  double spc_estimate = std::numeric_limits<double>::infinity();
  // flank_spacing(spc_estimate), or of 680 samples per cycle while no cycle is known; flank()
  // needs it at nearly every sample of a rising or falling half.
  std::uint64_t flank_h = flank_spacing(680.0);
  bool finished = false;
  // The harmonics run on a thread of their own (harmonic_feed.hpp), fed in the engine's order.
  std::unique_ptr<HarmonicFeed> harmonic;
  bool last_cycle_excluded = false;
  // The open cycle has outlasted any regular period and its harmonic block was let go.
  bool harmonic_let_go = false;

  // Outliers and regularity (issue 9, items 5 and 6).
  std::uint64_t consumed = 0;               // frames handed to consume() so far
  double last_good_i = 0, last_good_v = 0;  // the last finite samples, held over bad ones
  std::deque<std::pair<std::uint64_t, std::uint64_t>> bad_runs;  // not-finite frames, inclusive
  double typical_i = 0;       // the current's typical half swing (glitch test)
  int glitch_streak = 0;      // consecutive cycles the glitch test flagged
  double period_nominal = 0;  // the running period [samples], 0 until known
  std::vector<double> early_periods;
  // The last kept cycle, committed one cycle late so that a glitch at the start of the cycle
  // after it (which reaches it through the edge corrections) can still exclude it.
  std::optional<HeldCycle> held_back;
  std::uint64_t last_committed = std::numeric_limits<std::uint64_t>::max();
  std::uint64_t stretches = 0;  // runs of consecutive kept cycles
  double kept_span_s = 0;       // Σ periods of the kept cycles
  double kept_span2_s2 = 0;     // Σ periods² of the kept cycles
  double jitter_noise_var = 0;  // Σ of the boundaries' variance the noise explains [samples²]
  std::uint64_t jitter_noise_n = 0;
  BatchMeans crest_peak;

  const Frame& at(std::uint64_t index) const { return ring[index & (kRing - 1)]; }
  const InterpolationTableView interpolation = interpolation_table_view();
  // The end-correction kernels of 2, 4, 8 and 16 taps a side (edge()).
  const EdgeTableView edge_tables[4] = {edge_table_view(2), edge_table_view(4), edge_table_view(8),
                                        edge_table_view(kEdgeHalfTaps)};

  // A NaN or infinite sample is held at the last finite value, so that no sum turns to NaN and
  // no crossing is invented, and is marked: every cycle it reaches is left out.
  // The reference channel's value: not stored in each frame (8 MB of the look-ahead), and
  // chosen once before the first frame is pushed (learn_levels).
  double ref(const Frame& f) const { return ref_is_voltage ? f.v : f.i; }

  Frame frame_of(const SampleBlock& block, std::size_t f, bool& bad) {
    Frame fr;
    bad = false;
    double i = block.value(f, cfg.current_channel);
    double v = cfg.voltage_channel ? block.value(f, *cfg.voltage_channel) : 0.0;
    const std::uint64_t index = consumed++;
    if (!std::isfinite(i) || !std::isfinite(v)) {
      bad = true;
      ++summary.not_finite_samples;
      if (!bad_runs.empty() && bad_runs.back().second + 1 == index) {
        bad_runs.back().second = index;
      } else {
        bad_runs.emplace_back(index, index);
      }
      if (!std::isfinite(i)) i = last_good_i;
      if (!std::isfinite(v)) v = last_good_v;
    }
    last_good_i = i;
    last_good_v = v;
    fr.i = i - cfg.current_zero_a;
    fr.v = v;
    return fr;
  }

  bool touches_bad(double lo, double hi) const {
    for (const auto& [first, last] : bad_runs) {
      if (static_cast<double>(last) >= lo && static_cast<double>(first) <= hi) return true;
    }
    return false;
  }

  // What the look-ahead shows of one channel: its level and swing, its rising crossings with the
  // band, and how regular their intervals are.
  struct Look {
    double mean = 0, half_swing = 0;
    std::uint64_t count = 0, first = 0, last = 0;  // crossings, first and last frame
    double period = 0;                             // median interval [samples]
    double regular_share = 0;  // intervals within ±kPeriodTolerance of the median
    std::size_t intervals = 0;
    bool regular() const { return intervals >= 3 && regular_share >= 0.8; }
  };

  static Look look(const std::vector<Frame>& frames, const std::vector<std::uint8_t>& bad,
                   bool voltage) {
    Look k;
    const auto val = [voltage](const Frame& f) { return voltage ? f.v : f.i; };
    std::vector<double> v;
    v.reserve(frames.size());
    for (std::size_t j = 0; j < frames.size(); ++j) {
      if (!bad[j]) v.push_back(val(frames[j]));
    }
    if (v.size() < 2) return k;
    // Robust extremes, the 0.1 % and 99.9 % quantiles: one glitch cannot set the band.
    const auto quantile = [&v](double share) {
      const auto idx = static_cast<std::size_t>(share * static_cast<double>(v.size() - 1));
      std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(idx), v.end());
      return v[idx];
    };
    const double lo = quantile(0.001), hi = quantile(0.999);
    const double mid = 0.5 * (lo + hi), half = 0.5 * (hi - lo);
    // Frames are passed by their index: the flags live apart from them (held_bad).
    const auto plausible = [&](std::size_t j) {
      return !bad[j] && std::fabs(val(frames[j]) - mid) <= CycleEngine::kGlitchFactor * half;
    };
    double sum = 0;
    std::size_t n = 0;
    for (std::size_t j = 0; j < frames.size(); ++j) {
      if (plausible(j)) {
        sum += val(frames[j]);
        ++n;
      }
    }
    k.mean = n > 0 ? sum / static_cast<double>(n) : mid;
    k.half_swing = half;
    if (!(half > 0)) return k;
    const double band = kBandShare * half;
    bool arm = val(frames.front()) < k.mean + band;
    std::vector<std::uint64_t> trig;
    for (std::size_t j = 1; j < frames.size(); ++j) {
      if (!plausible(j)) continue;
      const double r = val(frames[j]);
      if (r < k.mean - band) arm = true;
      if (arm && r > k.mean + band) {
        arm = false;
        trig.push_back(j);
      }
    }
    k.count = trig.size();
    if (trig.size() < 2) return k;
    k.first = trig.front();
    k.last = trig.back();
    // The mean over whole cycles (the held frames' partial cycles would bias it), and the half
    // swing as the median of the cycles' own (max − min)/2: the estimator the engine then
    // updates cycle by cycle. The record's overall extremes exceed a cycle's sampled ones at
    // few samples per cycle, and that difference would drift the trigger level, hence the
    // boundaries' phase, over the first cycles.
    double whole_sum = 0;
    std::size_t whole_n = 0;
    std::vector<double> halves, periods;
    for (std::size_t c = 0; c + 1 < trig.size(); ++c) {
      double c_lo = std::numeric_limits<double>::infinity(), c_hi = -c_lo;
      for (std::uint64_t j = trig[c]; j < trig[c + 1]; ++j) {
        if (!plausible(j)) continue;
        const double x = val(frames[j]);
        whole_sum += x;
        ++whole_n;
        c_lo = std::min(c_lo, x);
        c_hi = std::max(c_hi, x);
      }
      if (c_hi >= c_lo) halves.push_back(0.5 * (c_hi - c_lo));
      periods.push_back(static_cast<double>(trig[c + 1] - trig[c]));
    }
    if (whole_n > 0) k.mean = whole_sum / static_cast<double>(whole_n);
    const auto median = [](std::vector<double> x) {
      const std::size_t m = x.size() / 2;
      std::nth_element(x.begin(), x.begin() + static_cast<std::ptrdiff_t>(m), x.end());
      return x[m];
    };
    if (!halves.empty()) k.half_swing = median(halves);
    k.period = median(periods);
    k.intervals = periods.size();
    std::size_t regular = 0;
    for (double p : periods) {
      regular += std::fabs(p - k.period) <= CycleEngine::kPeriodTolerance * k.period ? 1 : 0;
    }
    k.regular_share = static_cast<double>(regular) / static_cast<double>(periods.size());
    return k;
  }

  // Whether the frames, measured with `reference` setting the cycles, are periodic with at
  // least two whole cycles (a second engine over the look-ahead, without harmonics).
  bool trial_periodic(const std::vector<Frame>& frames, CycleReference reference) const {
    CycleConfig c;
    c.sample_rate_hz = cfg.sample_rate_hz;
    c.current_channel = 0;
    c.voltage_channel = 1;
    c.reference = reference;
    CycleEngine trial(c);
    SampleBlock block;
    block.channels = 2;
    const double nan = std::numeric_limits<double>::quiet_NaN();
    constexpr std::size_t kChunk = 1 << 16;
    // A quarter of the look-ahead is enough to judge (at 50 Hz and 1 MS/s still 13 cycles) and
    // keeps the trial at a fraction of the measurement's cost.
    const std::size_t judged = std::min<std::size_t>(frames.size(), kAcquireFrames / 4);
    for (std::size_t first = 0; first < judged; first += kChunk) {
      const std::size_t n = std::min(kChunk, judged - first);
      block.frames = n;
      block.data.resize(2 * n);
      for (std::size_t j = 0; j < n; ++j) {
        const Frame& f = frames[first + j];
        const bool bad = held_bad[first + j];
        block.data[2 * j] = bad ? nan : f.i;
        block.data[2 * j + 1] = bad ? nan : f.v;
      }
      trial.consume(block);
    }
    const CycleSummary& s = trial.finish();
    return s.periodic && s.cycles >= 2;
  }

  void learn_levels(std::vector<Frame>& frames) {
    if (frames.empty()) return;
    // Issue 9, item 5: the voltage is the natural reference (it crosses cleanly whatever the
    // discharge does), but a voltage that is not periodic (a converter's output with a step,
    // a channel that is not the supply's) would cut the current into meaningless "cycles";
    // the current is used then, when it is regular, and the output says so.
    // The judgement is the engine's own: the look-ahead is measured with each reference in
    // turn, and a reference is periodic when that measurement is (judge_record).
    if (cfg.voltage_channel && cfg.reference == CycleReference::automatic &&
        !trial_periodic(frames, CycleReference::voltage) &&
        trial_periodic(frames, CycleReference::current)) {
      ref_is_voltage = false;
      summary.voltage_periodic = false;
      summary.reference_note =
          "the voltage's rising crossings are not periodic in the first " +
          std::to_string(frames.size()) +
          " samples (as many or more irregular cycles as regular ones) while the current's "
          "are: the current sets the cycles, and the voltage is no evidence of how the supply "
          "switches (--reference voltage insists on the voltage)";
    }
    const Look k = look(frames, held_bad, ref_is_voltage);
    level_mean = k.mean;
    half_swing = k.half_swing;
    level_known = true;
    typical_i = ref_is_voltage ? look(frames, held_bad, false).half_swing : k.half_swing;
    // The fit's half-width is fixed for the whole capture from the period seen here: a width
    // that changed between boundaries would change the fit's (small, curvature) bias between
    // them and so the periods. Without two crossings here the period exceeds the look-ahead,
    // and the widest fit is the right one.
    if (k.count >= 2) {
      const double spc = static_cast<double>(k.last - k.first) / static_cast<double>(k.count - 1);
      fit_half_width = std::clamp<std::size_t>(
          static_cast<std::size_t>(std::lround(kFitShare * spc)), 1, kMaxFitHalfWidth);
      spc_estimate = spc;
      flank_h = flank_spacing(spc_estimate);
      if (k.regular()) period_nominal = k.period;
    } else {
      fit_half_width = kMaxFitHalfWidth;
    }
  }

  void push(const Frame& fr) {
    const std::uint64_t n = next_index++;
    ring[n & (kRing - 1)] = fr;
    detect(n);
    if (n >= kLag) integrate_up_to(n - kLag);
  }

  // The look-ahead is full (or the capture ended): learn the levels, then measure the held
  // frames as any others.
  void end_acquisition() {
    acquiring = false;
    learn_levels(held);
    const Frame* frames = held.data();
    const auto get = [frames](std::size_t k, Frame& fr) {
      fr = frames[k];
      return true;
    };
    for (std::size_t k = 0; k < held.size();) {
      k = quick_run(get, k, held.size());
      if (k < held.size()) push(held[k++]);
    }
    std::vector<Frame>().swap(held);
    std::vector<std::uint8_t>().swap(held_bad);
  }

  // --- the quick path ----------------------------------------------------------------------
  // Most frames change nothing but the open cycle's sums: the detector neither arms nor
  // triggers nor has a crossing to refine, and the integrator's frame holds no boundary, no
  // zero of the current and no flat run at a peak. quick_run() takes such frames in one tight
  // loop with the running sums in registers (members written through the ring could alias
  // them), doing for each exactly the arithmetic push() would, in the same order, so the
  // results are the same to the last bit; the first frame that needs more goes to push().
  // `get(k, frame)` gives the k-th frame as push() would receive it, or false for one that
  // frame_of() must see (not finite). Returns the index of the first frame not taken.
  template <typename Get>
  std::size_t quick_run(Get get, std::size_t from, std::size_t to) {
    return cfg.voltage_channel ? quick_run<true>(get, from, to) : quick_run<false>(get, from, to);
  }
  // Without a voltage channel the voltage's sums are never read (close_cycle reads them only
  // with one, and the burning voltage of a cycle is then 0 or NaN by its counts alone), so
  // that loop leaves them out: fewer running values than registers.
  template <bool kVoltage, typename Get>
  std::size_t quick_run(Get get, std::size_t from, std::size_t to) {
    if (!cfg.quick_path || !in_cycle || acc.samples == 0 ||
        integrated != next_index - std::min(next_index, kLag) || next_index < kLag + 2 ||
        !level_known)
      return from;
    const std::uint64_t wait = refine_wait();
    std::uint64_t refine_due =
        pending.empty() ? std::numeric_limits<std::uint64_t>::max() : pending.front().index + wait;
    const double next_boundary =
        boundaries.empty() ? std::numeric_limits<double>::infinity() : boundaries.front();
    // detect(): the same band and levels (they change only when a cycle closes).
    const bool live = half_swing > 0;
    const double band = kBandShare * half_swing;
    const double lo = level_mean - band, hi = level_mean + band;
    const double let_go = harmonic && !harmonic_let_go && period_nominal > 0
                              ? (1 + kPeriodTolerance) * period_nominal + 1
                              : std::numeric_limits<double>::infinity();
    // The open cycle's running figures, as CycleAccumulator::sample() and piece() update them.
    CycleAccumulator& c = acc;
    Integrals sum = c.sum;
    double duration = c.duration, t_pos = c.t_pos, t_vpos = c.t_vpos;
    double max_i = c.max_i, min_i = c.min_i, max_v = c.max_v, min_v = c.min_v;
    double prev_i = c.prev_sample_i;
    double burn_v_pos = c.burn_v_pos, burn_v_neg = c.burn_v_neg;
    std::uint64_t burn_n_pos = c.burn_n_pos, burn_n_neg = c.burn_n_neg, samples = c.samples;
    const double burn_pos = c.burn_threshold_pos, burn_neg = c.burn_threshold_neg;
    double step_min = min_step;
    const double h = 1.0 * dt;  // (to − from)·dt of a whole piece, as add_piece() has it
    std::uint64_t n = next_index;
    // A new extreme's entering flank is taken when the run of frames ends (or the extreme is
    // left), not at each of the many new extremes of a rising or falling flank. It looks back
    // at most 1 + 2·kMaxFlankSpacing frames from the extreme, which the ring still holds
    // kChunk frames later.
    constexpr std::uint64_t kNone = std::numeric_limits<std::uint64_t>::max();
    constexpr std::size_t kChunk = 32;
    static_assert(kRing >= kChunk + kLag + 2 * kMaxFlankSpacing + 2);
    std::uint64_t new_max_at = kNone, new_min_at = kNone;
    const auto settle_max = [&] {
      if (new_max_at == kNone) return;
      c.max_at = new_max_at;
      c.flank_run_max = c.flank_best_max = flank_entering(new_max_at, +1.0);
      c.run_max = c.best_run_max = 1;
      new_max_at = kNone;
    };
    const auto settle_min = [&] {
      if (new_min_at == kNone) return;
      c.min_at = new_min_at;
      c.flank_run_min = c.flank_best_min = flank_entering(new_min_at, -1.0);
      c.run_min = c.best_run_min = 1;
      new_min_at = kNone;
    };
    std::size_t k = from;
    for (bool stop = false; !stop && k < to;) {
      const std::size_t chunk_end = std::min(to, k + kChunk);
      // The chunk's current samples for the harmonics, handed over at once.
      double harmonic_values[kChunk];
      std::size_t harmonic_count = 0;
      const std::uint64_t harmonic_first = n - kLag;
      for (; k < chunk_end; ++k) {
        // Quick unless: the frame is not finite, a refine is due, a boundary lies in the
        // integrator's piece, the current changes sign there, the sample ties a running
        // extreme (or the cycle holds one sample, both extremes at once), or the cycle has
        // outlasted any regular period (its harmonic block is let go).
        Frame fr;
        const std::uint64_t m = n - kLag;
        if (!get(k, fr) || n >= refine_due || next_boundary < static_cast<double>(m)) {
          stop = true;
          break;
        }
        const Frame a = at(m - 1);
        const Frame b = at(m);
        if ((a.i > 0) != (b.i > 0) || b.i == max_i || b.i == min_i ||
            (prev_i == max_i && prev_i == min_i) || static_cast<double>(m) - cycle_start > let_go) {
          stop = true;
          break;
        }
        // The frame is quick: enter it, detect on it as detect() would (no refine is due), and
        // integrate frame m as integrate_frame() would.
        ring[n & (kRing - 1)] = fr;
        ++n;
        if (live) {
          const double r = ref(fr);
          if (r < lo) armed = true;
          if (armed && r > hi) {
            armed = false;
            pending.push_back(Trigger{n - 1, hi, band});
            ++crossings;
            if (pending.size() == 1) refine_due = n - 1 + wait;
          }
        }
        {
          // add_piece(a, b, m − 1, m − 1, m), fa = 0, fb = 1. The current keeps its sign over
          // the piece (tested above), so CycleAccumulator::piece() adds h to t_pos exactly when
          // a.i > 0: its ia is a.i, and where its ib rounds to 0 the share z = ia/ia is 1.
          duration += h;
          if (a.i > 0) t_pos += h;
          if constexpr (kVoltage) {
            const double va = a.v + 0.0 * (b.v - a.v), vb = a.v + 1.0 * (b.v - a.v);
            if ((va > 0) == (vb > 0)) {
              if (va > 0) t_vpos += h;
            } else {
              const double z = va / (va - vb);
              t_vpos += va > 0 ? z * h : (1 - z) * h;
            }
          }
        }
        harmonic_values[harmonic_count++] = b.i;
        const double step = std::fabs(b.i - a.i);
        if (step > 0) step_min = std::min(step_min, step);
        // CycleAccumulator::sample(b.i, b.v) and the new extremes' flanks; no sample here ties
        // an extreme or leaves one (the tests above), so the runs there are new runs of one.
        const double i = b.i, v = b.v;
        ++samples;
        sum.i += i;
        sum.i2 += i * i;
        sum.abs_i += std::fabs(i);
        if constexpr (kVoltage) {
          sum.v += v;
          sum.v2 += v * v;
          sum.p += v * i;
          sum.abs_p += i > 0 ? v * i : -(v * i);
          if (i > burn_pos) {
            burn_v_pos += v;
            ++burn_n_pos;
          } else if (i < burn_neg) {
            burn_v_neg += v;
            ++burn_n_neg;
          }
        } else {
          burn_n_pos += i > burn_pos ? 1 : 0;
          burn_n_neg += !(i > burn_pos) && i < burn_neg ? 1 : 0;
        }
        // A run at a peak that ends here: merge the flank leaving it, as integrate_frame() does
        // (the ring holds frame n − 1 now, as push() has it before integrating).
        if (prev_i == max_i && i < max_i) {
          settle_max();
          if (c.run_max == c.best_run_max) merge_flank(c.flank_best_max, flank_leaving(m, +1.0, n));
        }
        if (prev_i == min_i && i > min_i) {
          settle_min();
          if (c.run_min == c.best_run_min) merge_flank(c.flank_best_min, flank_leaving(m, -1.0, n));
        }
        if (i > max_i) {
          max_i = i;
          new_max_at = m;
        }
        if (i < min_i) {
          min_i = i;
          new_min_at = m;
        }
        prev_i = i;
        if constexpr (kVoltage) {
          max_v = std::max(max_v, v);
          min_v = std::min(min_v, v);
        }
      }
      settle_max();
      settle_min();
      if (harmonic && harmonic_count > 0)
        harmonic->on_samples(harmonic_first, harmonic_values, harmonic_count);
    }
    if (n > next_index) {
      c.sum = sum;
      c.duration = duration;
      c.t_pos = t_pos;
      c.t_vpos = t_vpos;
      c.max_i = max_i;
      c.min_i = min_i;
      c.max_v = max_v;
      c.min_v = min_v;
      c.prev_sample_i = prev_i;
      c.burn_v_pos = burn_v_pos;
      c.burn_v_neg = burn_v_neg;
      c.burn_n_pos = burn_n_pos;
      c.burn_n_neg = burn_n_neg;
      c.samples = samples;
      min_step = step_min;
      next_index = n;
      integrated = n - kLag;
    }
    return k;
  }

  // --- detector ---------------------------------------------------------------------------
  // Frames a trigger waits before it is refined: its fit's half-width, and kEdgeHalfTaps for
  // the band-limited crossing (refine()).
  std::uint64_t refine_wait() const {
    return std::max<std::uint64_t>(fit_half_width, kEdgeHalfTaps + 1);
  }
  void detect(std::uint64_t n) {
    const double r = ref(at(n));
    const std::uint64_t wait = refine_wait();
    while (!pending.empty() && n >= pending.front().index + wait) {
      refine(pending.front());
      pending.pop_front();
    }
    if (!level_known || half_swing <= 0) return;
    const double band = kBandShare * half_swing;
    // A capture that starts below the trigger level and rises through it has its first
    // crossing there: arming at the first sample counts it (once; re-arming needs the band).
    if (r < level_mean - band || (n == 0 && r < level_mean + band)) armed = true;
    if (armed && n > 0 && r > level_mean + band) {
      armed = false;
      pending.push_back(Trigger{n, level_mean + band, band});
      ++crossings;
    }
  }

  // The crossing of trigger_level, from a least-squares line through 2·w samples centred on
  // the first sample pair that straddles it: noise at one sample moves the boundary by
  // 1/(2w) as much as plain two-point interpolation would.
  void refine(const Trigger& trigger) {
    const std::uint64_t t = trigger.index;
    const double trigger_level = trigger.level;
    const std::size_t w = fit_half_width;
    // A flank stays up: the samples from the trigger on must hold above the middle of the band
    // for a hundredth of a period (at least two samples). A sine crossing the trigger level
    // (14.5° past the mean) stays above it for ~165°, and noise would have to fall by an
    // eighth of the swing to break the run; a lone spike (a rectifier's turn-off overshoot in
    // the dead time, seen on real mains captures) does not stay, and is not a crossing.
    {
      const double spc = std::isfinite(spc_estimate) ? spc_estimate : 0.0;
      const auto k = static_cast<std::uint64_t>(
          std::clamp(std::lround(0.01 * spc), 2L, static_cast<long>(kEdgeHalfTaps + 1)));
      for (std::uint64_t j = t; j < t + k && j < next_index; ++j) {
        if (ref(at(j)) <= trigger_level - 0.5 * trigger.band) {
          --crossings;
          armed = true;  // the samples before the spike had armed the detector
          return;
        }
      }
    }
    // A crossing too near either end of the capture for the full fit is not used: a boundary
    // placed by another rule would carry another bias, and the cycle next to it another
    // period. The stretch simply becomes part of the partial cycle at that end.
    if (t < w || t + w > next_index) return;
    double x = std::numeric_limits<double>::quiet_NaN();
    {
      double sx = 0, sy = 0, sxx = 0, sxy = 0, syy = 0;
      const double n = static_cast<double>(2 * w);
      for (std::uint64_t j = t - w; j < t + w; ++j) {
        const double xj = static_cast<double>(j) - static_cast<double>(t);
        const double yj = ref(at(j));
        sx += xj;
        sy += yj;
        sxx += xj * xj;
        sxy += xj * yj;
        syy += yj * yj;
      }
      const double d = n * sxx - sx * sx;
      const double slope = (n * sxy - sx * sy) / d;
      const double intercept = (sy - slope * sx) / n;
      if (slope > 0) {
        const double off = (trigger_level - intercept) / slope;
        if (off >= -static_cast<double>(w) && off <= static_cast<double>(w) - 1) {
          x = static_cast<double>(t) + off;
          // What the reference's own noise explains of this boundary's error: the variance of
          // a least-squares line's crossing, σ²/b²·(1/n + (x − x̄)²/Sxx), σ² from the residuals
          // (any regression text, e.g. Draper & Smith, Applied Regression Analysis, 1.4). The
          // residuals also hold the flank's curvature, so this errs towards explaining more.
          if (w >= 3) {
            const double ss = std::max(syy - intercept * sy - slope * sxy, 0.0);
            const double sxx_c = sxx - sx * sx / n, xm = sx / n;
            const double var_y = ss / (n - 2);
            jitter_noise_var += var_y / (slope * slope) * (1 / n + (off - xm) * (off - xm) / sxx_c);
            ++jitter_noise_n;
          }
        }
      }
    }
    if (!std::isfinite(x)) {
      // The pair around the trigger. The level may have moved between its two samples (a cycle
      // committed in between), leaving both on one side of it: the share is kept inside the
      // pair, or a boundary thousands of samples away would be fitted (found by fuzzing).
      const double a = ref(at(t - 1)), b = ref(at(t));
      const double share = b > a ? (trigger_level - a) / (b - a) : 1.0;
      x = static_cast<double>(t - 1) + (std::isfinite(share) ? std::clamp(share, 0.0, 1.0) : 1.0);
    }
    // With few samples per cycle the fit is a straight line through two or four samples that
    // lie up to 60° of phase apart, and its error changes with where the samples fall: the
    // boundaries jitter by ~0.05 sample at 6 samples per cycle, which moves the fundamental and,
    // through the record's two end boundaries, the means by ~1e-5. There the crossing of the
    // band-limited reconstruction is found instead (two secant steps from the fit); with many
    // samples per cycle the fit's averaging over noise is worth more.
    // A boundary too near an end for the reconstruction is not used at all: mixed with
    // boundaries placed by the straight line it would carry another bias, and the span of the
    // record (hence the fundamental) another length.
    if (w <= 2) {
      if (t < kEdgeHalfTaps + 1 || t + kEdgeHalfTaps + 1 > next_index) return;
      const double level = trigger_level;
      const auto field = [this](const Frame& f) { return ref(f); };
      const Window win = gather(static_cast<std::uint64_t>(std::floor(x - 1.0)), field);
      x = secant_root([this, level, &win,
                       &field](double at_x) { return reconstruct_in(win, at_x, field) - level; },
                      x, x - 1.0, x + 1.0);
    }
    // Boundaries must increase, and not fall behind the integrator.
    const double floor_index = static_cast<double>(integrated);
    if (x < floor_index) x = floor_index;
    if (!boundaries.empty() && x <= boundaries.back()) return;
    boundaries.push_back(x);
  }

  // --- integrator ------------------------------------------------------------------------
  void integrate_up_to(std::uint64_t last) {
    while (integrated <= last) integrate_frame(integrated++);
  }

  // The longest kernel (edge_weights.hpp) whose samples around x all exist: 16 taps a side,
  // shorter within 16 samples of either end of the capture; 0 when not even 4 a side exist
  // (4 a side still integrate a sine of 6 samples per cycle to 5e-5 of its RMS; 2 a side only
  // to 1e-2, so a boundary that close to an end is not used and its stretch becomes part of
  // the partial cycle there).
  int edge_half(double x) const {
    const double base = std::floor(x);
    for (int half : {kEdgeHalfTaps, 8, 4}) {
      if (base >= half - 1 && base + half < static_cast<double>(next_index)) return half;
    }
    return 0;
  }

  // The band-limited end corrections δ(x) of every integrand at a fractional index x, with a
  // kernel of `half` taps a side (edge_half(x) > 0).
  Integrals edge(double x, int half, bool sign_terms_only = false) const {
    const double base = std::floor(x);
    const auto n0 = static_cast<std::uint64_t>(base);
    // edge_weights(x − base, half), each weight formed where it is used.
    const EdgeTableView& table = edge_tables[half >= kEdgeHalfTaps ? 3
                                             : half >= 8           ? 2
                                             : half >= 4           ? 1
                                                                   : 0];
    const EdgeTableView::Position p = table.at(x - base);
    Integrals d;
    for (int j = 0; j < 2 * half; ++j) {
      const Frame& f =
          at(n0 + static_cast<std::uint64_t>(j + 1) - static_cast<std::uint64_t>(half));
      const double c = EdgeTableView::weight(p, static_cast<std::size_t>(j));
      d.i += c * f.i;
      d.p += c * f.v * f.i;
      if (sign_terms_only) continue;  // a zero of the current changes only ∫|i| and ∫sign(i)·v·i
      d.i2 += c * f.i * f.i;
      d.v += c * f.v;
      d.v2 += c * f.v * f.v;
    }
    return d;
  }

  // The band-limited value at fractional index x of the current (or the reference) from the
  // 2·kEdgeHalfTaps samples around it, which must be in the ring.
  template <typename Field>
  double reconstruct(double x, Field field) const {
    const double base = std::floor(x);
    const InterpolationRows k = interpolation.rows_at(x - base);
    const auto n0 = static_cast<std::uint64_t>(base);
    double r = 0, s = 0;
    row_sums(
        k, [&](std::size_t j) { return field(at(n0 + j + 1 - kEdgeHalfTaps)); }, r, s);
    return r + k.share * s;
  }
  // Σ (row + share·step)·y as Σ row·y and Σ step·y, each in two partial sums (shorter chains of
  // dependent additions), without forming the 32 weights; y(j) is the j-th tap's sample.
  template <typename Y>
  static void row_sums(const InterpolationRows& k, Y y, double& r, double& s) {
    double r0 = 0, r1 = 0, s0 = 0, s1 = 0;
    for (std::size_t j = 0; j < kEdgeTaps; j += 2) {
      const double ya = y(j);
      const double yb = y(j + 1);
      r0 += k.row[j] * ya;
      s0 += k.step[j] * ya;
      r1 += k.row[j + 1] * yb;
      s1 += k.step[j + 1] * yb;
    }
    r = r0 + r1;
    s = s0 + s1;
  }

  // The samples a search for a crossing reads, taken out of the ring once: those of the
  // reconstructions at bases b_lo … b_lo + 2 (reconstruct_in()).
  struct Window {
    std::uint64_t first = 0;  // the frame of y[0]
    double y[kEdgeTaps + 2] = {};
    // The last reconstruction's two sums: a secant search's last steps fall on one tabulated
    // phase, where only the share between two rows differs.
    mutable std::uint64_t memo_base = std::numeric_limits<std::uint64_t>::max();
    mutable const double* memo_row = nullptr;
    mutable double memo_r = 0, memo_s = 0;
  };
  template <typename Field>
  Window gather(std::uint64_t b_lo, Field field) const {
    Window w;
    w.first = b_lo + 1 - kEdgeHalfTaps;
    for (std::size_t j = 0; j < kEdgeTaps + 2; ++j) w.y[j] = field(at(w.first + j));
    return w;
  }
  // reconstruct() from the window, the same sums in the same order; from the ring for a base
  // outside it.
  template <typename Field>
  double reconstruct_in(const Window& w, double x, Field field) const {
    const double base = std::floor(x);
    if (!(base >= static_cast<double>(w.first + kEdgeHalfTaps - 1)) ||
        !(base <= static_cast<double>(w.first + kEdgeHalfTaps + 1)))
      return reconstruct(x, field);
    const InterpolationRows k = interpolation.rows_at(x - base);
    const auto n0 = static_cast<std::uint64_t>(base);
    if (n0 == w.memo_base && k.row == w.memo_row) return w.memo_r + k.share * w.memo_s;
    const double* y = w.y + (n0 + 1 - kEdgeHalfTaps - w.first);
    row_sums(
        k, [y](std::size_t j) { return y[j]; }, w.memo_r, w.memo_s);
    w.memo_base = n0;
    w.memo_row = k.row;
    return w.memo_r + k.share * w.memo_s;
  }

  // Where `f` − level crosses zero near x, on the band-limited reconstruction: secant steps from
  // x ± 0.05 sample, kept only if they converge inside [lo, hi].
  template <typename F>
  static double secant_root(F f, double x, double lo, double hi) {
    double x0 = x - 0.05, x1 = x + 0.05;
    double y0 = f(x0), y1 = f(x1);
    for (int step = 0; step < 3 && y1 != y0; ++step) {
      const double x2 = x1 - y1 * (x1 - x0) / (y1 - y0);
      x0 = x1;
      y0 = y1;
      x1 = x2;
      if (!(x1 >= lo && x1 <= hi)) return x;
      y1 = f(x1);
    }
    return std::isfinite(x1) ? x1 : x;
  }

  // The zero of the current between samples m0 and m0 + 1 (of opposite sign ia, ib). The straight
  // line misplaces it by up to ~0.02 sample at 6 samples per cycle, which costs ∫|i| a second-
  // order error of ~1e-4 (the charges of a sine with an offset came out that low); the zero of
  // the band-limited reconstruction does not. It stays inside the piece so that the samples'
  // signs and the stretches' signs agree.
  double current_zero(std::uint64_t m0, double ia, double ib) const {
    const double lin = static_cast<double>(m0) + ia / (ia - ib);
    // With many samples per cycle the line's error, second order in the spacing, is negligible
    // and the reconstruction would cost ~100 multiplications at every zero (a noisy dead
    // interval has one every few samples).
    if (fit_half_width > 2 || edge_half(lin) != kEdgeHalfTaps) return lin;
    const double lo = static_cast<double>(m0), hi = std::nextafter(lo + 1, lo);
    const auto field = [](const Frame& f) { return f.i; };
    if (m0 < kEdgeHalfTaps) {
      const double z = secant_root([&](double x) { return reconstruct(x, field); }, lin, lo, hi);
      return std::clamp(z, lo, hi);
    }
    const Window win = gather(m0 - 1, field);
    const double z =
        secant_root([&](double x) { return reconstruct_in(win, x, field); }, lin, lo, hi);
    return std::clamp(z, lo, hi);
  }

  // Adds the piece from frame m−1 to m: a zero of the current inside it and each cycle boundary
  // inside it, in order; then counts sample m itself towards the cycle it belongs to (a sample
  // n belongs to the cycle that ends at x when n ≤ ⌊x⌋).
  void integrate_frame(std::uint64_t m) {
    const Frame& b = at(m);
    if (m > 0) {
      const Frame& a = at(m - 1);
      double from = static_cast<double>(m - 1);
      const double to = static_cast<double>(m);
      // The zero of the current in this piece, by linear interpolation: ∫|i| changes its sign
      // there, and its correction δ(z) is insensitive to z to first order (dδ/dz = i(z) = 0).
      double zero = std::numeric_limits<double>::infinity();
      if ((a.i > 0) != (b.i > 0)) zero = current_zero(m - 1, a.i, b.i);
      const auto pass_zero = [&](double up_to) {
        if (!(zero < up_to) || !std::isfinite(zero)) return;
        // (A zero without its samples lies in the partial cycle at the capture's end.)
        if (const int half = edge_half(zero); in_cycle && half > 0) {
          const Integrals d = edge(zero, half, /*sign_terms_only=*/true);
          const double s_before = a.i > 0 ? 1.0 : -1.0;
          acc.sum.abs_i += 2 * s_before * d.i;
          acc.sum.abs_p += 2 * s_before * d.p;
        }
        zero = std::numeric_limits<double>::infinity();
      };
      while (!boundaries.empty() && boundaries.front() < to) {
        const double x = std::max(boundaries.front(), from);
        boundaries.pop_front();
        const int half = edge_half(x);
        if (half == 0) continue;
        pass_zero(x);
        add_piece(a, b, m - 1, from, x);
        const Integrals d = edge(x, half);
        // The sign of the current on the stretch that holds x (after the zero if it was passed).
        const double s_x = (std::isfinite(zero) ? a.i : b.i) > 0 ? 1.0 : -1.0;
        on_boundary(x, d, s_x);
        if (harmonic) {
          // A block holds consecutive cycles the summary keeps: one that ends an excluded
          // cycle (the --zero stretch) starts a new block.
          if (last_cycle_excluded) harmonic->drop_partial_block();
          harmonic->on_boundary(x);
        }
        from = x;
      }
      if (std::isfinite(zero)) pass_zero(to + 1);  // (a call per sample otherwise)
      add_piece(a, b, m - 1, from, to);
    } else {
      while (!boundaries.empty() && boundaries.front() <= 0.0) boundaries.pop_front();
    }
    if (harmonic) {
      harmonic->on_sample(m, b.i);
      // A cycle longer than any regular period closes irregular and its block is dropped
      // then; but when the detector has lost the signal it never closes, and the analyser
      // would hold every later sample (566 MB for 50 M samples, issue 14). Its block is let go
      // as soon as the cycle is too long to be regular.
      if (in_cycle && !harmonic_let_go && period_nominal > 0 &&
          static_cast<double>(m) - cycle_start > (1 + kPeriodTolerance) * period_nominal + 1) {
        harmonic->drop_partial_block();
        harmonic_let_go = true;
      }
    }
    if (m > 0) {
      const double step = std::fabs(b.i - at(m - 1).i);
      if (step > 0) min_step = std::min(min_step, step);
    }
    if (in_cycle) {
      // A run at the cycle's peak (a new extreme, or the extreme again after leaving it)
      // starts here: note the flank entering it. A longest run that ends here: average in the
      // flank leaving it (both flanks of a clipped crest bend the same way, and the mean of
      // the two halves the noise of the curvature).
      if (b.i >= acc.max_i && acc.prev_sample_i != b.i) acc.flank_run_max = flank(m, +1.0, true);
      if (b.i <= acc.min_i && acc.prev_sample_i != b.i) acc.flank_run_min = flank(m, -1.0, true);
      if (acc.prev_sample_i == acc.max_i && b.i < acc.max_i && acc.run_max == acc.best_run_max)
        merge_flank(acc.flank_best_max, flank(m, +1.0, false));
      if (acc.prev_sample_i == acc.min_i && b.i > acc.min_i && acc.run_min == acc.best_run_min)
        merge_flank(acc.flank_best_min, flank(m, -1.0, false));
      if (b.i > acc.max_i) acc.max_at = m;
      if (b.i < acc.min_i) acc.min_at = m;
      acc.sample(b.i, b.v);
    } else if (!leading_partial)
      leading_partial = true;
  }

  // The flank next to a flat run, for the clipping rule at close_cycle: entering a run that
  // starts at frame m, samples m−1, m−1−h, m−1−2h; leaving one whose first sample off the run
  // is m, samples m, m+h, m+2h (h = flank_spacing). sign is +1 for a run at the maximum, −1 at
  // the minimum. h ≤ kMaxFlankSpacing keeps the leaving flank already in the ring (kLag frames
  // ahead of the integrator) and the entering one still in it.
  CrestFlank flank(std::uint64_t m, double sign, bool entering) const {
    static_assert(2 * kMaxFlankSpacing <= kLag && kRing >= kLag + 2 * kMaxFlankSpacing + 2);
    return entering ? flank_entering(m, sign) : flank_leaving(m, sign, next_index);
  }
  // The leaving flank (above), `read` frames having entered the ring.
  CrestFlank flank_leaving(std::uint64_t m, double sign, std::uint64_t read) const {
    CrestFlank f;
    const std::uint64_t h = flank_h;
    if (m + 2 * h >= read) return f;  // not yet read (the capture's end)
    f.p2 = sign * at(m).i;
    f.p1 = sign * at(m + h).i;
    f.p0 = sign * at(m + 2 * h).i;
    f.valid = true;
    return f;
  }
  // The entering flank (above): it only looks back, so quick_run() may take it before
  // next_index is brought up to date.
  CrestFlank flank_entering(std::uint64_t m, double sign) const {
    CrestFlank f;
    const std::uint64_t h = flank_h;
    if (m < 1 + 2 * h) return f;
    f.p2 = sign * at(m - 1).i;
    f.p1 = sign * at(m - 1 - h).i;
    f.p0 = sign * at(m - 1 - 2 * h).i;
    f.valid = true;
    return f;
  }

  void add_piece(const Frame& a, const Frame& b, std::uint64_t base, double from, double to) {
    if (!in_cycle || to <= from) return;
    const double fa = from - static_cast<double>(base), fb = to - static_cast<double>(base);
    const double ia = a.i + fa * (b.i - a.i), ib = a.i + fb * (b.i - a.i);
    const double va = a.v + fa * (b.v - a.v), vb = a.v + fb * (b.v - a.v);
    acc.piece((to - from) * dt, ia, ib, va, vb);
  }

  // A fifth of the peak: well into the conducting part of a glow lobe, above the noise of the
  // dwell at zero (common practice for reading a burning voltage off a scope trace).
  static constexpr double kBurnShare = 0.2;
  double last_peak_pos = std::numeric_limits<double>::quiet_NaN();
  double last_peak_neg = std::numeric_limits<double>::quiet_NaN();

  // Closes the cycle ending at x with its end corrections d (s_x: the sign of the current
  // at x, for ∫|i| and ∫sign(i)·v·i) and opens the next with their negatives.
  void on_boundary(double x, const Integrals& d, double s_x) {
    if (in_cycle) {
      Integrals& e = acc.sum;
      e.i += d.i;
      e.i2 += d.i2;
      e.v += d.v;
      e.v2 += d.v2;
      e.p += d.p;
      e.abs_i += s_x * d.i;
      e.abs_p += s_x * d.p;
      close_cycle(x);
    }
    in_cycle = true;
    harmonic_let_go = false;
    cycle_start = x;
    acc = CycleAccumulator{};
    acc.sum = Integrals{-d.i, -d.i2, -d.v, -d.v2, -d.p, -s_x * d.i, -s_x * d.p};
    if (std::isfinite(last_peak_pos) && last_peak_pos > 0)
      acc.burn_threshold_pos = kBurnShare * last_peak_pos;
    if (std::isfinite(last_peak_neg) && last_peak_neg < 0)
      acc.burn_threshold_neg = kBurnShare * last_peak_neg;
  }

  double time_of(double index) const { return cfg.start_time_s + index * dt; }

  void close_cycle(double end) {
    const CycleAccumulator& c = acc;
    if (c.duration <= 0 || c.samples == 0) return;
    CycleRecord r;
    r.index = cycle_index;
    r.start_s = time_of(cycle_start);
    r.period_s = (end - cycle_start) * dt;
    const double T = c.duration;
    // Integrals in samples over the cycle's length in samples.
    const double span = end - cycle_start;
    const Integrals& g = c.sum;
    r.mean_a = g.i / span;
    const double ms = std::max(g.i2 / span, 0.0);
    r.rms_a = std::sqrt(ms);
    const double ac_ms = std::max(ms - r.mean_a * r.mean_a, 0.0);
    r.ac_rms_a = std::sqrt(ac_ms);
    // Q± = (∫i ± ∫|i|)/2 and E± = (∫v·i ± ∫sign(i)·v·i)/2; a lobe smaller than the kernel's
    // residual (1e-7 of the cycle's charge) can come out a hair below zero, so Q± are clamped.
    r.charge_positive_c = std::max(0.5 * dt * (g.abs_i + g.i), 0.0);
    r.charge_negative_c = std::max(0.5 * dt * (g.abs_i - g.i), 0.0);
    const double q_total = r.charge_positive_c + r.charge_negative_c;
    r.charge_asymmetry = q_total > 0 ? (r.charge_positive_c - r.charge_negative_c) / q_total : 0.0;
    r.peak_positive_a = c.max_i;
    r.peak_negative_a = c.min_i;
    r.positive_share = c.t_pos / T;
    r.flat_top_positive = c.best_run_max >= 3;
    r.flat_top_negative = c.best_run_min >= 3;
    // Clipping: the rule and its reasons are in clipping.cpp.
    const auto clipped = [&](std::uint32_t run, const CrestFlank& f, double level) {
      return crest_clipped(Crest{run, f, level, 0.5 * (c.max_i - c.min_i), min_step,
                                 static_cast<double>(c.samples)});
    };
    r.clipped_positive = clipped(c.best_run_max, c.flank_best_max, c.max_i);
    r.clipped_negative = clipped(c.best_run_min, c.flank_best_min, -c.min_i);
    spc_estimate = end - cycle_start;
    flank_h = flank_spacing(spc_estimate);
    r.has_voltage = cfg.voltage_channel.has_value();
    if (cfg.voltage_channel) {
      r.voltage_mean_v = g.v / span;
      r.voltage_rms_v = std::sqrt(std::max(g.v2 / span, 0.0));
      r.voltage_peak_positive_v = c.max_v;
      r.voltage_peak_negative_v = c.min_v;
      r.voltage_positive_share = c.t_vpos / T;
      r.power_w = g.p / span;
      r.energy_positive_j = 0.5 * dt * (g.p + g.abs_p);
      r.energy_negative_j = 0.5 * dt * (g.p - g.abs_p);
    }
    const double nan = std::numeric_limits<double>::quiet_NaN();
    r.burning_voltage_positive_v =
        c.burn_n_pos > 0 ? c.burn_v_pos / static_cast<double>(c.burn_n_pos) : nan;
    r.burning_voltage_negative_v =
        c.burn_n_neg > 0 ? c.burn_v_neg / static_cast<double>(c.burn_n_neg) : nan;
    last_peak_pos = c.max_i;
    last_peak_neg = c.min_i;

    // A crest on the file's integer full scale is the recorder's range reached, whatever its
    // shape (clipping.hpp).
    if (cfg.current_full_scale_high_a &&
        c.max_i + cfg.current_zero_a >= *cfg.current_full_scale_high_a)
      r.clipped_positive = true;
    if (cfg.current_full_scale_low_a &&
        c.min_i + cfg.current_zero_a <= *cfg.current_full_scale_low_a)
      r.clipped_negative = true;

    // Issue 9, item 6: a cycle is left out when a not-finite sample lies in it or within reach
    // of its edge corrections, when it holds a glitch, or when its period is irregular.
    std::string reason;
    // A sample reaches a cycle through the edge corrections (kEdgeHalfTaps samples) and through
    // the boundary fits at either end: a fit spans ±fit_half_width samples around its trigger,
    // and the boundary may lie anywhere in it, so up to 2·fit_half_width from the boundary.
    const double reach =
        static_cast<double>(std::max<std::size_t>(kEdgeHalfTaps, 2 * fit_half_width)) + 1;
    const double reach_lo = std::floor(cycle_start) - reach;
    const double reach_hi = std::floor(end) + reach;
    if (touches_bad(reach_lo, reach_hi)) reason = "not_finite";
    while (!bad_runs.empty() && static_cast<double>(bad_runs.front().second) < reach_lo)
      bad_runs.pop_front();
    const double dev_hi = c.max_i - r.mean_a, dev_lo = r.mean_a - c.min_i;
    bool glitch = typical_i > 0 && std::max(dev_hi, dev_lo) > kGlitchFactor * typical_i;
    bool drop_held = false;
    std::string next_reason;
    if (glitch && ++glitch_streak > 3) {
      // Four cycles in a row are not a glitch but a new level (ignition, a range change): the
      // typical swing starts again from here; the three before stay out, and are reported.
      typical_i = 0.5 * (c.max_i - c.min_i);
      glitch = false;
    }
    if (!glitch) glitch_streak = 0;
    if (glitch) {
      // The glitch reaches a neighbour through the edge corrections and the boundary fit when
      // it lies within `reach` of the boundary they share.
      const auto at_index = static_cast<double>(dev_hi >= dev_lo ? c.max_at : c.min_at);
      if (at_index <= std::floor(cycle_start) + reach) drop_held = true;
      if (at_index + reach >= std::floor(end)) next_reason = "neighbour";
    }
    if (reason.empty() && glitch) reason = "glitch";
    const std::string neighbour_reason = exclude_next_reason;
    exclude_next_reason = next_reason;
    const double period_samples = end - cycle_start;
    bool irregular = false;
    if (period_nominal > 0) {
      irregular = std::fabs(period_samples - period_nominal) > kPeriodTolerance * period_nominal;
    } else if (reason.empty()) {
      early_periods.push_back(period_samples);
      if (early_periods.size() == 3) {
        std::sort(early_periods.begin(), early_periods.end());
        period_nominal = early_periods[1];
      }
    }
    if (irregular) {
      ++irregular_streak;
      if (reason.empty()) reason = "irregular";
      // Three irregular periods in a row that agree with each other are a new frequency (a
      // driver that changed its operating point), not faults: judge the next against it.
      if (irregular_streak >= 3 && std::fabs(period_samples - last_irregular_period) <=
                                       kPeriodTolerance * last_irregular_period) {
        period_nominal = period_samples;
      }
      last_irregular_period = period_samples;
      // Whatever made the period irregular (a dropout, a missed or doubled crossing) sat at or
      // near its boundaries, which the neighbours share: both are left out too.
      drop_held = true;
      if (exclude_next_reason.empty()) exclude_next_reason = "neighbour";
    } else {
      irregular_streak = 0;
    }
    // Last in precedence: the cycle's own fault names it; only a sound cycle is "neighbour".
    if (reason.empty() && !neighbour_reason.empty()) reason = neighbour_reason;

    // The reference's level and swing follow the signal from cycle to cycle, from kept cycles
    // only, and only once a kept cycle is committed (a cycle dropped afterwards because of its
    // neighbour's glitch does not move them); a cycle's swing moves them by at most a factor
    // of two, so that no single cycle can lift the band above the signal. Irregular cycles
    // count once three have come in a row (the signal changed: the levels must follow it, or
    // the band could stay above a smaller signal for good).
    LevelUpdate update;
    update.ref_mean = ref_is_voltage ? r.voltage_mean_v : r.mean_a;
    update.ref_half = 0.5 * (ref_is_voltage ? c.max_v - c.min_v : c.max_i - c.min_i);
    update.i_half = 0.5 * (c.max_i - c.min_i);
    update.period_samples = reason.empty() ? period_samples : 0.0;
    if (reason == "irregular" && irregular_streak >= 3) apply(update);

    const double end_s = time_of(end);
    const bool excluded =
        cfg.exclude_s && r.start_s < cfg.exclude_s->second && end_s > cfg.exclude_s->first;
    ++cycle_index;
    if (held_back) {
      if (drop_held) {
        exclude(held_back->record, held_back->end_s, "neighbour");
      } else {
        apply(held_back->update);
        commit(held_back->record, held_back->end_s);
      }
      held_back.reset();
    }
    last_cycle_excluded = false;
    if (excluded) {
      apply(update);
      ++summary.excluded_cycles;
      last_cycle_excluded = true;
      return;
    }
    if (!reason.empty()) {
      exclude(r, end_s, reason);
      last_cycle_excluded = true;
      return;
    }
    held_back.emplace(HeldCycle{r, end_s, update});
  }

  void apply(const LevelUpdate& u) {
    level_mean += kLevelSmoothing * (u.ref_mean - level_mean);
    half_swing +=
        kSwingSmoothing * (std::clamp(u.ref_half, 0.5 * half_swing, 2 * half_swing) - half_swing);
    typical_i +=
        kSwingSmoothing * (std::clamp(u.i_half, 0.5 * typical_i, 2 * typical_i) - typical_i);
    if (u.period_samples > 0 && period_nominal > 0) {
      period_nominal += kLevelSmoothing * (u.period_samples - period_nominal);
    }
  }
  std::string exclude_next_reason;
  int irregular_streak = 0;
  double last_irregular_period = 0;

  void commit(const CycleRecord& r, double end_s) {
    add_to_summary(r, end_s);
    if (sink) sink(r);
  }

  double excluded_span_s = 0;  // time in cycles left out for a reason (not --zero)

  void exclude(const CycleRecord& r, double end_s, const std::string& reason) {
    if (reason == "irregular") excluded_span_s += r.period_s;
    if (reason == "neighbour") ++summary.neighbour_cycles;
    if (reason == "not_finite") ++summary.not_finite_cycles;
    if (reason == "glitch") ++summary.glitch_cycles;
    if (reason == "irregular") ++summary.irregular_cycles;
    auto& list = summary.exclusions;
    if (!list.empty() && list.back().reason == reason &&
        std::fabs(list.back().end_s - r.start_s) <= 1e-9 * std::fabs(end_s) + dt) {
      list.back().end_s = end_s;  // one stretch of neighbouring cycles
    } else if (list.size() < kMaxExclusions) {
      list.push_back(Exclusion{r.start_s, end_s, reason});
    }
  }

  void add_to_summary(const CycleRecord& r, double end_s) {
    if (summary.cycles == 0) first_start = r.start_s;
    last_end = end_s;
    ++summary.cycles;
    kept_span_s += r.period_s;
    kept_span2_s2 += r.period_s * r.period_s;
    // Period differences count only between neighbours in time: a gap starts a new stretch.
    if (r.index != last_committed + 1) {
      ++stretches;
      prev_period = 0;
    }
    last_committed = r.index;
    if (prev_period > 0) {
      const double d = r.period_s - prev_period;
      sum_dperiod2 += d * d;
      ++n_dperiod;
    }
    prev_period = r.period_s;
    const double T = r.period_s;
    Accumulators& s = sums;
    s.dc.add(r.mean_a, T);
    s.ms.add(r.rms_a * r.rms_a, T);
    s.ac_ms.add(r.ac_rms_a * r.ac_rms_a, T);
    s.q_pos.add(r.charge_positive_c);
    s.q_neg.add(r.charge_negative_c);
    // Weighted by the cycle's total charge, the mean asymmetry is ΣQ+−ΣQ− over ΣQ++ΣQ−.
    s.asym.add(r.charge_asymmetry, r.charge_positive_c + r.charge_negative_c + 1e-300);
    s.share.add(r.positive_share, T);
    s.peak_pos.add(r.peak_positive_a);
    s.peak_neg.add(r.peak_negative_a);
    crest_peak.add(std::max(std::fabs(r.peak_positive_a), std::fabs(r.peak_negative_a)));
    if (cfg.voltage_channel) {
      s.v_mean.add(r.voltage_mean_v, T);
      s.v_ms.add(r.voltage_rms_v * r.voltage_rms_v, T);
      s.v_peak_pos.add(r.voltage_peak_positive_v);
      s.v_peak_neg.add(r.voltage_peak_negative_v);
      s.v_share.add(r.voltage_positive_share, T);
      s.power.add(r.power_w, T);
      s.e_pos.add(r.energy_positive_j);
      s.e_neg.add(r.energy_negative_j);
      if (std::isfinite(r.burning_voltage_positive_v)) s.burn_pos.add(r.burning_voltage_positive_v);
      if (std::isfinite(r.burning_voltage_negative_v)) s.burn_neg.add(r.burning_voltage_negative_v);
    }
    // Clipping: a cycle whose peak is a clipped flat run (close_cycle's rule) at the most
    // extreme value seen so far. A new extreme restarts the count, so at the end it counts the
    // cycles that sit on the capture's extreme: a recorder's range is one value.
    if (r.peak_positive_a > clip_max) {
      clip_max = r.peak_positive_a;
      clip_max_count = r.clipped_positive ? 1 : 0;
    } else if (r.peak_positive_a == clip_max && r.clipped_positive) {
      ++clip_max_count;
    }
    if (r.peak_negative_a < clip_min) {
      clip_min = r.peak_negative_a;
      clip_min_count = r.clipped_negative ? 1 : 0;
    } else if (r.peak_negative_a == clip_min && r.clipped_negative) {
      ++clip_min_count;
    }
  }

  // --- summary ---------------------------------------------------------------------------
  // A mean of per-cycle values with its type-A part and the probe's type-B parts.
  Estimate estimate(const BatchMeans& b, std::vector<UncertaintyComponent> type_b,
                    double value) const {
    std::vector<UncertaintyComponent> parts = std::move(type_b);
    const double se = b.standard_error();
    if (std::isfinite(se)) parts.push_back({se, b.degrees_of_freedom()});
    const CombinedUncertainty u = combine(parts);
    return Estimate{value, u.expanded(), u.coverage_factor};
  }
  Estimate estimate(const BatchMeans& b, std::vector<UncertaintyComponent> type_b = {}) const {
    return estimate(b, std::move(type_b), b.mean());
  }
  // √(mean square): u(√m) = u(m)/(2√m).
  Estimate root(const BatchMeans& b, std::vector<UncertaintyComponent> type_b_rel) const {
    const double value = std::sqrt(std::max(b.mean(), 0.0));
    Estimate e = estimate(b, {}, b.mean());
    const double u_stat = value > 0 ? e.u95 / e.coverage_k / (2 * value) : 0.0;
    std::vector<UncertaintyComponent> parts = std::move(type_b_rel);
    for (auto& p : parts) p.standard *= value;
    parts.push_back({u_stat, b.degrees_of_freedom() > 0 ? b.degrees_of_freedom() : 1e300});
    const CombinedUncertainty u = combine(parts);
    return Estimate{value, u.expanded(), u.coverage_factor};
  }

  // DC / RMS and DC / AC RMS, r = D/R, by first-order propagation (GUM, JCGM 100:2008, 5.1.2
  // and 5.2.2 for correlated inputs):
  //   u(r)² = (u_D/R)² + (D·u_R/R²)² − 2·D·u_D·u_R·ρ/R³.
  // It is applied part by part with standard uncertainties, not to the finished Estimates:
  //  - the probe's gain scales D and R alike and cancels in r (sensitivity 0); propagating it
  //    through both Estimates as if independent would count it twice instead;
  //  - the probe's offset δ (stated tolerance and `--zero` scatter, u_δ) is one input acting
  //    on both: ∂D/∂δ = 1, ∂R/∂δ = D/R (R² = A² + D², A unmoved by an offset), hence
  //    ∂(D/R)/∂δ = (R² − D²)/R³ and ∂(D/A)/∂δ = 1/A — fully correlated, summed before squaring;
  //  - the type-A parts are the batch-means standard errors of the DC and of the mean square
  //    (u_R = u(R²)/(2R), as in root()). Their correlation ρ would need cross-products of the
  //    two batch series, which the accumulators do not keep, so ρ = 0 is used. For the usual
  //    sources ρ has the sign of D (a DC swing moves R² = A² + D² with it; a self-rectifying
  //    DC grows with the current), so dropping the term overstates u(r) rather than hiding
  //    scatter; and for a DC small against the RMS the first term dominates anyway.
  // Expansion: the larger of the two inputs' type-A coverage factors. Welch–Satterthwaite
  // (GUM G.4.1) gives ν_eff ≥ the smallest ν_i, so the larger k (the fewer degrees of freedom)
  // never under-covers, and for ≥ 30 degrees of freedom each (64 or more cycles) both are 2.
  static Estimate dc_ratio(double d, double u_d, double k_d, double r, double u_r, double k_r,
                           double offset_sensitivity, double u_offset) {
    const double nan = std::numeric_limits<double>::quiet_NaN();
    if (!(r > 0) || !std::isfinite(d)) return Estimate{nan, nan, 2};
    const double a = u_d / r, b = d * u_r / (r * r), c = offset_sensitivity * u_offset;
    const double k = std::max(k_d, k_r);
    return Estimate{d / r, k * std::sqrt(a * a + b * b + c * c), k};
  }
  void dc_ratios(CycleSummary& s, const Accumulators& a, double u_offset) const {
    // A standard error and its coverage factor, 0 and k = 2 when the series is too short for one
    // (as estimate() leaves it out).
    const auto type_a = [](const BatchMeans& b) {
      const double se = b.standard_error();
      if (!std::isfinite(se)) return std::pair<double, double>{0.0, 2.0};
      return std::pair<double, double>{se, combine({{se, b.degrees_of_freedom()}}).coverage_factor};
    };
    const auto [u_d, k_d] = type_a(a.dc);
    const auto [u_ms, k_ms] = type_a(a.ms);
    const auto [u_ac_ms, k_ac_ms] = type_a(a.ac_ms);
    const double d = a.dc.mean(), rms = s.rms_a.value, ac = s.ac_rms_a.value;
    const double u_rms = rms > 0 ? u_ms / (2 * rms) : 0.0;
    const double u_ac = ac > 0 ? u_ac_ms / (2 * ac) : 0.0;
    const double c_rms = rms > 0 ? std::max(rms * rms - d * d, 0.0) / (rms * rms * rms) : 0.0;
    s.dc_to_rms = dc_ratio(d, u_d, k_d, rms, u_rms, k_ms, c_rms, u_offset);
    s.dc_to_ac_rms = dc_ratio(d, u_d, k_d, ac, u_ac, k_ac_ms, ac > 0 ? 1 / ac : 0.0, u_offset);
  }

  void build_summary() {
    CycleSummary& s = summary;
    s.frames = next_index;
    s.reference = ref_is_voltage ? "voltage" : "current";
    s.crossings = crossings;
    s.has_voltage = cfg.voltage_channel.has_value();
    s.current_zero_a = cfg.current_zero_a;
    s.partial_cycles = (leading_partial ? 1u : 0u) + (in_cycle ? 1u : 0u);
    s.first_start_s = first_start;
    s.last_end_s = last_end;
    if (s.cycles == 0) return;

    const Accumulators& a = sums;
    const double u_off = rectangular(cfg.probe_offset_a);  // GUM 4.3.7
    const double u_gain_rel = rectangular(cfg.probe_gain_pct / 100.0);
    const UncertaintyComponent zero{cfg.current_zero_u_a, 1e300};

    // The fundamental: kept cycles over the time they span (left-out cycles are not in it).
    // Independent boundary errors e_k (standard deviation σ) make successive periods differ by
    // e_{k+2} − 2e_{k+1} + e_k (variance 6σ²), while each stretch of consecutive kept cycles
    // carries only its first and last boundary: u(ΣT) = √(2·stretches)·σ. The mean of the
    // squared differences estimates 6σ² with about n/2 degrees of freedom (neighbouring
    // differences share boundaries: lag-1 correlation −2/3, lag-2 1/6, so the effective count
    // is n/(1 + 2·(4/9 + 1/36)) ≈ n/1.94), expanded with Student's t (GUM G.3). With fewer than
    // two differences σ is not known; the boundary is then taken as placed within ±½ sample
    // (rectangular, GUM 4.3.7), a bound for a crossing interpolated between two samples.
    const double span = kept_span_s;
    const double f = static_cast<double>(s.cycles) / span;
    double sigma_b = 0.5 * dt / std::sqrt(3.0), k_f = 2;
    if (n_dperiod >= 2) {
      sigma_b = std::sqrt(sum_dperiod2 / static_cast<double>(n_dperiod) / 6.0);
      k_f = student_t95(std::max(1.0, static_cast<double>(n_dperiod) / 1.94));
    }
    const double u_f = f *
                       std::sqrt(2.0 * static_cast<double>(std::max<std::uint64_t>(stretches, 1))) *
                       sigma_b / span;
    s.fundamental_hz = Estimate{f, k_f * u_f, k_f};

    const double dc = a.dc.mean();
    s.dc_offset_a = estimate(a.dc, {{u_off, 1e300}, {u_gain_rel * std::fabs(dc), 1e300}, zero});
    s.dc_significant = std::fabs(s.dc_offset_a.value) > s.dc_offset_a.u95;
    const double rms = std::sqrt(std::max(a.ms.mean(), 0.0));
    s.rms_a =
        root(a.ms,
             {{u_gain_rel, 1e300},
              {rms > 0 ? std::hypot(u_off, zero.standard) * std::fabs(dc) / rms / rms : 0, 1e300}});
    s.ac_rms_a = root(a.ac_ms, {{u_gain_rel, 1e300}});
    dc_ratios(s, a, std::hypot(u_off, zero.standard));
    const double period = span / static_cast<double>(s.cycles);
    const double share = a.share.mean();
    s.charge_positive_c =
        estimate(a.q_pos, {{u_gain_rel * a.q_pos.mean(), 1e300},
                           {std::hypot(u_off, zero.standard) * period * share, 1e300}});
    s.charge_negative_c =
        estimate(a.q_neg, {{u_gain_rel * a.q_neg.mean(), 1e300},
                           {std::hypot(u_off, zero.standard) * period * (1 - share), 1e300}});
    // An offset δ moves Q+ − Q− by δ·T and Q+ + Q− by far less: ∂A/∂δ ≈ T/(Q+ + Q−). The gain
    // cancels in the ratio.
    const double q_sum = a.q_pos.mean() + a.q_neg.mean();
    s.charge_asymmetry = estimate(
        a.asym, {{q_sum > 0 ? std::hypot(u_off, zero.standard) * period / q_sum : 0, 1e300}});
    s.positive_share = estimate(a.share);
    // A sampled peak misses the true one by up to A·(1 − cos(π/N)) for N samples per cycle
    // (the crest falls between two samples at worst): a type-B part, rectangular.
    const double spc = period / dt;
    s.samples_per_cycle = spc;
    const double sampling = spc > 1 ? 1 - std::cos(M_PI / spc) : 1.0;
    const auto peak_parts = [&](double peak, double gain_rel, double offset) {
      return std::vector<UncertaintyComponent>{{gain_rel * std::fabs(peak), 1e300},
                                               {offset, 1e300},
                                               {rectangular(sampling * std::fabs(peak)), 1e300}};
    };
    s.peak_positive_a = estimate(a.peak_pos, peak_parts(a.peak_pos.mean(), u_gain_rel, u_off));
    s.peak_negative_a = estimate(a.peak_neg, peak_parts(a.peak_neg.mean(), u_gain_rel, u_off));
    if (s.rms_a.value > 0) s.crest_factor = crest_peak.mean() / s.rms_a.value;
    if (q_sum > 0) s.form_factor = s.rms_a.value / (q_sum / period);
    if (harmonic) s.harmonics = harmonic->finish();
    s.clipped_positive = clip_max_count;
    s.clipped_negative = clip_min_count;
    if (s.has_voltage) {
      s.voltage_mean_v = estimate(a.v_mean);
      s.voltage_rms_v = root(a.v_ms, {});
      s.voltage_peak_positive_v = estimate(a.v_peak_pos, peak_parts(a.v_peak_pos.mean(), 0, 0));
      s.voltage_peak_negative_v = estimate(a.v_peak_neg, peak_parts(a.v_peak_neg.mean(), 0, 0));
      s.voltage_positive_share = estimate(a.v_share);
      s.power_w = estimate(a.power, {{u_gain_rel * std::fabs(a.power.mean()), 1e300}});
      s.energy_positive_j = estimate(a.e_pos, {{u_gain_rel * std::fabs(a.e_pos.mean()), 1e300}});
      s.energy_negative_j = estimate(a.e_neg, {{u_gain_rel * std::fabs(a.e_neg.mean()), 1e300}});
      const double nan = std::numeric_limits<double>::quiet_NaN();
      s.burning_voltage_positive_v =
          a.burn_pos.count() >= 2 ? estimate(a.burn_pos) : Estimate{nan, nan, 2};
      s.burning_voltage_negative_v =
          a.burn_neg.count() >= 2 ? estimate(a.burn_neg) : Estimate{nan, nan, 2};
    }
    if (s.clipped_positive > 0 || s.clipped_negative > 0) {
      s.warnings.push_back(std::to_string(s.clipped_positive) +
                           " cycle(s) clipped at the positive and " +
                           std::to_string(s.clipped_negative) +
                           " at the negative extreme of the recording: the DC offset and the "
                           "charge asymmetry are not trustworthy (widen the recorder's range)");
    }
    if (s.cycles < 3) {
      s.warnings.push_back("only " + std::to_string(s.cycles) +
                           " whole cycle(s): the fundamental and every mean are poorly "
                           "determined (a record of three or more whole cycles is needed)");
    } else if (a.dc.count() < 2 * BatchMeans::kMinBatches) {
      s.warnings.push_back("only " + std::to_string(s.cycles) +
                           " whole cycles: the uncertainty cannot allow for correlation between "
                           "neighbouring cycles (64 or more cycles can)");
    }
  }

  double kept_period_cv() const {
    const auto n = static_cast<double>(summary.cycles);
    if (n < 3 || !(kept_span_s > 0)) return 0.0;
    const double mean = kept_span_s / n;
    const double var = std::max(kept_span2_s2 / n - mean * mean, 0.0) * n / (n - 1);
    return std::sqrt(var) / mean;
  }

  // Issue 9, items 5 and 6: what was left out, and whether the reference is periodic at all.
  void judge_record() {
    CycleSummary& s = summary;
    if (!s.reference_note.empty()) s.warnings.push_back(s.reference_note);
    const std::uint64_t out =
        s.not_finite_cycles + s.glitch_cycles + s.irregular_cycles + s.neighbour_cycles;
    if (s.not_finite_samples > 0) {
      s.warnings.push_back(std::to_string(s.not_finite_samples) +
                           " sample(s) are not finite (NaN or infinite); the " +
                           std::to_string(s.not_finite_cycles) +
                           " cycle(s) they reach are left out");
    }
    if (out > 0) {
      std::string where;
      for (const Exclusion& e : s.exclusions) {
        if (!where.empty()) where += ", ";
        where += e.reason + " " + std::to_string(e.start_s) + "–" + std::to_string(e.end_s) + " s";
        if (where.size() > 300) {
          where += ", …";
          break;
        }
      }
      s.warnings.push_back(std::to_string(out) + " cycle(s) left out of every figure (" +
                           std::to_string(s.glitch_cycles) + " with a glitch, " +
                           std::to_string(s.irregular_cycles) + " irregular, " +
                           std::to_string(s.not_finite_cycles) + " not finite, " +
                           std::to_string(s.neighbour_cycles) +
                           " next to one of those, whose boundary it shares): " + where);
    }
    // A reference without a periodic fundamental (noise, a single transient) cuts the record
    // into "cycles" of random length: most fall outside ±kPeriodTolerance of the running period.
    // By count, and by time: a burst of ringing (a switch node's edges) can make many short
    // regular "cycles" in a record whose real period is irregular or longer than the record.
    const double record_s = static_cast<double>(s.frames) * dt;
    if (s.irregular_cycles > 0 &&
        (s.irregular_cycles >= s.cycles || excluded_span_s >= kept_span_s)) {
      s.periodic = false;
      s.not_periodic_reason = std::to_string(s.irregular_cycles) + " of its " +
                              std::to_string(s.irregular_cycles + s.cycles) +
                              " cycles between rising crossings differ from the running period "
                              "by more than 30 %, as noise or a single transient do";
    } else if (const double cv = kept_period_cv(); s.cycles >= 3 && cv > 0.12) {
      // Noise makes "cycles" of random length; those that pass ±30 % still spread over it
      // (a uniform spread of ±30 % has a relative standard deviation of 17 %), while a periodic
      // signal's periods scatter by a few per cent at most (a ±10 % sinusoidal FM: 7 %).
      s.periodic = false;
      char buf[200];
      std::snprintf(buf, sizeof buf,
                    "the periods of its %llu regular cycles scatter by %.0f %% (relative standard "
                    "deviation), as crossings of noise do",
                    static_cast<unsigned long long>(s.cycles), 100 * cv);
      s.not_periodic_reason = buf;
    } else if (s.cycles >= 2 && kept_span_s < 0.25 * record_s) {
      // A short burst (a switching edge's ringing, one transient) that repeats for a few
      // cycles inside a long record: its "fundamental" says nothing about the record.
      s.periodic = false;
      char buf[200];
      std::snprintf(buf, sizeof buf,
                    "its %llu regular cycles cover only %.0f %% of the record, as a burst of "
                    "ringing or a single transient does",
                    static_cast<unsigned long long>(s.cycles), 100 * kept_span_s / record_s);
      s.not_periodic_reason = buf;
    }
    // Sampling locked to the fundamental at few samples per cycle: every cycle is sampled at
    // the same phases, so whatever the current holds at multiples of N samples per cycle folds
    // onto the DC the same way in every cycle, and no scatter reveals it (the band-limited
    // integrals assume nothing above the Nyquist frequency).
    const double spc = s.samples_per_cycle;
    if (s.cycles >= 3 && spc > 0 && spc < 32 && std::fabs(spc - std::round(spc)) < 1e-4 * spc) {
      s.warnings.push_back(
          "the sampling is locked to the fundamental at " + std::to_string(std::lround(spc)) +
          " samples per cycle: the current's harmonics at multiples of that order fold onto the "
          "DC the same way in every cycle, an error no u95 can show; record at a rate that is "
          "not a multiple of the frequency, or faster");
    }
    // Issue 9, item 5: periods that scatter beyond what the reference's noise explains. The
    // boundary scatter measured from the period differences (σ_b, see build_summary) against
    // the fits' own noise-explained σ; a ratio above 3 (variance 9) is reported. It is what a
    // free-running inverter's wandering frequency or mains ripple does, or an irregular
    // reference; each cycle is still measured over its own period.
    if (n_dperiod >= 10 && jitter_noise_n >= 10) {
      const double measured = std::sqrt(sum_dperiod2 / static_cast<double>(n_dperiod) / 6.0);
      const double explained =
          dt * std::sqrt(jitter_noise_var / static_cast<double>(jitter_noise_n));
      s.boundary_jitter_s = measured;
      s.boundary_jitter_noise_s = explained;
      const double period = s.cycles > 0 ? kept_span_s / static_cast<double>(s.cycles) : 0.0;
      if (measured > 3 * explained && measured > 1e-4 * period) {
        char buf[320];
        std::snprintf(buf, sizeof buf,
                      "the cycle boundaries scatter by %.3g %% of a period (1σ), %.1f times what "
                      "the reference's noise explains: its frequency wanders (a free-running "
                      "inverter, mains ripple) or the reference is irregular",
                      100 * measured / period, measured / std::max(explained, 1e-300));
        s.warnings.push_back(buf);
      }
    }
  }
};

CycleEngine::CycleEngine(const CycleConfig& config, Sink sink) : impl_(std::make_shared<Impl>()) {
  if (!(config.sample_rate_hz > 0) || !std::isfinite(config.sample_rate_hz)) {
    throw std::invalid_argument("CycleConfig.sample_rate_hz must be positive");
  }
  if (config.voltage_channel && *config.voltage_channel == config.current_channel) {
    throw std::invalid_argument("CycleConfig: current and voltage channels must differ");
  }
  impl_->cfg = config;
  impl_->sink = std::move(sink);
  impl_->dt = 1.0 / config.sample_rate_hz;
  if (config.reference == CycleReference::voltage && !config.voltage_channel) {
    throw std::invalid_argument("CycleConfig: a voltage reference needs a voltage channel");
  }
  impl_->ref_is_voltage =
      config.voltage_channel.has_value() && config.reference != CycleReference::current;
  if (config.harmonics) {
    HarmonicConfig h = *config.harmonics;
    h.sample_rate_hz = config.sample_rate_hz;
    impl_->harmonic = std::make_unique<HarmonicFeed>(h);
  }
  // Reserved whole: pages are only resident once written, and growing by doubling would hold
  // the old and the new storage at once (1.5× the look-ahead at its peak).
  impl_->held.reserve(kAcquireFrames);
  impl_->held_bad.reserve(kAcquireFrames);
}

void CycleEngine::consume(const SampleBlock& block) {
  Impl& m = *impl_;
  if (m.finished) throw std::logic_error("CycleEngine::consume after finish");
  if (block.channels <= m.cfg.current_channel ||
      (m.cfg.voltage_channel && block.channels <= *m.cfg.voltage_channel)) {
    throw std::invalid_argument("CycleEngine: block has too few channels");
  }
  std::size_t f = 0;
  for (; f < block.frames && m.acquiring; ++f) {
    bool bad = false;
    const Frame fr = m.frame_of(block, f, bad);
    m.held.push_back(fr);
    m.held_bad.push_back(bad ? 1 : 0);
    if (m.held.size() >= kAcquireFrames) m.end_acquisition();
  }
  if (f == block.frames) return;
  // As frame_of(), for the frames that are finite.
  const double* data = block.data.data();
  const std::size_t channels = block.channels, ci = m.cfg.current_channel;
  const bool has_v = m.cfg.voltage_channel.has_value();
  const std::size_t vi = has_v ? *m.cfg.voltage_channel : 0;
  const double zero = m.cfg.current_zero_a;
  const auto get_iv = [=](std::size_t k, Frame& fr) {
    const double i = data[k * channels + ci];
    const double v = data[k * channels + vi];
    if (!std::isfinite(i) || !std::isfinite(v)) return false;
    fr.i = i - zero;
    fr.v = v;
    return true;
  };
  const auto get_i = [=](std::size_t k, Frame& fr) {
    const double i = data[k * channels + ci];
    if (!std::isfinite(i)) return false;
    fr.i = i - zero;
    fr.v = 0.0;
    return true;
  };
  const auto run = [&](const auto& get) {
    while (f < block.frames) {
      const std::size_t taken = m.quick_run(get, f, block.frames);
      if (taken > f) {
        m.consumed += taken - f;
        m.last_good_i = block.value(taken - 1, ci);
        m.last_good_v = has_v ? block.value(taken - 1, vi) : 0.0;
        f = taken;
      }
      if (f < block.frames) {
        bool bad = false;
        m.push(m.frame_of(block, f, bad));
        ++f;
      }
    }
  };
  if (has_v) {
    run(get_iv);
  } else {
    run(get_i);
  }
}

const CycleSummary& CycleEngine::finish() {
  Impl& m = *impl_;
  if (m.finished) return m.summary;
  if (m.acquiring) m.end_acquisition();
  m.pending.clear();  // a crossing too close to the end for its fit is not used
  if (m.next_index > 0) m.integrate_up_to(m.next_index - 1);
  if (m.held_back) {
    m.commit(m.held_back->record, m.held_back->end_s);
    m.held_back.reset();
  }
  m.finished = true;
  m.build_summary();
  m.judge_record();
  return m.summary;
}

}  // namespace lopside
