// The Ladder (Blum & Hardt 2015, Algorithm 1): a leaderboard over the
// holdout that releases a new score only when a submission beats the
// current one by more than a step eta, rounded to a multiple of eta. The
// released values then carry few bits, so many adaptive submissions can be
// answered with a bound that grows with log(k), not k. Pure functions;
// thread-safe. docs/bounds.md states the guarantee as computed here.
#ifndef UNSEEN_HARNESS_BOUNDS_LADDER_H_
#define UNSEEN_HARNESS_BOUNDS_LADDER_H_

#include <cstdint>
#include <optional>

#include "storage/status.h"

namespace unseen {

struct LadderParams {
  double step = 0;                    // eta, in the loss's units
  double range_lo = 0, range_hi = 1;  // the loss range
  uint64_t max_submissions = 1;       // k: every submission the ladder may ever answer
};

// [x]_eta: x rounded to the nearest integer multiple of eta (ties away from zero).
double RoundToStep(double x, double step);

// One step of Algorithm 1 for a loss (lower is better): with no leader yet
// (R_0 = infinity), or when loss < current - step, the released value is
// [loss]_step and the submission leads; otherwise the current value stays.
struct LadderStepResult {
  double released = 0;
  bool improved = false;
};
LadderStepResult LadderStep(std::optional<double> current, double loss, double step);

// ln |F|, a bound on the number of submissions the analyst could have made:
// a transcript is fixed by when the value improved and to what. An
// improvement lowers the value by more than eta, so there are at most
// c = floor(width / eta) + 1 of them, each at one of k times and one of
// G = floor(width / eta) + 2 grid values; with the k submissions:
// ln|F| <= ln k + c (ln k + ln G).
double LadderLogSubmissions(const LadderParams& p);

// The two-sided Hoeffding half-width over every submission in F at overall
// confidence 1 - delta: eps = width sqrt( (ln 2 + ln|F| - ln delta) / (2n) ).
// The leader's true loss then lies in [released - eta/2 - eps, released +
// eta/2 + eps]. InvalidArgument for n = 0, delta outside (0, 1), a step that
// is not positive or wider than the range, or k = 0.
Result<double> LadderEpsilon(uint64_t n, double delta, const LadderParams& p);

// The step of Blum & Hardt's analysis with C = 1: width * (ln(k n) / n)^(1/3).
double LadderDefaultStep(uint64_t k, uint64_t n, double width);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_BOUNDS_LADDER_H_
