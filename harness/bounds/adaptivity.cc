#include "harness/bounds/adaptivity.h"

#include <algorithm>
#include <cfloat>
#include <cmath>
#include <limits>

namespace unseen {
namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Beyond 2^40 grid points the step count (hi - lo) / step carries too few
// exact digits to tell "lands on hi" from "falls short of hi".
constexpr double kMaxSteps = 1099511627776.0;  // 2^40

// The grid of a resolution: points lo + i * step for i = 0..last, then hi
// itself as one more point when the grid does not land on it.
struct Grid {
  bool valid = false;
  double lo = 0, hi = 0, step = 0;
  uint64_t last = 0;       // index of the last grid point at or below hi
  bool extra_hi = false;   // hi is a point of its own, after `last`
  double denominator = 0;  // 1/step when that is an integer (e.g. 1000), else 0
};

Grid MakeGrid(double step, double lo, double hi) {
  Grid g;
  if (!(std::isfinite(step) && step > 0 && std::isfinite(lo) && std::isfinite(hi) && lo < hi)) {
    return g;
  }
  const double m = (hi - lo) / step;
  if (!(m <= kMaxSteps)) return g;
  const double nearest = std::round(m);
  const double tol = std::max(1e-9, 64 * DBL_EPSILON * m);
  if (std::fabs(m - nearest) <= tol) {
    g.last = static_cast<uint64_t>(nearest);
  } else {
    g.last = static_cast<uint64_t>(std::floor(m));
    g.extra_hi = true;
  }
  // Dividing by 1000 gives the correctly rounded 0.537, where 537 * 0.001
  // gives 0.5370000000000001: prefer it when the step is 1/integer.
  const double inverse = 1 / step;
  if (std::fabs(inverse - std::round(inverse)) <= 1e-9 * inverse)
    g.denominator = std::round(inverse);
  g.valid = true;
  g.lo = lo;
  g.hi = hi;
  g.step = step;
  return g;
}

double Point(const Grid& g, uint64_t i) {
  if (i == g.last && !g.extra_hi) return g.hi;
  const double di = static_cast<double>(i);
  const double p = g.denominator > 0 ? g.lo + di / g.denominator : g.lo + di * g.step;
  return std::min(p, g.hi);
}

}  // namespace

double LogHypotheses(const std::vector<uint64_t>& reveals_before_freeze,
                     uint64_t resolution_values) {
  if (resolution_values == 0) return kNaN;
  if (reveals_before_freeze.empty()) return 0;
  const double log_r = std::log(static_cast<double>(resolution_values));
  // log-sum-exp: factor out the largest exponent so every term is in (0, 1].
  double top = 0;
  for (uint64_t r : reveals_before_freeze) top = std::max(top, static_cast<double>(r) * log_r);
  double sum = 0;
  for (uint64_t r : reveals_before_freeze) sum += std::exp(static_cast<double>(r) * log_r - top);
  return top + std::log(sum);
}

double LogHypothesesOfWeights(const std::vector<double>& log_weights) {
  if (log_weights.empty()) return 0;
  double top = -std::numeric_limits<double>::infinity();
  for (double w : log_weights) {
    if (!std::isfinite(w)) return kNaN;
    top = std::max(top, w);
  }
  double sum = 0;
  for (double w : log_weights) sum += std::exp(w - top);
  return top + std::log(sum);
}

uint64_t ResolutionValues(double step, double lo, double hi) {
  const Grid g = MakeGrid(step, lo, hi);
  if (!g.valid) return 0;
  return g.last + 1 + (g.extra_hi ? 1 : 0);
}

double RoundToResolution(double value, double step, double lo, double hi) {
  const Grid g = MakeGrid(step, lo, hi);
  if (!g.valid || std::isnan(value)) return kNaN;
  const double v = std::min(std::max(value, lo), hi);
  const double steps = std::floor((v - lo) / step + 0.5);  // ties go up
  const uint64_t i = std::min(g.last, static_cast<uint64_t>(std::max(steps, 0.0)));
  const double p = Point(g, i);
  if (g.extra_hi && i == g.last && v - p >= hi - v) return hi;
  return p;
}

}  // namespace unseen
