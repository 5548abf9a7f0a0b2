#include "harness/bounds/bounds.h"

#include <boost/math/special_functions/beta.hpp>
#include <boost/math/special_functions/gamma.hpp>
#include <cfloat>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <exception>
#include <limits>
#include <string>

namespace unseen {
namespace {

constexpr double kLn2 = 0.69314718055994530942;
constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
// Below this ln(tail) (exp(-230) ~ 1e-100) Boost 1.74's beta quantiles often
// give up (k = 2, n = 5 at 5e-201 throws; k = 3 returns 0), and the log-space
// search, checked against mpmath down to exp(-10000), takes over.
constexpr double kLogTailFloor = -230.0;
// Relative slack for a mean or variance that rounding pushed just past a limit.
constexpr double kSlack = 1e-9;

// The shortest of %.15g/%.17g that reads back as v, so 0.05 prints as 0.05.
std::string Num(double v) {
  char buf[32];
  std::snprintf(buf, sizeof(buf), "%.15g", v);
  if (std::strtod(buf, nullptr) != v) std::snprintf(buf, sizeof(buf), "%.17g", v);
  return buf;
}

std::string Short(double v) {
  char buf[32];
  std::snprintf(buf, sizeof(buf), "%g", v);
  return buf;
}

Status Invalid(const std::string& what) {
  return Status::InvalidArgument("bound request: " + what);
}

Status CheckDelta(double delta) {
  if (!(delta > 0 && delta < 1)) {
    return Invalid("delta = " + Num(delta) + "; expected a probability strictly between 0 and 1");
  }
  return Status::OK();
}

Status CheckLogHypotheses(double log_hypotheses) {
  if (!std::isfinite(log_hypotheses) || log_hypotheses < 0) {
    return Invalid("log_hypotheses = " + Num(log_hypotheses) +
                   "; expected ln(H) for a hypothesis count H >= 1, a finite value >= 0");
  }
  return Status::OK();
}

Status CheckRange(double range) {
  if (!std::isfinite(range) || range <= 0) {
    return Invalid("range = " + Num(range) + "; expected a finite width above 0");
  }
  return Status::OK();
}

Status CheckCommon(uint64_t n, double range, double delta, double log_hypotheses) {
  if (n == 0) return Invalid("n = 0; expected a holdout of at least one row");
  UNSEEN_RETURN_IF_ERROR(CheckRange(range));
  UNSEEN_RETURN_IF_ERROR(CheckDelta(delta));
  return CheckLogHypotheses(log_hypotheses);
}

// ln(2H/delta) and friends: the union bound never leaves log space, so H may
// be far beyond the range of a double.
double LogInverse(double delta, double log_hypotheses, double extra_log) {
  return extra_log + log_hypotheses - std::log(delta);
}

// Continued fraction of the incomplete beta function (modified Lentz), which
// converges quickly for x < (a+1)/(a+b+2). Sets *converged.
double BetaContinuedFraction(double a, double b, double x, bool* converged) {
  constexpr double kTiny = 1e-300;
  constexpr int kMaxIterations = 1000000;
  const double qab = a + b, qap = a + 1, qam = a - 1;
  double c = 1, d = 1 - qab * x / qap;
  if (std::fabs(d) < kTiny) d = kTiny;
  d = 1 / d;
  double h = d;
  *converged = false;
  for (int m = 1; m <= kMaxIterations; ++m) {
    const double m2 = 2.0 * m;
    double aa = m * (b - m) * x / ((qam + m2) * (a + m2));
    d = 1 + aa * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1 + aa / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1 / d;
    h *= d * c;
    aa = -(a + m) * (qab + m) * x / ((a + m2) * (qap + m2));
    d = 1 + aa * d;
    if (std::fabs(d) < kTiny) d = kTiny;
    c = 1 + aa / c;
    if (std::fabs(c) < kTiny) c = kTiny;
    d = 1 / d;
    const double del = d * c;
    h *= del;
    if (std::fabs(del - 1) < 4 * DBL_EPSILON) {
      *converged = true;
      break;
    }
  }
  return h;
}

// ln Gamma(z) - [(z - 1/2) ln z - z + ln(2 pi)/2], the Stirling series; the
// terms kept leave an error below 1e-16 for z >= kStirlingFrom.
constexpr double kStirlingFrom = 30;
double StirlingCorrection(double z) {
  const double z2 = z * z;
  return (1.0 / 12 - (1.0 / 360 - (1.0 / 1260 - 1.0 / (1680 * z2)) / z2) / z2) / z;
}

// ln( x^a (1-x)^b / B(a, b) ), written so that the large pieces of ln B(a, b)
// cancel algebraically rather than in floating point (lgamma(1e5) is about
// 1e6, so subtracting lgammas would leave only ~1e-10 of absolute accuracy).
// *magnitude receives the sum of the sizes of the terms actually added,
// which bounds the rounding error in units of DBL_EPSILON.
double LogBetaPrefix(double a, double b, double x, double* magnitude) {
  constexpr double kHalfLog2Pi = 0.91893853320467274178;
  const double s = a + b;
  const double lx = std::log(x), l1x = std::log1p(-x);
  if (a >= kStirlingFrom && b >= kStirlingFrom) {
    const double t1 = a * (lx - std::log(a / s));
    const double t2 = b * (l1x - std::log1p(-a / s));
    const double t3 = 0.5 * std::log(a / s * b) - kHalfLog2Pi;
    const double t4 = StirlingCorrection(s) - StirlingCorrection(a) - StirlingCorrection(b);
    *magnitude = std::fabs(t1) + std::fabs(t2) + std::fabs(t3) + std::fabs(t4);
    return t1 + t2 + t3 + t4;
  }
  if (a < kStirlingFrom && b < kStirlingFrom) {
    const double t1 = a * lx, t2 = b * l1x;
    const double t3 = boost::math::lgamma(s) - boost::math::lgamma(a) - boost::math::lgamma(b);
    *magnitude = std::fabs(t1) + std::fabs(t2) + std::fabs(boost::math::lgamma(s)) + 32;
    return t1 + t2 + t3;
  }
  // One small parameter u and one large v: ln Gamma(v) - ln Gamma(u + v) by
  // Stirling, = (v - 1/2) ln(v/s) - u ln s + u + corrections.
  const double u = a < b ? a : b, v = a < b ? b : a;
  const double gap = (v - 0.5) * std::log1p(-u / s) - u * std::log(s) + u + StirlingCorrection(v) -
                     StirlingCorrection(s);
  const double t1 = a * lx, t2 = b * l1x, t3 = -boost::math::lgamma(u);
  *magnitude = std::fabs(t1) + std::fabs(t2) + std::fabs(t3) + std::fabs(gap) + u * std::log(s);
  return t1 + t2 + t3 - gap;
}

// An upper estimate of ln I_x(a, b), the log of the regularised incomplete
// beta function: the computed value plus a bound on its rounding error, so
// that "estimate <= target" proves I_x <= e^target. Below (a+1)/(a+b+2), the
// lower tail where I_x may be far below the double range, it sums the
// continued fraction in log space; above, I_x is of order one and Boost's
// ibeta is exact enough. +infinity when the continued fraction does not
// converge, which the search treats as "too big" (the conservative side).
double LogIncompleteBetaUpper(double a, double b, double x) {
  if (x >= (a + 1) / (a + b + 2)) {
    const double i = boost::math::ibeta(a, b, x);
    return i > 0 ? std::log(i) + 1e-12 : std::numeric_limits<double>::infinity();
  }
  bool converged = false;
  const double cf = BetaContinuedFraction(a, b, x, &converged);
  if (!converged || !(cf > 0)) return std::numeric_limits<double>::infinity();
  double magnitude = 0;
  const double prefix = LogBetaPrefix(a, b, x, &magnitude);
  const double tail = std::log(cf) - std::log(a);
  magnitude += std::fabs(std::log(cf)) + std::fabs(std::log(a));
  return prefix + tail + 16 * DBL_EPSILON * magnitude + 1e-13;
}

// BetaInv(e^log_tail; a, b) from Boost, or NaN when Boost throws or returns
// a point whose tail is not e^log_tail: its root finder gives up on some tiny
// tails with small a (e.g. a = 2 at 5e-201), and the log-space search steps in.
double BoostLowerQuantile(double a, double b, double log_tail) {
  const double tail = std::exp(log_tail);
  try {
    const double x = boost::math::ibeta_inv(a, b, tail);
    const double check = boost::math::ibeta(a, b, x);
    if (std::fabs(check / tail - 1) <= 1e-3) return x;
  } catch (const std::exception&) {
  }
  return kNaN;
}

// The same for BetaInv(1 - e^log_tail; a, b), the upper quantile.
double BoostUpperQuantile(double a, double b, double log_tail) {
  const double tail = std::exp(log_tail);
  try {
    const double x = boost::math::ibetac_inv(a, b, tail);
    const double check = boost::math::ibetac(a, b, x);
    if (std::fabs(check / tail - 1) <= 1e-3) return x;
  } catch (const std::exception&) {
  }
  return kNaN;
}

Result<ProportionInterval> LimitsUnchecked(uint64_t k, uint64_t n, double log_tail) {
  ProportionInterval out;
  const double kd = static_cast<double>(k), nd = static_cast<double>(n);
  const bool boost_range = log_tail >= kLogTailFloor;
  try {
    if (k > 0) {
      out.lower = boost_range ? BoostLowerQuantile(kd, nd - kd + 1, log_tail) : kNaN;
      if (std::isnan(out.lower)) out.lower = internal::ClopperPearsonLowerLogSpace(k, n, log_tail);
    }
    if (k < n) {
      out.upper = boost_range ? BoostUpperQuantile(kd + 1, nd - kd, log_tail) : kNaN;
      // BetaInv(1-t; k+1, n-k) = 1 - BetaInv(t; n-k, k+1): the mirror image.
      if (std::isnan(out.upper)) {
        out.upper = 1 - internal::ClopperPearsonLowerLogSpace(n - k, n, log_tail);
      }
    }
  } catch (const std::exception& e) {  // Boost's lgamma/ibeta; not expected for a, b >= 1
    return Status::Internal("Clopper-Pearson limits for k = " + std::to_string(k) +
                            ", n = " + std::to_string(n) + ": " + e.what());
  }
  if (!(out.lower >= 0 && out.lower <= out.upper && out.upper <= 1)) {
    return Status::Internal("Clopper-Pearson limits for k = " + std::to_string(k) +
                            ", n = " + std::to_string(n) + " came out as [" + Num(out.lower) +
                            ", " + Num(out.upper) + "]");
  }
  return out;
}

std::string Assumptions(const BoundRequest& r) {
  const std::string range = "[" + Short(r.range_lo) + ", " + Short(r.range_hi) + "]";
  std::string what;
  switch (r.method) {
    case BoundMethod::kHoeffding:
      what = "each loss lies in " + range;
      break;
    case BoundMethod::kClopperPearson:
      what = "each outcome is 0 or 1 (the loss is " + Short(r.range_lo) + " or " +
             Short(r.range_hi) + ")";
      break;
    case BoundMethod::kBernstein:
      what = "each loss lies in " + range + " and the variance is the unbiased sample variance";
      break;
    case BoundMethod::kMcDiarmid:
      break;
  }
  return "The holdout rows are an independent, identically distributed sample of the population "
         "the model will meet, " +
         what +
         ", and every hypothesis that could have been reported is among the H counted (ln H = " +
         Short(r.log_hypotheses) + "); no bound corrects a sampling bias.";
}

// Validates the fields every method reads and returns the mean moved inside
// the range when rounding put it a hair outside.
Result<double> CheckRequest(const BoundRequest& r) {
  if (!std::isfinite(r.range_lo) || !std::isfinite(r.range_hi) || !(r.range_lo < r.range_hi)) {
    return Invalid("range [" + Num(r.range_lo) + ", " + Num(r.range_hi) +
                   "]; expected finite range_lo < range_hi");
  }
  const double width = r.range_hi - r.range_lo;
  UNSEEN_RETURN_IF_ERROR(CheckCommon(r.n, width, r.delta, r.log_hypotheses));
  const double slack = kSlack * width;
  if (!(r.mean >= r.range_lo - slack && r.mean <= r.range_hi + slack)) {
    return Invalid("mean = " + Num(r.mean) + " lies outside the loss range [" + Num(r.range_lo) +
                   ", " + Num(r.range_hi) + "]");
  }
  return std::fmin(std::fmax(r.mean, r.range_lo), r.range_hi);
}

Bound Symmetric(const BoundRequest& r, double mean, double eps) {
  Bound b;
  b.estimate = mean;
  b.half_width_raw = eps;
  b.lower = std::fmax(r.range_lo, mean - eps);
  b.upper = std::fmin(r.range_hi, mean + eps);
  return b;
}

Result<Bound> ClopperPearsonBound(const BoundRequest& r) {
  if (!r.successes.has_value()) {
    return Invalid("clopper-pearson needs successes (the count k of rows whose outcome is 1)");
  }
  const uint64_t k = *r.successes;
  if (k > r.n) {
    return Invalid("successes = " + std::to_string(k) + " exceeds n = " + std::to_string(r.n));
  }
  const double width = r.range_hi - r.range_lo;
  const double p = static_cast<double>(k) / static_cast<double>(r.n);
  const double expected_mean = r.range_lo + width * p;
  if (std::fabs(r.mean - expected_mean) > kSlack * width) {
    return Invalid("mean = " + Num(r.mean) + " disagrees with successes/n = " + std::to_string(k) +
                   "/" + std::to_string(r.n) + ", which gives " + Num(expected_mean) +
                   " on the range");
  }
  const double log_alpha = std::log(r.delta) - r.log_hypotheses;
  UNSEEN_ASSIGN_OR_RETURN(ProportionInterval pi, LimitsUnchecked(k, r.n, log_alpha - kLn2));
  Bound b;
  b.estimate = expected_mean;
  b.half_width_raw = kNaN;
  b.lower = k == 0 ? r.range_lo : std::fmax(r.range_lo, r.range_lo + width * pi.lower);
  b.upper = k == r.n ? r.range_hi : std::fmin(r.range_hi, r.range_lo + width * pi.upper);
  return b;
}

}  // namespace

Result<BoundMethod> ParseBoundMethod(std::string_view name) {
  if (name == "hoeffding") return BoundMethod::kHoeffding;
  if (name == "clopper-pearson") return BoundMethod::kClopperPearson;
  if (name == "bernstein") return BoundMethod::kBernstein;
  if (name == "mcdiarmid") return BoundMethod::kMcDiarmid;
  return Status::InvalidArgument("bound method \"" + std::string(name) +
                                 "\": expected one of hoeffding, clopper-pearson, bernstein, mcdiarmid");
}

const char* BoundMethodName(BoundMethod method) {
  switch (method) {
    case BoundMethod::kHoeffding:
      return "hoeffding";
    case BoundMethod::kClopperPearson:
      return "clopper-pearson";
    case BoundMethod::kBernstein:
      return "bernstein";
    case BoundMethod::kMcDiarmid:
      return "mcdiarmid";
  }
  return "unknown";
}

Result<double> OneSidedHoeffdingEpsilon(uint64_t n, double range, double delta,
                                        double log_hypotheses) {
  UNSEEN_RETURN_IF_ERROR(CheckCommon(n, range, delta, log_hypotheses));
  return range * std::sqrt(LogInverse(delta, log_hypotheses, 0) / (2.0 * static_cast<double>(n)));
}

Result<double> OneSidedBernsteinEpsilon(uint64_t n, double variance, double range, double delta,
                                        double log_hypotheses) {
  UNSEEN_RETURN_IF_ERROR(CheckCommon(n, range, delta, log_hypotheses));
  if (n < 2) return Invalid("n = 1; the empirical Bernstein bound needs n >= 2");
  if (!std::isfinite(variance) || variance < 0) {
    return Invalid("variance = " + Num(variance) + "; expected a finite value >= 0");
  }
  const double nd = static_cast<double>(n);
  const double l = LogInverse(delta, log_hypotheses, kLn2);  // ln(2H/delta), Theorem 4
  return std::sqrt(2 * variance * l / nd) + 7 * range * l / (3 * (nd - 1));
}

Result<ProportionInterval> ClopperPearsonLimits(uint64_t k, uint64_t n, double log_tail) {
  if (n == 0) return Invalid("n = 0; expected at least one trial");
  if (k > n) return Invalid("k = " + std::to_string(k) + " exceeds n = " + std::to_string(n));
  if (!std::isfinite(log_tail) || log_tail > -kLn2) {
    return Invalid("log_tail = " + Num(log_tail) + "; expected a finite value <= ln 0.5");
  }
  return LimitsUnchecked(k, n, log_tail);
}

Result<uint64_t> HoeffdingSampleSize(double eps, double delta, double log_hypotheses,
                                     double range) {
  if (!std::isfinite(eps) || eps <= 0) {
    return Invalid("eps = " + Num(eps) + "; expected a finite half-width above 0");
  }
  UNSEEN_RETURN_IF_ERROR(CheckRange(range));
  UNSEEN_RETURN_IF_ERROR(CheckDelta(delta));
  UNSEEN_RETURN_IF_ERROR(CheckLogHypotheses(log_hypotheses));
  const double ratio = range / eps;
  const double n = std::ceil(ratio * ratio * LogInverse(delta, log_hypotheses, kLn2) / 2);
  if (!(n <= 9.2e18)) {
    return Invalid("eps = " + Num(eps) + " needs a holdout of about " + Num(n) +
                   " rows, beyond 2^63");
  }
  return static_cast<uint64_t>(std::fmax(n, 1.0));
}

Result<Bound> ComputeBound(const BoundRequest& r) {
  UNSEEN_ASSIGN_OR_RETURN(double mean, CheckRequest(r));
  const double width = r.range_hi - r.range_lo;
  Bound b;
  switch (r.method) {
    case BoundMethod::kHoeffding: {
      UNSEEN_ASSIGN_OR_RETURN(
          double eps, OneSidedHoeffdingEpsilon(r.n, width, r.delta, r.log_hypotheses + kLn2));
      b = Symmetric(r, mean, eps);
      break;
    }
    case BoundMethod::kClopperPearson: {
      UNSEEN_ASSIGN_OR_RETURN(b, ClopperPearsonBound(r));
      break;
    }
    case BoundMethod::kBernstein: {
      if (!r.variance.has_value()) {
        return Invalid("bernstein needs variance (the unbiased sample variance of the values)");
      }
      if (r.n < 2) return Invalid("n = " + std::to_string(r.n) + "; bernstein needs n >= 2");
      // Values in [a, b] have an unbiased sample variance of at most
      // (b-a)^2/4 * n/(n-1); more means the variance belongs to other data.
      const double nd = static_cast<double>(r.n);
      const double max_variance = width * width / 4 * nd / (nd - 1);
      if (*r.variance > max_variance * (1 + kSlack)) {
        return Invalid("variance = " + Num(*r.variance) + " exceeds " + Num(max_variance) +
                       ", the largest values in the range can have");
      }
      UNSEEN_ASSIGN_OR_RETURN(
          double eps, OneSidedBernsteinEpsilon(r.n, std::fmin(*r.variance, max_variance), width,
                                               r.delta, r.log_hypotheses + kLn2));
      b = Symmetric(r, mean, eps);
      break;
    }
    default:
      return Invalid("method = " + std::to_string(static_cast<int>(r.method)) +
                     "; expected hoeffding, clopper-pearson or bernstein");
  }
  b.log_delta_per_hypothesis = std::log(r.delta) - r.log_hypotheses;
  b.delta_per_hypothesis = std::exp(b.log_delta_per_hypothesis);
  b.method = BoundMethodName(r.method);
  b.assumptions = Assumptions(r);
  return b;
}

namespace internal {

double ClopperPearsonLowerLogSpace(uint64_t k, uint64_t n, double log_tail) {
  const double a = static_cast<double>(k), b = static_cast<double>(n - k) + 1;
  // L solves I_L(a, b) = e^log_tail, I increasing in L. Invariant:
  // I(lo) <= e^log_tail < I(hi), starting from I(0) = 0 and I(1) = 1.
  double lo = 0, hi = 1;
  try {
    for (int i = 0; i < 4000; ++i) {
      const double mid = lo + (hi - lo) / 2;
      if (mid <= lo || mid >= hi) break;
      if (LogIncompleteBetaUpper(a, b, mid) <= log_tail) {
        lo = mid;  // proven at or below the true quantile
      } else {
        hi = mid;
      }
    }
  } catch (const std::exception&) {
    // Boost's lgamma/ibeta do not throw for a, b >= 1 and x in (0, 1); if
    // they ever did, lo is still proven below the quantile.
  }
  return lo;
}

}  // namespace internal
}  // namespace unseen
