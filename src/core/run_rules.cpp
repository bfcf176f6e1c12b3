#include "lopside/run_rules.hpp"

#include <cmath>
#include <stdexcept>

namespace lopside {
namespace {

// Which side of the centre a deviation d = x − center lies on: +1 above, −1 below, 0 on the
// line. The Western Electric handbook speaks of points "on one side of the center line" and
// gives no side to a point on it, so 0 here breaks a run instead of extending either.
int side_of(double d) {
  return (d > 0) - (d < 0);
}

// True when at least `need` of the `window` consecutive points ending at `last` lie strictly
// beyond `zone` (= kσ) on side `side` (±1). Multiplying by ±1 is exact, so a point exactly on
// a zone line compares equal and is not beyond it. Caller guarantees last + 1 ≥ window.
bool enough_beyond(const std::vector<double>& series, double center, std::size_t last,
                   std::size_t window, std::size_t need, double zone, int side) {
  std::size_t count = 0;
  for (std::size_t j = last + 1 - window; j <= last; ++j) {
    if (side * (series[j] - center) > zone) ++count;
  }
  return count >= need;
}

}  // namespace

std::vector<RunRuleHit> run_rule_hits(const std::vector<double>& series, double center,
                                      double sigma) {
  if (!std::isfinite(sigma) || !(sigma > 0)) {
    throw std::invalid_argument("run_rule_hits: sigma must be finite and > 0");
  }
  if (!std::isfinite(center)) throw std::invalid_argument("run_rule_hits: center is not finite");
  for (double x : series) {
    if (!std::isfinite(x)) throw std::invalid_argument("run_rule_hits: a value is not finite");
  }

  // The zone lines, as distances from the centre. 2σ is exact in binary; 3σ is rounded once,
  // which only matters for a value within an ulp of the line.
  const double zone1 = sigma, zone2 = 2 * sigma, zone3 = 3 * sigma;

  std::vector<RunRuleHit> hits;
  int run_side = 0;         // side of the current run of points on one side (0: none)
  std::size_t run_len = 0;  // its length, ending at the current point
  for (std::size_t i = 0; i < series.size(); ++i) {
    const double d = series[i] - center;
    const int side = side_of(d);

    // Rule 1: a single point beyond 3σ, either side.
    if (std::abs(d) > zone3) hits.push_back({i, 1});

    // Rules 2 and 3: the completing point must itself be beyond the zone, so the only side to
    // test is its own. The windows must be complete (i ≥ 2, i ≥ 4).
    if (side != 0) {
      if (i >= 2 && side * d > zone2 && enough_beyond(series, center, i, 3, 2, zone2, side)) {
        hits.push_back({i, 2});
      }
      if (i >= 4 && side * d > zone1 && enough_beyond(series, center, i, 5, 4, zone1, side)) {
        hits.push_back({i, 3});
      }
    }

    // Rule 4: eight in a row on one side; every point of a run from its 8th on completes it.
    if (side == 0) {
      run_side = 0;
      run_len = 0;
    } else if (side == run_side) {
      ++run_len;
    } else {
      run_side = side;
      run_len = 1;
    }
    if (run_len >= 8) hits.push_back({i, 4});
  }
  return hits;
}

const char* run_rule_text(int rule) noexcept {
  switch (rule) {
    case 1:
      return "beyond 3 sigma";
    case 2:
      return "2 of 3 beyond 2 sigma";
    case 3:
      return "4 of 5 beyond 1 sigma";
    case 4:
      return "8 on one side";
  }
  return "?";
}

}  // namespace lopside
