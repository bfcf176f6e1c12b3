#pragma once
/// \file
/// The time course of the per-cycle series (DC offset and charge asymmetry) on captures of any
/// length: the series is decimated as it streams (neighbouring points merge in pairs whenever
/// kMaxPoints is reached), so memory stays bounded, then analysed for a build-up after
/// ignition, polarity flips, slow drift and steadiness.

#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "lopside/cycle_engine.hpp"

namespace lopside {

/// |DC| / AC RMS below which a DC does not matter (README.md, `dc_negligible`): the one bar of
/// materiality shared by the time course (flips, build-up, drift) and the diagnosis, so that a
/// level the diagnosis calls negligible can never make a flip or a build-up.
inline constexpr double kNegligibleDcShare = 0.002;

/// A point of the decimated series: the mean over `cycles` consecutive cycles.
struct CoursePoint {
  double time_s = 0;  ///< mid-time of the cycles
  double dc_offset_a = 0;
  double charge_asymmetry = 0;
  std::uint64_t cycles = 0;
  /// The extremes of the single cycles' values the point stands for: the envelope a plot draws
  /// so that one odd cycle in a million still shows after decimation.
  double dc_min_a = 0, dc_max_a = 0;
  double asymmetry_min = 0, asymmetry_max = 0;
};

/// y(t) = plateau + (initial − plateau)·e^(−(t − t0)/τ), fitted by least squares.
struct BuildUp {
  double start_s = 0;  ///< t0, the first cycle's time
  Estimate tau_s;
  Estimate plateau;    ///< in the series' unit (A for the DC, none for the asymmetry)
  double initial = 0;  ///< the fitted value at t0
  Estimate amplitude;  ///< plateau − initial, with its u95 from the fit
  /// Beats a constant (F-test), τ inside the record, moves away from 0, and the amplitude is
  /// significant (|amplitude| > its u95) and material (|amplitude| > the bar, see
  /// TimeCourseResult::material_dc_a; the asymmetry's bar is that over the mean |i|).
  bool significant = false;
};

/// A change of the discharge's preferred cathode: neighbouring segments of opposite sign.
struct Event {
  std::string kind;  ///< "flip" or "build_up"
  double time_s = 0;
  double level_before_a = 0;
  double level_after_a = 0;
  std::optional<double> tau_s;  ///< build_up only
};

struct Segment {
  double start_s = 0, end_s = 0;
  double mean_dc_a = 0;
  double u95_a = 0;
  std::size_t points = 0;
  /// |mean| > u95 and |mean| > TimeCourseResult::material_dc_a: a level that can take part in
  /// a flip. Stretches below either bar are "no preferred cathode" and never make a flip.
  bool decided = false;
};

struct TimeCourseResult {
  std::vector<CoursePoint> points;
  std::uint64_t cycles_per_point = 1;
  double ac_rms_a = 0;            ///< AC RMS over the whole capture, √(Σ ac_rms²·T / ΣT)
  double material_dc_a = 0;       ///< the materiality bar: share × ac_rms_a (0 if no AC RMS known)
  std::vector<Segment> segments;  ///< from change-point detection (PELT)
  std::vector<Event> events;
  std::optional<BuildUp> build_up;            ///< of the DC offset
  std::optional<BuildUp> asymmetry_build_up;  ///< of the charge asymmetry
  Estimate drift_a_per_s;          ///< slope of the DC over the capture after any build-up
  bool drift_significant = false;  ///< beyond its u95 and the change over the stretch is material
  double scatter_a = 0;            ///< standard deviation of the points about their segments
  bool steady = false;             ///< no flip, no build-up, no significant drift
};

class TimeCourse {
 public:
  static constexpr std::size_t kMaxPoints = 4096;
  /// `material_dc_share`: |DC| / AC RMS a level must exceed to count in a flip, a build-up or
  /// a drift (besides its uncertainty).
  explicit TimeCourse(double material_dc_share = kNegligibleDcShare)
      : material_share_(material_dc_share) {}
  void add(const CycleRecord& cycle);
  TimeCourseResult finish() const;

 private:
  std::vector<CoursePoint> points_;
  CoursePoint open_;
  std::uint64_t per_point_ = 1;
  double material_share_ = kNegligibleDcShare;
  // whole-capture sums for the materiality bar: Σ ac_rms²·T, ΣT, Σ(Q+ + Q−)
  double total_ac2_t_ = 0, total_t_ = 0, total_q_ = 0;
  // running sums of the open point
  double sum_t_ = 0, sum_dc_w_ = 0, sum_w_ = 0, sum_asym_w_ = 0, sum_q_ = 0;
};

}  // namespace lopside
