// Bounds: two-sided confidence intervals for a holdout score that hold, at
// overall confidence 1 - delta, simultaneously for every one of H hypotheses
// the analyst could have reported (a union bound carried in log space).
// Pure computation with no state: every function is thread-safe.
// docs/bounds.md states each bound exactly, with its assumptions.
#ifndef UNSEEN_HARNESS_BOUNDS_BOUNDS_H_
#define UNSEEN_HARNESS_BOUNDS_BOUNDS_H_

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>

#include "storage/status.h"

namespace unseen {

// Values may be appended; never renumber (a method may be recorded by name or number).
enum class BoundMethod {
  kHoeffding = 0,       // bounded loss, no variance information
  kClopperPearson = 1,  // exact binomial, for a 0/1 outcome (error rate, accuracy)
  kBernstein = 2,       // empirical Bernstein (Maurer & Pontil 2009, Theorem 4)
  kMcDiarmid = 3,       // AUC by McDiarmid's inequality (harness/bounds/metric_bound.h)
};
// Every method, for counting the questions that can be asked (append here too).
inline constexpr BoundMethod kBoundMethods[] = {BoundMethod::kHoeffding,
                                                BoundMethod::kClopperPearson,
                                                BoundMethod::kBernstein, BoundMethod::kMcDiarmid};

// "hoeffding", "clopper-pearson", "bernstein" or "mcdiarmid" (exact, lower
// case). ComputeBound takes the first three; MetricBound also the fourth.
// Returns InvalidArgument naming the text and the accepted names otherwise.
Result<BoundMethod> ParseBoundMethod(std::string_view name);
// The name ParseBoundMethod accepts; "unknown" for a value outside the enum.
const char* BoundMethodName(BoundMethod method);

// The holdout statistics one bound is computed from.
struct BoundRequest {
  BoundMethod method = BoundMethod::kHoeffding;
  uint64_t n = 0;  // holdout size; REQUIRES n >= 1 (n >= 2 for Bernstein)
  // Empirical mean of the loss over the n rows, inside [range_lo, range_hi]
  // (up to 1e-9 of the range, which is clipped away). For Clopper–Pearson it
  // must equal range_lo + (range_hi - range_lo) * successes / n to within 1e-9
  // of the range, so that a count and a mean that disagree are caught.
  double mean = 0;
  // Clopper–Pearson only, REQUIRED there: k, the number of rows whose 0/1
  // outcome is 1 (the loss is range_hi on them and range_lo on the others).
  std::optional<uint64_t> successes;
  // Bernstein only, REQUIRED there: the unbiased sample variance (divisor
  // n - 1) of the raw values, in squared units of the range.
  std::optional<double> variance;
  double range_lo = 0;  // the loss range [a, b]; REQUIRES a < b, both finite
  double range_hi = 1;
  double delta = 0.05;  // overall failure probability; REQUIRES 0 < delta < 1
  // ln(H), H >= 1 the number of hypotheses the union bound runs over (see
  // harness/bounds/adaptivity.h). Default 0: a single hypothesis fixed in advance.
  double log_hypotheses = 0;
};

// "With probability at least 1 - delta, for every one of the H hypotheses at
// once, the true mean loss lies in [lower, upper]."
struct Bound {
  double estimate = 0;  // the empirical mean, inside [range_lo, range_hi]
  double lower = 0;     // clipped to [range_lo, range_hi]
  double upper = 0;     // clipped to [range_lo, range_hi]
  // Hoeffding/Bernstein: the eps of estimate +- eps before clipping (may
  // exceed the range: the bound is then vacuous). NaN for Clopper–Pearson,
  // whose interval is not symmetric.
  double half_width_raw = 0;
  // delta / H; underflows to 0 for huge H, so the log below is authoritative.
  double delta_per_hypothesis = 0;
  double log_delta_per_hypothesis = 0;  // ln(delta) - ln(H)
  std::string method;                   // BoundMethodName(request.method)
  std::string assumptions;              // one sentence, with the range used
};

// Computes the two-sided simultaneous bound of `request.method`:
//   Hoeffding:       eps = (b-a) sqrt( ln(2H/delta) / (2n) )
//   Clopper–Pearson: per hypothesis alpha = delta/H, alpha/2 in each tail,
//                    L = BetaInv(alpha/2; k, n-k+1) (0 when k = 0),
//                    U = BetaInv(1-alpha/2; k+1, n-k) (1 when k = n),
//                    then mapped to a + (b-a) L and a + (b-a) U. When alpha/2
//                    is below about 1e-100 the quantiles are found in log space
//                    (conservatively, to about 1e-12 relative), so any ln H works.
//   Bernstein:       eps = sqrt(2 V ln(4H/delta) / n) + 7 (b-a) ln(4H/delta) / (3(n-1))
// Returns InvalidArgument, naming the field and what was expected, for n == 0;
// delta outside (0, 1); a non-finite or negative log_hypotheses; an empty or
// non-finite range; a mean outside the range; Clopper–Pearson without
// successes, with successes > n, or with a mean that disagrees with k/n;
// Bernstein without variance, with n < 2, or with a variance that is negative
// or larger than any values in [a, b] can have. Internal if the numerical
// library fails (never expected).
//
// Example:
//   BoundRequest r;
//   r.method = BoundMethod::kClopperPearson;
//   r.n = 925; r.successes = 682; r.mean = 682.0 / 925;
//   Result<Bound> b = ComputeBound(r);  // [0.70767, 0.76541] at delta 0.05
Result<Bound> ComputeBound(const BoundRequest& request);

// One-sided Hoeffding: with probability >= 1 - delta/H for one fixed
// hypothesis, true mean <= empirical mean + eps (and likewise below), where
// eps = range * sqrt( ln(H/delta) / (2n) ). The two-sided eps of ComputeBound
// is this with log_hypotheses + ln 2. InvalidArgument for n == 0, delta
// outside (0, 1), a negative or non-finite log_hypotheses, or range <= 0.
Result<double> OneSidedHoeffdingEpsilon(uint64_t n, double range, double delta,
                                        double log_hypotheses);

// One-sided empirical Bernstein, Maurer & Pontil 2009 Theorem 4 at delta/H:
// eps = sqrt(2 V ln(2H/delta) / n) + 7 range ln(2H/delta) / (3(n-1)), with V
// the unbiased sample variance of the raw values. The two-sided eps of
// ComputeBound is this with log_hypotheses + ln 2. InvalidArgument for n < 2,
// a negative or non-finite variance, and the cases of OneSidedHoeffdingEpsilon.
Result<double> OneSidedBernsteinEpsilon(uint64_t n, double variance, double range, double delta,
                                        double log_hypotheses);

// An interval for a proportion, on the 0/1 scale.
struct ProportionInterval {
  double lower = 0;
  double upper = 1;
};

// Clopper–Pearson limits on the 0/1 scale with exp(log_tail) in each tail:
// lower = BetaInv(exp(log_tail); k, n-k+1) (0 when k = 0) and
// upper = BetaInv(1 - exp(log_tail); k+1, n-k) (1 when k = n). The two-sided
// interval at level 1 - alpha is log_tail = ln(alpha/2); the one-sided upper
// bound at delta (a test-set bound) is `upper` with log_tail = ln(delta).
// Tails below about 1e-100 are handled in log space (see ComputeBound).
// InvalidArgument for n == 0, k > n, or log_tail not finite and <= ln 0.5.
// Internal if the numerical library fails (never expected).
Result<ProportionInterval> ClopperPearsonLimits(uint64_t k, uint64_t n, double log_tail);

// The smallest holdout size n for which the two-sided Hoeffding eps of
// ComputeBound is at most `eps`: n = ceil( range^2 ln(2H/delta) / (2 eps^2) ).
// InvalidArgument for eps or range not positive and finite, delta outside
// (0, 1), a negative or non-finite log_hypotheses, or an n beyond 2^63.
Result<uint64_t> HoeffdingSampleSize(double eps, double delta, double log_hypotheses, double range);

namespace internal {

// The lower Clopper–Pearson limit BetaInv(exp(log_tail); k, n-k+1) found by
// bisection on a log-space incomplete beta function; ComputeBound uses it
// below a tail of about 1e-100 and wherever Boost's quantile fails. The result errs on
// the low (conservative) side. REQUIRES 1 <= k <= n, log_tail < 0.
// Exposed for tests.
double ClopperPearsonLowerLogSpace(uint64_t k, uint64_t n, double log_tail);

}  // namespace internal
}  // namespace unseen

#endif  // UNSEEN_HARNESS_BOUNDS_BOUNDS_H_
