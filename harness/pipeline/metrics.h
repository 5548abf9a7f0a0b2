// Metrics: scores of predictions against a target, for model selection now
// and holdout evaluation later. Pure functions; thread-safe.
#ifndef UNSEEN_HARNESS_PIPELINE_METRICS_H_
#define UNSEEN_HARNESS_PIPELINE_METRICS_H_

#include <Eigen/Dense>

#include <string>
#include <string_view>
#include <vector>

#include "harness/pipeline/learner.h"
#include "storage/status.h"

namespace unseen {

// Written to the ledger by name; append only.
enum class Metric { kErrorRate, kAccuracy, kBalancedAccuracy, kLogLoss, kBrier, kAuc, kMse, kMae };

Result<Metric> ParseMetric(std::string_view name);
// Every metric ParseMetric knows, in a fixed order.
std::vector<Metric> AllMetrics();
const char* MetricName(Metric m);
bool LowerIsBetter(Metric m);
// error_rate for classification, mse for regression.
Metric DefaultMetric(LearnTask task);
// InvalidArgument when the metric does not apply to the task (or, for auc
// and brier, to more than two classes).
Status CheckMetric(Metric m, LearnTask task, int classes);

struct Predictions {
  Eigen::VectorXd value;  // class index (classification) or value (regression)
  Eigen::MatrixXd proba;  // n x classes probabilities; 0 x 0 when the learner gives none
};

// The metric's value. Log loss clips probabilities to [1e-15, 1 - 1e-15]
// (as scikit-learn does); AUC and Brier use the probability of class 1.
// FailedPrecondition when the metric needs probabilities that are absent.
Result<double> Score(Metric m, const Eigen::VectorXd& y, const Predictions& p, int classes);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_METRICS_H_
