#include "harness/bounds/thresholdout.h"

#include <algorithm>
#include <cmath>
#include <string>

namespace unseen {

double ThresholdoutRequiredN(double tau, uint64_t m, uint64_t budget, double beta) {
  const double md = static_cast<double>(m), bd = static_cast<double>(budget);
  const double sigma = tau / (96 * std::log(4 * md / beta));
  const double t = tau / 8, b = beta / (2 * md);
  const double n0 = std::max(2 * bd / (sigma * t), std::log(6 / b) / (t * t));
  const double n1 = 80 * std::sqrt(bd * std::log(1 / (t * b))) / (t * sigma);
  return std::min(n0, n1);
}

Result<ThresholdoutParams> ThresholdoutForHoldout(uint64_t n, uint64_t m, uint64_t budget,
                                                  double beta) {
  if (m == 0 || budget == 0)
    return Status::InvalidArgument("thresholdout: needs m >= 1 queries and B >= 1");
  if (!(beta > 0 && beta < 1))
    return Status::InvalidArgument("--delta: expected a value in (0, 1)");
  const double nd = static_cast<double>(n);
  const double at_one = ThresholdoutRequiredN(1.0, m, budget, beta);
  if (at_one > nd) {
    return Status::InvalidArgument("thresholdout: Theorem 25 needs a holdout of at least " +
                                   std::to_string(static_cast<uint64_t>(std::ceil(at_one))) +
                                   " rows for any accuracy tau <= 1 with m = " + std::to_string(m) +
                                   " queries and B = " + std::to_string(budget) +
                                   "; this holdout has " + std::to_string(n));
  }
  double lo = 0, hi = 1;
  for (int i = 0; i < 200 && hi - lo > 1e-12; ++i) {
    const double mid = (lo + hi) / 2;
    (ThresholdoutRequiredN(mid, m, budget, beta) <= nd ? hi : lo) = mid;
  }
  ThresholdoutParams p;
  p.tau = hi;
  p.threshold = 3 * hi / 4;
  p.sigma = hi / (96 * std::log(4 * static_cast<double>(m) / beta));
  p.m = m;
  p.budget = budget;
  p.beta = beta;
  return p;
}

double Laplace(double u, double b) {
  const double v = u - 0.5;
  return -b * (v < 0 ? -1.0 : 1.0) * std::log(1 - 2 * std::fabs(v));
}

ThresholdoutAnswer ThresholdoutQuery(double train_mean, double holdout_mean,
                                     const ThresholdoutParams& p, double eta, double xi,
                                     double gamma, ThresholdoutState* state) {
  ThresholdoutAnswer a;
  if (std::fabs(holdout_mean - train_mean) > state->noisy_threshold + eta) {
    a.value = std::clamp(holdout_mean + xi, 0.0, 1.0);
    a.used_holdout = true;
    state->budget_left -= 1;
    state->noisy_threshold = p.threshold + gamma;
  } else {
    a.value = train_mean;
  }
  return a;
}

}  // namespace unseen
