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

#include "lopside/clipping.hpp"

#include <algorithm>
#include <cmath>
#include <deque>
#include <limits>
#include <stdexcept>

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
  double ref = 0, i = 0, v = 0;
};

// Integrals over the current cycle of the piecewise-linear signal between samples.
struct CycleAccumulator {
  double duration = 0;
  double int_i = 0, int_i2 = 0, q_pos = 0, q_neg = 0, t_pos = 0;
  double int_v = 0, int_v2 = 0, t_vpos = 0;
  double int_p = 0, e_pos = 0, e_neg = 0;
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
  // Burning voltage: the voltage while |i| exceeds these thresholds (set from the previous
  // cycle's peaks; infinite, so nothing counts, in the first cycle).
  double burn_threshold_pos = std::numeric_limits<double>::infinity();
  double burn_threshold_neg = -std::numeric_limits<double>::infinity();
  double burn_v_pos = 0, burn_v_neg = 0;
  std::uint64_t burn_n_pos = 0, burn_n_neg = 0;

  void sample(double i, double v) {
    ++samples;
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

  // One straight piece of duration h [s] from (ia, va) to (ib, vb). Means use the trapezoid
  // rule, which for whole cycles of a periodic signal converges spectrally (Trefethen & Weideman,
  // SIAM Review 56, 2014); charges split the piece at its zero so Q± are exact for the
  // piecewise-linear signal.
  void piece(double h, double ia, double ib, double va, double vb) {
    if (h <= 0) return;
    duration += h;
    int_i += 0.5 * h * (ia + ib);
    int_i2 += 0.5 * h * (ia * ia + ib * ib);
    int_v += 0.5 * h * (va + vb);
    int_v2 += 0.5 * h * (va * va + vb * vb);
    int_p += 0.5 * h * (ia * va + ib * vb);
    if ((ia >= 0) == (ib >= 0)) {
      const double q = 0.5 * h * (ia + ib);
      const double e = 0.5 * h * (ia * va + ib * vb);
      if (ia >= 0) {
        q_pos += q;
        if (ia > 0 || ib > 0) t_pos += h;
        e_pos += e;
      } else {
        q_neg -= q;
        e_neg += e;
      }
    } else {
      const double z = ia / (ia - ib);  // fraction of h at which i crosses zero
      const double h1 = z * h, h2 = (1 - z) * h;
      const double q1 = 0.5 * h1 * ia, q2 = 0.5 * h2 * ib;
      const double e1 = 0.5 * h1 * ia * va, e2 = 0.5 * h2 * ib * vb;
      if (ia > 0) {
        q_pos += q1;
        t_pos += h1;
        e_pos += e1;
        q_neg -= q2;
        e_neg += e2;
      } else {
        q_neg -= q1;
        e_neg += e1;
        q_pos += q2;
        t_pos += h2;
        e_pos += e2;
      }
    }
    // Time with v > 0, split at v's own zero.
    if ((va > 0) == (vb > 0)) {
      if (va > 0) t_vpos += h;
    } else {
      const double z = va / (va - vb);
      t_vpos += va > 0 ? z * h : (1 - z) * h;
    }
  }
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

  // Levels of the reference: running mean and half swing.
  double level_mean = 0, half_swing = 0;
  bool level_known = false;

  // Ring of the last kRing frames, by global index.
  std::vector<Frame> ring = std::vector<Frame>(kRing);
  std::uint64_t next_index = 0;  // global index of the next frame to enter the ring

  // Detector.
  bool armed = false;
  bool refine_pending = false;
  std::uint64_t trigger_index = 0;
  double trigger_level = 0;
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
  bool finished = false;
  std::optional<HarmonicAnalyzer> harmonic;
  bool last_cycle_excluded = false;
  BatchMeans crest_peak;

  const Frame& at(std::uint64_t index) const { return ring[index & (kRing - 1)]; }

  Frame frame_of(const SampleBlock& block, std::size_t f) const {
    Frame fr;
    fr.i = block.value(f, cfg.current_channel) - cfg.current_zero_a;
    fr.v = cfg.voltage_channel ? block.value(f, *cfg.voltage_channel) : 0.0;
    fr.ref = ref_is_voltage ? fr.v : fr.i;
    return fr;
  }

  void learn_levels(const std::vector<Frame>& frames) {
    if (frames.empty()) return;
    double sum = 0, lo = frames.front().ref, hi = lo;
    for (const Frame& f : frames) {
      sum += f.ref;
      lo = std::min(lo, f.ref);
      hi = std::max(hi, f.ref);
    }
    level_mean = sum / static_cast<double>(frames.size());
    half_swing = 0.5 * (hi - lo);
    level_known = true;
    // The fit's half-width is fixed for the whole capture from the period seen here: a width
    // that changed between boundaries would change the fit's (small, curvature) bias between
    // them and so the periods. Without two crossings here the period exceeds the look-ahead,
    // and the widest fit is the right one.
    const double band = kBandShare * half_swing;
    bool arm = frames.front().ref < level_mean + band;
    std::uint64_t count = 0, first = 0, last = 0;
    for (std::size_t j = 1; j < frames.size(); ++j) {
      const double r = frames[j].ref;
      if (r < level_mean - band) arm = true;
      if (arm && r > level_mean + band) {
        arm = false;
        if (count++ == 0) first = j;
        last = j;
      }
    }
    if (count >= 2) {
      // The mean of all held frames is off by a partial cycle's share; the mean and swing over
      // the whole cycles between the first and last crossing are not (a level that then moved
      // cycle by cycle would move the boundaries with it).
      double whole_sum = 0, whole_lo = frames[first].ref, whole_hi = whole_lo;
      for (std::uint64_t j = first; j < last; ++j) {
        whole_sum += frames[j].ref;
        whole_lo = std::min(whole_lo, frames[j].ref);
        whole_hi = std::max(whole_hi, frames[j].ref);
      }
      level_mean = whole_sum / static_cast<double>(last - first);
      half_swing = 0.5 * (whole_hi - whole_lo);
      const double spc = static_cast<double>(last - first) / static_cast<double>(count - 1);
      fit_half_width = std::clamp<std::size_t>(
          static_cast<std::size_t>(std::lround(kFitShare * spc)), 1, kMaxFitHalfWidth);
      spc_estimate = spc;
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

  // --- detector ---------------------------------------------------------------------------
  void detect(std::uint64_t n) {
    const double r = at(n).ref;
    if (refine_pending && n >= trigger_index + fit_half_width) refine();
    if (!level_known || half_swing <= 0) return;
    const double band = kBandShare * half_swing;
    // A capture that starts below the trigger level and rises through it has its first
    // crossing there: arming at the first sample counts it (once; re-arming needs the band).
    if (r < level_mean - band || (n == 0 && r < level_mean + band)) armed = true;
    if (armed && n > 0 && r > level_mean + band && !refine_pending) {
      armed = false;
      refine_pending = true;
      trigger_index = n;
      trigger_level = level_mean + band;
      ++crossings;
    }
  }

  // The crossing of trigger_level, from a least-squares line through 2·w samples centred on
  // the first sample pair that straddles it: noise at one sample moves the boundary by
  // 1/(2w) as much as plain two-point interpolation would.
  void refine() {
    refine_pending = false;
    const std::uint64_t t = trigger_index;
    const std::size_t w = fit_half_width;
    // A crossing too near either end of the capture for the full fit is not used: a boundary
    // placed by another rule would carry another bias, and the cycle next to it another
    // period. The stretch simply becomes part of the partial cycle at that end.
    if (t < w || t + w > next_index) return;
    double x = std::numeric_limits<double>::quiet_NaN();
    {
      double sx = 0, sy = 0, sxx = 0, sxy = 0;
      const double n = static_cast<double>(2 * w);
      for (std::uint64_t j = t - w; j < t + w; ++j) {
        const double xj = static_cast<double>(j) - static_cast<double>(t);
        const double yj = at(j).ref;
        sx += xj;
        sy += yj;
        sxx += xj * xj;
        sxy += xj * yj;
      }
      const double d = n * sxx - sx * sx;
      const double slope = (n * sxy - sx * sy) / d;
      const double intercept = (sy - slope * sx) / n;
      if (slope > 0) {
        const double off = (trigger_level - intercept) / slope;
        if (off >= -static_cast<double>(w) && off <= static_cast<double>(w) - 1) {
          x = static_cast<double>(t) + off;
        }
      }
    }
    if (!std::isfinite(x)) {
      const double a = at(t - 1).ref, b = at(t).ref;
      x = static_cast<double>(t - 1) + (trigger_level - a) / (b - a);
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

  // Adds the piece from frame m−1 to m, closing a cycle at each boundary inside it, then
  // counts sample m itself towards the cycle it belongs to.
  void integrate_frame(std::uint64_t m) {
    const Frame& b = at(m);
    if (m > 0) {
      const Frame& a = at(m - 1);
      double from = static_cast<double>(m - 1);
      const double to = static_cast<double>(m);
      while (!boundaries.empty() && boundaries.front() < to) {
        const double x = std::max(boundaries.front(), from);
        boundaries.pop_front();
        add_piece(a, b, m - 1, from, x);
        on_boundary(x);
        if (harmonic) {
          // A block holds consecutive cycles the summary keeps: one that ends an excluded
          // cycle (the --zero stretch) starts a new block.
          if (last_cycle_excluded) harmonic->drop_partial_block();
          harmonic->on_boundary(x);
        }
        from = x;
      }
      add_piece(a, b, m - 1, from, to);
    } else {
      while (!boundaries.empty() && boundaries.front() <= 0.0) {
        boundaries.pop_front();
        on_boundary(0.0);
      }
    }
    if (harmonic) harmonic->on_sample(m, b.i);
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
    CrestFlank f;
    const std::uint64_t h = flank_spacing(std::isfinite(spc_estimate) ? spc_estimate : 680.0);
    static_assert(2 * kMaxFlankSpacing <= kLag && kRing >= kLag + 2 * kMaxFlankSpacing + 2);
    if (entering) {
      if (m < 1 + 2 * h) return f;
      f.p2 = sign * at(m - 1).i;
      f.p1 = sign * at(m - 1 - h).i;
      f.p0 = sign * at(m - 1 - 2 * h).i;
    } else {
      if (m + 2 * h >= next_index) return f;  // not yet read (the capture's end)
      f.p2 = sign * at(m).i;
      f.p1 = sign * at(m + h).i;
      f.p0 = sign * at(m + 2 * h).i;
    }
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

  void on_boundary(double x) {
    if (in_cycle) close_cycle(x);
    in_cycle = true;
    cycle_start = x;
    acc = CycleAccumulator{};
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
    r.mean_a = c.int_i / T;
    const double ms = c.int_i2 / T;
    r.rms_a = std::sqrt(ms);
    const double ac_ms = std::max(ms - r.mean_a * r.mean_a, 0.0);
    r.ac_rms_a = std::sqrt(ac_ms);
    r.charge_positive_c = c.q_pos;
    r.charge_negative_c = c.q_neg;
    const double q_total = c.q_pos + c.q_neg;
    r.charge_asymmetry = q_total > 0 ? (c.q_pos - c.q_neg) / q_total : 0.0;
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
    r.has_voltage = cfg.voltage_channel.has_value();
    if (cfg.voltage_channel) {
      r.voltage_mean_v = c.int_v / T;
      r.voltage_rms_v = std::sqrt(c.int_v2 / T);
      r.voltage_peak_positive_v = c.max_v;
      r.voltage_peak_negative_v = c.min_v;
      r.voltage_positive_share = c.t_vpos / T;
      r.power_w = c.int_p / T;
      r.energy_positive_j = c.e_pos;
      r.energy_negative_j = c.e_neg;
    }
    const double nan = std::numeric_limits<double>::quiet_NaN();
    r.burning_voltage_positive_v =
        c.burn_n_pos > 0 ? c.burn_v_pos / static_cast<double>(c.burn_n_pos) : nan;
    r.burning_voltage_negative_v =
        c.burn_n_neg > 0 ? c.burn_v_neg / static_cast<double>(c.burn_n_neg) : nan;
    last_peak_pos = c.max_i;
    last_peak_neg = c.min_i;

    // The reference's level and swing follow the signal from cycle to cycle.
    const double ref_mean = ref_is_voltage ? r.voltage_mean_v : r.mean_a;
    const double ref_half = 0.5 * (ref_is_voltage ? c.max_v - c.min_v : c.max_i - c.min_i);
    level_mean += kLevelSmoothing * (ref_mean - level_mean);
    half_swing += kSwingSmoothing * (ref_half - half_swing);

    const double end_s = time_of(end);
    const bool excluded =
        cfg.exclude_s && r.start_s < cfg.exclude_s->second && end_s > cfg.exclude_s->first;
    ++cycle_index;
    last_cycle_excluded = false;
    if (excluded) {
      ++summary.excluded_cycles;
      last_cycle_excluded = true;
      return;
    }
    add_to_summary(r, end_s);
    if (sink) sink(r);
  }

  void add_to_summary(const CycleRecord& r, double end_s) {
    if (summary.cycles == 0) first_start = r.start_s;
    last_end = end_s;
    ++summary.cycles;
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

    const double span = last_end - first_start;
    const double f = static_cast<double>(s.cycles) / span;
    // Independent boundary errors e_k make successive periods differ by e_{k+2} − 2e_{k+1} + e_k
    // (variance 6σ²), while the span carries only the first and last: u(span) = √2·σ.
    double u_f = 0;
    if (n_dperiod >= 2) {
      const double sigma_b = std::sqrt(sum_dperiod2 / static_cast<double>(n_dperiod) / 6.0);
      u_f = f * std::sqrt(2.0) * sigma_b / span;
    }
    s.fundamental_hz = Estimate{f, 2 * u_f, 2};

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
    if (a.dc.count() < 2 * BatchMeans::kMinBatches) {
      s.warnings.push_back("only " + std::to_string(s.cycles) +
                           " whole cycles: the uncertainty cannot allow for correlation between "
                           "neighbouring cycles (64 or more cycles can)");
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
  impl_->ref_is_voltage = config.voltage_channel.has_value();
  if (config.harmonics) {
    HarmonicConfig h = *config.harmonics;
    h.sample_rate_hz = config.sample_rate_hz;
    impl_->harmonic.emplace(h);
  }
  impl_->held.reserve(std::min<std::size_t>(kAcquireFrames, 1 << 16));
}

void CycleEngine::consume(const SampleBlock& block) {
  Impl& m = *impl_;
  if (m.finished) throw std::logic_error("CycleEngine::consume after finish");
  if (block.channels <= m.cfg.current_channel ||
      (m.cfg.voltage_channel && block.channels <= *m.cfg.voltage_channel)) {
    throw std::invalid_argument("CycleEngine: block has too few channels");
  }
  for (std::size_t f = 0; f < block.frames; ++f) {
    const Frame fr = m.frame_of(block, f);
    if (m.acquiring) {
      m.held.push_back(fr);
      if (m.held.size() >= kAcquireFrames) {
        m.acquiring = false;
        m.learn_levels(m.held);
        for (const Frame& h : m.held) m.push(h);
        std::vector<Frame>().swap(m.held);
      }
    } else {
      m.push(fr);
    }
  }
}

const CycleSummary& CycleEngine::finish() {
  Impl& m = *impl_;
  if (m.finished) return m.summary;
  if (m.acquiring) {
    m.acquiring = false;
    m.learn_levels(m.held);
    for (const Frame& h : m.held) m.push(h);
    std::vector<Frame>().swap(m.held);
  }
  m.refine_pending = false;  // a crossing too close to the end for its fit is not used
  if (m.next_index > 0) m.integrate_up_to(m.next_index - 1);
  m.finished = true;
  m.build_summary();
  return m.summary;
}

}  // namespace lopside
