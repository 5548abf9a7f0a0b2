#include "harness/bounds/ladder.h"

#include <cmath>
#include <string>

namespace unseen {

double RoundToStep(double x, double step) { return std::round(x / step) * step; }

LadderStepResult LadderStep(std::optional<double> current, double loss, double step) {
  if (!current || loss < *current - step) return {RoundToStep(loss, step), true};
  return {*current, false};
}

double LadderLogSubmissions(const LadderParams& p) {
  const double cells = std::floor((p.range_hi - p.range_lo) / p.step);
  const double improvements = cells + 1, grid = cells + 2;
  const double log_k = std::log(static_cast<double>(p.max_submissions));
  return log_k + improvements * (log_k + std::log(grid));
}

Result<double> LadderEpsilon(uint64_t n, double delta, const LadderParams& p) {
  if (n == 0) return Status::InvalidArgument("ladder: the holdout has no rows");
  if (!(delta > 0 && delta < 1))
    return Status::InvalidArgument("--delta: expected a value in (0, 1)");
  const double width = p.range_hi - p.range_lo;
  if (!(width > 0) || !std::isfinite(width))
    return Status::InvalidArgument("ladder: empty loss range");
  if (!(p.step > 0) || !(p.step <= width)) {
    return Status::InvalidArgument("--ladder-step " + std::to_string(p.step) +
                                   ": expected a step in (0, " + std::to_string(width) + "]");
  }
  if (p.max_submissions == 0) return Status::InvalidArgument("ladder: no submissions allowed");
  const double l = std::log(2.0) + LadderLogSubmissions(p) - std::log(delta);
  return width * std::sqrt(l / (2.0 * static_cast<double>(n)));
}

double LadderDefaultStep(uint64_t k, uint64_t n, double width) {
  const double kn = static_cast<double>(k) * static_cast<double>(n);
  return width * std::cbrt(std::log(kn) / static_cast<double>(n));
}

}  // namespace unseen
