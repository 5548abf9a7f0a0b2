// Metric bounds: a holdout score reduced to the statistics its interval is
// computed from, the interval for each metric, and the rounding of the
// answer that is shown, which fixes how many different answers one reveal
// can take (the R of harness/bounds/adaptivity.h). Pure functions; thread-safe.
// docs/bounds.md states every rule here.
#ifndef UNSEEN_HARNESS_BOUNDS_METRIC_BOUND_H_
#define UNSEEN_HARNESS_BOUNDS_METRIC_BOUND_H_

#include <Eigen/Dense>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "harness/bounds/bounds.h"
#include "harness/pipeline/metrics.h"
#include "storage/status.h"

namespace unseen {

// How the loss range of a metric is fixed before the holdout is read.
struct RangeOptions {
  // Regression: the target range [target_lo, target_hi]. Predictions are
  // clipped into it; squared errors then lie in [0, (hi-lo)^2] and absolute
  // errors in [0, hi-lo] for every target inside it.
  double target_lo = 0, target_hi = 0;
  std::string target_range_source;  // "declared" or "source" (for the report)
  // Log loss: probabilities are clipped into [prob_floor, 1 - prob_floor],
  // so the per-row loss lies in [0, -ln prob_floor].
  double prob_floor = 1e-4;
};

// The holdout statistics of one metric for one model.
struct MetricSample {
  Metric metric = Metric::kErrorRate;
  uint64_t n = 0;
  double estimate = 0;                // the metric's value on the holdout
  double range_lo = 0, range_hi = 1;  // where the metric (and each row's value) lies
  // Row-mean metrics (all but balanced_accuracy and auc): the per-row values
  // clipped into the range, their mean and unbiased variance (0 for n = 1).
  double mean = 0;
  double variance = 0;
  std::optional<uint64_t> successes;             // error_rate, accuracy: rows whose 0/1 value is 1
  std::vector<uint64_t> class_rows, class_hits;  // balanced_accuracy, per class present
  uint64_t positives = 0, negatives = 0;         // auc
  // Rows whose value fell outside the range and was clipped into it (a
  // regression target outside the declared range). The bound does not
  // cover them; reports show the count.
  uint64_t outside_range = 0;
};

// Reduces predictions on the holdout to a sample. `y` holds class indices
// (classification) or values. InvalidArgument for an empty holdout, a
// metric that needs probabilities the model does not give, auc on one class,
// a regression range that is not finite with lo < hi, or a prob_floor
// outside (0, 0.5).
Result<MetricSample> SampleMetric(Metric metric, const Eigen::VectorXd& y, const Predictions& p,
                                  int classes, const RangeOptions& range);

// The default method: clopper-pearson for error_rate, accuracy and
// balanced_accuracy; mcdiarmid for auc; hoeffding otherwise.
BoundMethod DefaultBoundMethod(Metric metric);
// InvalidArgument naming the method and the metric when it does not apply:
// clopper-pearson needs error_rate, accuracy or balanced_accuracy;
// mcdiarmid is for auc only and auc takes nothing else; bernstein is not
// defined per class (balanced_accuracy).
Status CheckBoundMethod(Metric metric, BoundMethod method);

// The two-sided interval for the metric at overall confidence 1 - delta over
// exp(log_hypotheses) hypotheses:
//  - row-mean metrics: ComputeBound on the per-row values;
//  - balanced_accuracy: each present class's recall bounded at
//    delta / (H * C) (union over the C classes), the interval being the mean
//    of the per-class limits; conditional on the class counts;
//  - auc: McDiarmid's inequality, eps = sqrt((m+n)/(2mn) ln(2H/delta)) for m
//    positives and n negatives, conditional on those counts.
// InvalidArgument as CheckBoundMethod and ComputeBound.
Result<Bound> MetricBound(const MetricSample& sample, BoundMethod method, double delta,
                          double log_hypotheses);

// What a reveal shows: the estimate rounded to the reveal grid (1001 points
// over the metric's range), the interval rounded outwards onto the same
// grid, and ln R, the log of the number of different answers this reveal
// could have shown (docs/bounds.md, "What an answer costs"). For a 0/1
// metric the interval is the hull over every count that rounds to the
// shown estimate, so the answer is a function of the shown estimate (R <=
// min(n + 1, 1001)); for Hoeffding on a row mean it is the shown estimate
// +- (eps + step/2) (R = 1001); otherwise three grid values (R = 1001^3).
// Metrics whose values can fall outside the range (CanFallOutsideRange)
// also show whether any did: R doubles. InvalidArgument as MetricBound.
struct RevealedAnswer {
  double estimate = 0, lower = 0, upper = 0;
  double step = 0;        // grid step: (range_hi - range_lo) / 1000
  double log_values = 0;  // ln R
};
Result<RevealedAnswer> RevealAnswer(const MetricSample& sample, BoundMethod method, double delta,
                                    double log_hypotheses);

// mse and mae: a target outside the declared range gives a value outside
// the metric's range, clipped into it (the bound does not cover it).
bool CanFallOutsideRange(Metric metric);

// The reveal grid's number of points.
constexpr uint64_t kRevealGridPoints = 1001;

}  // namespace unseen

#endif  // UNSEEN_HARNESS_BOUNDS_METRIC_BOUND_H_
