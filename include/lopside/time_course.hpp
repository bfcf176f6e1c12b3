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

/// A point of the decimated series: the mean over `cycles` consecutive cycles.
struct CoursePoint {
  double time_s = 0;  ///< mid-time of the cycles
  double dc_offset_a = 0;
  double charge_asymmetry = 0;
  std::uint64_t cycles = 0;
};

/// y(t) = plateau + (initial − plateau)·e^(−(t − t0)/τ), fitted by least squares.
struct BuildUp {
  double start_s = 0;  ///< t0, the first cycle's time
  Estimate tau_s;
  Estimate plateau;          ///< in the series' unit (A for the DC, none for the asymmetry)
  double initial = 0;        ///< the fitted value at t0
  bool significant = false;  ///< beats a constant (F-test), τ inside the record, moves away from 0
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
};

struct TimeCourseResult {
  std::vector<CoursePoint> points;
  std::uint64_t cycles_per_point = 1;
  std::vector<Segment> segments;  ///< from change-point detection (PELT)
  std::vector<Event> events;
  std::optional<BuildUp> build_up;            ///< of the DC offset
  std::optional<BuildUp> asymmetry_build_up;  ///< of the charge asymmetry
  Estimate drift_a_per_s;  ///< slope of the DC over the capture after any build-up
  bool drift_significant = false;
  double scatter_a = 0;  ///< standard deviation of the points about their segments
  bool steady = false;   ///< no flip, no build-up, no significant drift
};

class TimeCourse {
 public:
  static constexpr std::size_t kMaxPoints = 4096;
  void add(const CycleRecord& cycle);
  TimeCourseResult finish() const;

 private:
  std::vector<CoursePoint> points_;
  CoursePoint open_;
  std::uint64_t per_point_ = 1;
  // running sums of the open point
  double sum_t_ = 0, sum_dc_w_ = 0, sum_w_ = 0, sum_asym_w_ = 0, sum_q_ = 0;
};

}  // namespace lopside
