// Thresholdout (Dwork, Feldman, Hardt, Pitassi, Reingold & Roth 2015,
// arXiv:1506.02629 Fig. 1 and Theorem 25): a reusable holdout. Each query
// compares a model's mean loss on its training rows with the holdout's;
// while they agree to within a noisy threshold the training value is
// answered, so little about the holdout leaks; otherwise the holdout value
// plus Laplace noise is answered and one unit of the overfitting budget B
// is spent. Pure functions of their inputs (noise is passed in); thread-safe.
#ifndef UNSEEN_HARNESS_BOUNDS_THRESHOLDOUT_H_
#define UNSEEN_HARNESS_BOUNDS_THRESHOLDOUT_H_

#include <cstdint>

#include "storage/status.h"

namespace unseen {

// Theorem 25's settings for accuracy tau: T = 3 tau / 4 and
// sigma = tau / (96 ln(4m / beta)), for m queries, B overfitting answers and
// failure probability beta.
struct ThresholdoutParams {
  double tau = 0, threshold = 0, sigma = 0;
  uint64_t m = 0, budget = 0;
  double beta = 0;
};

// The holdout size Theorem 25 asks for:
// min{ n0(B, sigma, tau/8, beta/(2m)), n1(B, sigma, tau/8, beta/(2m)) } with
// n0(B, s, t, b) = max{ 2B/(s t), ln(6/b)/t^2 } and
// n1(B, s, t, b) = 80 sqrt(B ln(1/(t b))) / (t s).
double ThresholdoutRequiredN(double tau, uint64_t m, uint64_t budget, double beta);

// The smallest tau in (0, 1] whose required n is at most `n` (bisection; the
// requirement falls as tau grows), with the settings it implies.
// InvalidArgument naming the n needed at tau = 1 when no tau <= 1 is
// reachable, or for m or budget of 0, or beta outside (0, 1).
Result<ThresholdoutParams> ThresholdoutForHoldout(uint64_t n, uint64_t m, uint64_t budget,
                                                  double beta);

// A Laplace draw of scale b from a uniform u in (0, 1): the inverse CDF.
double Laplace(double u, double b);

// The secret state carried between queries: the noisy threshold and the
// overfitting budget left.
struct ThresholdoutState {
  double noisy_threshold = 0;  // T + gamma
  uint64_t budget_left = 0;
};

// One query (values on the [0, 1] scale). `eta`, `xi` and `gamma` are draws
// of Lap(4 sigma), Lap(sigma) and Lap(2 sigma). Returns the answer and
// whether the holdout was used (then the budget drops by one and the
// threshold is redrawn with gamma). REQUIRES state->budget_left >= 1.
struct ThresholdoutAnswer {
  double value = 0;
  bool used_holdout = false;
};
ThresholdoutAnswer ThresholdoutQuery(double train_mean, double holdout_mean,
                                     const ThresholdoutParams& p, double eta, double xi,
                                     double gamma, ThresholdoutState* state);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_BOUNDS_THRESHOLDOUT_H_
