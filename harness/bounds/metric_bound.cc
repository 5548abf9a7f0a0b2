#include "harness/bounds/metric_bound.h"

#include <algorithm>
#include <cmath>
#include <limits>

#include "harness/bounds/adaptivity.h"

namespace unseen {

namespace {

constexpr double kLn2 = 0.69314718055994530942;

Status Invalid(const std::string& what) { return Status::InvalidArgument(what); }

bool IsZeroOne(Metric m) { return m == Metric::kErrorRate || m == Metric::kAccuracy; }

// Mean and unbiased variance of `v` (variance 0 for one value), by Welford.
void MeanVariance(const std::vector<double>& v, double* mean, double* variance) {
  double m = 0, s = 0;
  for (size_t i = 0; i < v.size(); ++i) {
    double d = v[i] - m;
    m += d / static_cast<double>(i + 1);
    s += d * (v[i] - m);
  }
  *mean = m;
  *variance = v.size() > 1 ? std::fmax(0.0, s / static_cast<double>(v.size() - 1)) : 0.0;
}

// The per-row values of a row-mean metric, before clipping to the range.
Result<std::vector<double>> RowValues(Metric m, const Eigen::VectorXd& y, const Predictions& p,
                                      const RangeOptions& r) {
  const Eigen::Index n = y.size();
  std::vector<double> v(static_cast<size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) {
    double x = 0;
    switch (m) {
      case Metric::kErrorRate:
        x = p.value(i) != y(i) ? 1 : 0;
        break;
      case Metric::kAccuracy:
        x = p.value(i) == y(i) ? 1 : 0;
        break;
      case Metric::kLogLoss: {
        double q = p.proba(i, static_cast<Eigen::Index>(y(i)));
        x = -std::log(std::clamp(q, r.prob_floor, 1 - r.prob_floor));
        break;
      }
      case Metric::kBrier: {
        double d = p.proba(i, 1) - (y(i) == 1 ? 1 : 0);
        x = d * d;
        break;
      }
      case Metric::kMse: {
        double d = std::clamp(p.value(i), r.target_lo, r.target_hi) - y(i);
        x = d * d;
        break;
      }
      case Metric::kMae:
        x = std::fabs(std::clamp(p.value(i), r.target_lo, r.target_hi) - y(i));
        break;
      default:
        return Status::Internal("not a row-mean metric");
    }
    v[static_cast<size_t>(i)] = x;
  }
  return v;
}

// The grid of the reveal: lo + k step for k = 0..1000.
double GridDown(double x, double lo, double hi, double step) {
  double k = std::floor((x - lo) / step * (1 + 1e-12) + 1e-9);
  return std::clamp(lo + std::fmax(0.0, k) * step, lo, hi);
}
double GridUp(double x, double lo, double hi, double step) {
  double k = std::ceil((x - lo) / step * (1 - 1e-12) - 1e-9);
  return std::clamp(lo + std::fmax(0.0, k) * step, lo, hi);
}

}  // namespace

BoundMethod DefaultBoundMethod(Metric metric) {
  switch (metric) {
    case Metric::kErrorRate:
    case Metric::kAccuracy:
    case Metric::kBalancedAccuracy:
      return BoundMethod::kClopperPearson;
    case Metric::kAuc:
      return BoundMethod::kMcDiarmid;
    default:
      return BoundMethod::kHoeffding;
  }
}

Status CheckBoundMethod(Metric metric, BoundMethod method) {
  const std::string what = std::string("--method ") + BoundMethodName(method) + " with metric " +
                           MetricName(metric) + ": ";
  if (metric == Metric::kAuc && method != BoundMethod::kMcDiarmid) {
    return Invalid(what + "auc is not a mean over rows; expected mcdiarmid");
  }
  if (method == BoundMethod::kMcDiarmid && metric != Metric::kAuc) {
    return Invalid(what + "mcdiarmid is the bound for auc; expected hoeffding, bernstein" +
                   (IsZeroOne(metric) ? std::string(" or clopper-pearson") : std::string()));
  }
  if (method == BoundMethod::kClopperPearson && !IsZeroOne(metric) &&
      metric != Metric::kBalancedAccuracy) {
    return Invalid(what +
                   "clopper-pearson needs a 0/1 outcome (error_rate, accuracy, "
                   "balanced_accuracy); expected hoeffding or bernstein");
  }
  if (method == BoundMethod::kBernstein && metric == Metric::kBalancedAccuracy) {
    return Invalid(what +
                   "balanced_accuracy is bounded per class; expected clopper-pearson or "
                   "hoeffding");
  }
  return Status::OK();
}

Result<MetricSample> SampleMetric(Metric metric, const Eigen::VectorXd& y, const Predictions& p,
                                  int classes, const RangeOptions& range) {
  MetricSample s;
  s.metric = metric;
  s.n = static_cast<uint64_t>(y.size());
  if (s.n == 0) return Invalid("the holdout has no rows to score");
  if (p.value.size() != y.size())
    return Status::Internal("prediction count differs from row count");
  const bool needs_proba =
      metric == Metric::kLogLoss || metric == Metric::kBrier || metric == Metric::kAuc;
  if (needs_proba && (p.proba.rows() != y.size() || p.proba.cols() != classes)) {
    return Invalid(std::string("metric ") + MetricName(metric) +
                   " needs class probabilities, which this model does not give");
  }
  switch (metric) {
    case Metric::kBalancedAccuracy: {
      std::vector<uint64_t> rows(static_cast<size_t>(classes)), hits(rows.size());
      for (Eigen::Index i = 0; i < y.size(); ++i) {
        auto c = static_cast<size_t>(y(i));
        ++rows[c];
        hits[c] += p.value(i) == y(i);
      }
      double sum = 0;
      for (size_t c = 0; c < rows.size(); ++c) {
        if (rows[c] == 0) continue;
        s.class_rows.push_back(rows[c]);
        s.class_hits.push_back(hits[c]);
        sum += static_cast<double>(hits[c]) / static_cast<double>(rows[c]);
      }
      s.estimate = s.mean = sum / static_cast<double>(s.class_rows.size());
      return s;
    }
    case Metric::kAuc: {
      for (Eigen::Index i = 0; i < y.size(); ++i) (y(i) == 1 ? s.positives : s.negatives)++;
      if (s.positives == 0 || s.negatives == 0) {
        return Invalid("auc needs both classes among the holdout rows");
      }
      UNSEEN_ASSIGN_OR_RETURN(s.estimate, Score(metric, y, p, classes));
      s.mean = s.estimate;
      return s;
    }
    default:
      break;
  }
  if (metric == Metric::kMse || metric == Metric::kMae) {
    if (!std::isfinite(range.target_lo) || !std::isfinite(range.target_hi) ||
        !(range.target_lo < range.target_hi)) {
      return Invalid("target range [" + std::to_string(range.target_lo) + ", " +
                     std::to_string(range.target_hi) + "]; expected finite lo < hi");
    }
    const double w = range.target_hi - range.target_lo;
    s.range_hi = metric == Metric::kMse ? w * w : w;
  } else if (metric == Metric::kLogLoss) {
    if (!(range.prob_floor > 0 && range.prob_floor < 0.5)) {
      return Invalid("--prob-floor " + std::to_string(range.prob_floor) +
                     ": expected a value in (0, 0.5)");
    }
    s.range_hi = -std::log(range.prob_floor);
  }
  UNSEEN_ASSIGN_OR_RETURN(std::vector<double> v, RowValues(metric, y, p, range));
  double raw_sum = 0;
  for (double& x : v) {
    raw_sum += x;
    if (x > s.range_hi || x < s.range_lo) {
      ++s.outside_range;
      x = std::clamp(x, s.range_lo, s.range_hi);
    }
  }
  MeanVariance(v, &s.mean, &s.variance);
  s.estimate = raw_sum / static_cast<double>(s.n);
  if (IsZeroOne(metric)) {
    uint64_t k = 0;
    for (double x : v) k += x == 1;
    s.successes = k;
    s.mean = static_cast<double>(k) / static_cast<double>(s.n);
  }
  return s;
}

Result<Bound> MetricBound(const MetricSample& s, BoundMethod method, double delta,
                          double log_hypotheses) {
  UNSEEN_RETURN_IF_ERROR(CheckBoundMethod(s.metric, method));
  if (!(delta > 0 && delta < 1)) {
    return Invalid("--delta " + std::to_string(delta) + ": expected a value in (0, 1)");
  }
  if (s.metric == Metric::kAuc) {
    if (!std::isfinite(log_hypotheses) || log_hypotheses < 0) {
      return Invalid("ln H = " + std::to_string(log_hypotheses) + "; expected a finite value >= 0");
    }
    const double m = static_cast<double>(s.positives), n = static_cast<double>(s.negatives);
    const double eps = std::sqrt((m + n) / (2 * m * n) * (kLn2 + log_hypotheses - std::log(delta)));
    Bound b;
    b.estimate = s.estimate;
    b.half_width_raw = eps;
    b.lower = std::fmax(0.0, s.estimate - eps);
    b.upper = std::fmin(1.0, s.estimate + eps);
    b.log_delta_per_hypothesis = std::log(delta) - log_hypotheses;
    b.delta_per_hypothesis = std::exp(b.log_delta_per_hypothesis);
    b.method = BoundMethodName(method);
    b.assumptions =
        "The holdout rows of each class are independent draws from that class's population "
        "(the bound is conditional on the numbers of positive and negative rows), and every hypothesis that could have been reported is among the H "
        "counted (ln H = " +
        std::to_string(log_hypotheses) + "); no bound corrects a sampling bias.";
    return b;
  }
  if (s.metric == Metric::kBalancedAccuracy) {
    const double c = static_cast<double>(s.class_rows.size());
    Bound b;
    double lo = 0, hi = 0;
    for (size_t i = 0; i < s.class_rows.size(); ++i) {
      BoundRequest r;
      r.method = method;
      r.n = s.class_rows[i];
      r.successes = s.class_hits[i];
      r.mean = static_cast<double>(s.class_hits[i]) / static_cast<double>(s.class_rows[i]);
      r.delta = delta;
      r.log_hypotheses = log_hypotheses + std::log(c);
      UNSEEN_ASSIGN_OR_RETURN(Bound one, ComputeBound(r));
      lo += one.lower / c;
      hi += one.upper / c;
      b = one;
    }
    b.estimate = s.estimate;
    b.lower = std::fmin(lo, s.estimate);
    b.upper = std::fmax(hi, s.estimate);
    b.half_width_raw = std::numeric_limits<double>::quiet_NaN();
    b.log_delta_per_hypothesis = std::log(delta) - log_hypotheses;
    b.delta_per_hypothesis = std::exp(b.log_delta_per_hypothesis);
    b.assumptions = "Each class's recall is bounded on its own rows at delta / (H x " +
                    std::to_string(s.class_rows.size()) +
                    ") and the limits are averaged (conditional on the class counts); " +
                    b.assumptions;
    return b;
  }
  BoundRequest r;
  r.method = method;
  r.n = s.n;
  r.mean = s.mean;
  r.range_lo = s.range_lo;
  r.range_hi = s.range_hi;
  r.successes = s.successes;
  r.variance = s.variance;
  r.delta = delta;
  r.log_hypotheses = log_hypotheses;
  if (method == BoundMethod::kClopperPearson && s.successes) {
    r.range_lo = 0;
    r.range_hi = 1;
  }
  UNSEEN_ASSIGN_OR_RETURN(Bound b, ComputeBound(r));
  b.estimate = s.estimate;
  return b;
}

namespace {

// The 0/1 counts k' in 0..n whose rate k'/n rounds to the same grid point
// as `shown` (on [0, 1] with `step`): the counts the answer cannot tell apart.
std::pair<uint64_t, uint64_t> SameCell(double shown, uint64_t n, double step) {
  const double nn = static_cast<double>(n);
  auto cell = [&](uint64_t k) {
    return RoundToResolution(static_cast<double>(k) / nn, step, 0, 1);
  };
  // A start near the edges, then walk: the cell holds at most n/1000 + 2 counts.
  uint64_t lo = static_cast<uint64_t>(std::clamp(std::floor((shown - step) * nn), 0.0, nn));
  while (lo <= n && cell(lo) < shown) ++lo;
  while (lo > 0 && cell(lo - 1) >= shown) --lo;
  uint64_t hi = lo;
  while (hi < n && cell(hi + 1) <= shown) ++hi;
  return {lo, hi};
}

// The interval of a 0/1 sample whose count were k instead.
Result<Bound> BoundAtCount(MetricSample s, uint64_t k, BoundMethod method, double delta,
                           double log_hypotheses) {
  const double nn = static_cast<double>(s.n);
  s.successes = k;
  s.mean = s.estimate = static_cast<double>(k) / nn;
  s.variance = s.n > 1 ? static_cast<double>(k) * (nn - static_cast<double>(k)) / (nn * (nn - 1))
                       : 0.0;
  return MetricBound(s, method, delta, log_hypotheses);
}

bool IsRowMean(Metric m) { return m != Metric::kBalancedAccuracy && m != Metric::kAuc; }

}  // namespace

Result<RevealedAnswer> RevealAnswer(const MetricSample& s, BoundMethod method, double delta,
                                    double log_hypotheses) {
  UNSEEN_ASSIGN_OR_RETURN(Bound b, MetricBound(s, method, delta, log_hypotheses));
  RevealedAnswer a;
  const double lo = s.range_lo, hi = s.range_hi;
  a.step = (hi - lo) / static_cast<double>(kRevealGridPoints - 1);
  const double log_grid = std::log(static_cast<double>(kRevealGridPoints));
  // Row means show the mean of the clipped values, which is what the bound is about.
  const double center = IsRowMean(s.metric) ? s.mean : s.estimate;
  a.estimate = RoundToResolution(std::clamp(center, lo, hi), a.step, lo, hi);
  if (s.successes && s.n > 0) {
    // A 0/1 metric: the interval is the hull of the intervals of every count
    // that rounds to the shown rate, so the answer is a function of the shown
    // estimate alone and takes at most min(n + 1, 1001) values.
    const auto [k_lo, k_hi] = SameCell(a.estimate, s.n, a.step);
    double lower = b.lower, upper = b.upper;
    const bool monotone = method != BoundMethod::kBernstein;
    for (uint64_t k = k_lo; k <= k_hi; ++k) {
      if (monotone && k != k_lo && k != k_hi) continue;
      UNSEEN_ASSIGN_OR_RETURN(Bound at, BoundAtCount(s, k, method, delta, log_hypotheses));
      lower = std::fmin(lower, at.lower);
      upper = std::fmax(upper, at.upper);
    }
    if (method == BoundMethod::kHoeffding) {
      const double eps = b.half_width_raw + a.step / 2;
      lower = std::fmin(lower, a.estimate - eps);
      upper = std::fmax(upper, a.estimate + eps);
    }
    a.lower = GridDown(lower, lo, hi, a.step);
    a.upper = GridUp(upper, lo, hi, a.step);
    a.log_values = std::log(std::fmin(static_cast<double>(s.n) + 1,
                                      static_cast<double>(kRevealGridPoints)));
    return a;
  }
  if (method == BoundMethod::kHoeffding && IsRowMean(s.metric)) {
    // The interval is the shown estimate +- (eps + step/2): a function of the
    // shown estimate alone, so a reveal takes one of the grid's values. It
    // still holds, since the true mean is within step/2 of the shown one.
    const double eps = b.half_width_raw + a.step / 2;
    a.lower = GridDown(a.estimate - eps, lo, hi, a.step);
    a.upper = GridUp(a.estimate + eps, lo, hi, a.step);
    a.log_values = log_grid;
  } else {
    // Three grid values are shown. (Balanced accuracy's and AUC's intervals
    // depend on the holdout's class counts, which are not public.)
    a.lower = GridDown(b.lower, lo, hi, a.step);
    a.upper = GridUp(b.upper, lo, hi, a.step);
    a.log_values = 3 * log_grid;
  }
  if (CanFallOutsideRange(s.metric)) {
    // Whether some value fell outside the range is shown: one more bit.
    a.log_values += std::log(2.0);
  }
  return a;
}

bool CanFallOutsideRange(Metric metric) {
  return metric == Metric::kMse || metric == Metric::kMae;
}

}  // namespace unseen
