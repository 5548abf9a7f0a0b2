#include "harness/pipeline/metrics.h"

#include <algorithm>
#include <cmath>
#include <numeric>
#include <vector>

namespace unseen {

namespace {

struct MetricName_ {
  Metric metric;
  const char* name;
};
constexpr MetricName_ kNames[] = {
    {Metric::kErrorRate, "error_rate"}, {Metric::kAccuracy, "accuracy"},
    {Metric::kBalancedAccuracy, "balanced_accuracy"}, {Metric::kLogLoss, "log_loss"},
    {Metric::kBrier, "brier"}, {Metric::kAuc, "auc"}, {Metric::kMse, "mse"}, {Metric::kMae, "mae"}};

bool NeedsProba(Metric m) { return m == Metric::kLogLoss || m == Metric::kBrier || m == Metric::kAuc; }

// Mann-Whitney U over the ranks of the class-1 scores, ties averaged.
double Auc(const Eigen::VectorXd& y, const Eigen::VectorXd& score) {
  const Eigen::Index n = y.size();
  std::vector<Eigen::Index> order(static_cast<size_t>(n));
  std::iota(order.begin(), order.end(), 0);
  std::sort(order.begin(), order.end(), [&](auto a, auto b) { return score(a) < score(b); });
  double rank_sum = 0, positives = 0;
  for (Eigen::Index i = 0; i < n;) {
    Eigen::Index j = i;
    while (j + 1 < n && score(order[j + 1]) == score(order[i])) ++j;
    double avg_rank = (static_cast<double>(i) + static_cast<double>(j)) / 2.0 + 1.0;
    for (Eigen::Index k = i; k <= j; ++k) {
      if (y(order[k]) == 1) {
        rank_sum += avg_rank;
        positives += 1;
      }
    }
    i = j + 1;
  }
  double negatives = static_cast<double>(n) - positives;
  if (positives == 0 || negatives == 0) return NAN;
  return (rank_sum - positives * (positives + 1) / 2.0) / (positives * negatives);
}

}  // namespace

Result<Metric> ParseMetric(std::string_view name) {
  for (const auto& m : kNames) {
    if (name == m.name) return m.metric;
  }
  return Status::InvalidArgument("unknown metric '" + std::string(name) +
                                 "'; expected error_rate, accuracy, balanced_accuracy, log_loss, "
                                 "brier, auc, mse or mae");
}

std::vector<Metric> AllMetrics() {
  std::vector<Metric> out;
  for (const auto& m : kNames) out.push_back(m.metric);
  return out;
}

const char* MetricName(Metric m) {
  for (const auto& n : kNames) {
    if (n.metric == m) return n.name;
  }
  return "?";
}

bool LowerIsBetter(Metric m) {
  return !(m == Metric::kAccuracy || m == Metric::kBalancedAccuracy || m == Metric::kAuc);
}

Metric DefaultMetric(LearnTask task) {
  return task == LearnTask::kClassification ? Metric::kErrorRate : Metric::kMse;
}

Status CheckMetric(Metric m, LearnTask task, int classes) {
  bool regression_metric = m == Metric::kMse || m == Metric::kMae;
  if (task == LearnTask::kRegression && !regression_metric) {
    return Status::InvalidArgument(std::string("metric ") + MetricName(m) +
                                   " needs a classification task; expected mse or mae");
  }
  if (task == LearnTask::kClassification && regression_metric) {
    return Status::InvalidArgument(std::string("metric ") + MetricName(m) +
                                   " needs a regression task; expected a classification metric");
  }
  if ((m == Metric::kAuc || m == Metric::kBrier) && classes != 2) {
    return Status::InvalidArgument(std::string("metric ") + MetricName(m) +
                                   " is defined here for two classes only");
  }
  return Status::OK();
}

Result<double> Score(Metric m, const Eigen::VectorXd& y, const Predictions& p, int classes) {
  const Eigen::Index n = y.size();
  if (n == 0) return Status::InvalidArgument("no rows to score");
  if (p.value.size() != n) return Status::Internal("prediction count differs from row count");
  if (NeedsProba(m) && (p.proba.rows() != n || p.proba.cols() != classes)) {
    return Status::FailedPrecondition(std::string("metric ") + MetricName(m) +
                                      " needs class probabilities, which this model does not give");
  }
  const double dn = static_cast<double>(n);
  switch (m) {
    case Metric::kErrorRate:
    case Metric::kAccuracy: {
      double wrong = 0;
      for (Eigen::Index i = 0; i < n; ++i) wrong += p.value(i) != y(i);
      return m == Metric::kErrorRate ? wrong / dn : 1.0 - wrong / dn;
    }
    case Metric::kBalancedAccuracy: {
      std::vector<double> hit(static_cast<size_t>(classes), 0), total(static_cast<size_t>(classes), 0);
      for (Eigen::Index i = 0; i < n; ++i) {
        auto c = static_cast<size_t>(y(i));
        total[c] += 1;
        hit[c] += p.value(i) == y(i);
      }
      double sum = 0, present = 0;
      for (size_t c = 0; c < total.size(); ++c) {
        if (total[c] > 0) {
          sum += hit[c] / total[c];
          present += 1;
        }
      }
      return sum / present;
    }
    case Metric::kLogLoss: {
      double loss = 0;
      for (Eigen::Index i = 0; i < n; ++i) {
        double q = std::clamp(p.proba(i, static_cast<Eigen::Index>(y(i))), 1e-15, 1 - 1e-15);
        loss -= std::log(q);
      }
      return loss / dn;
    }
    case Metric::kBrier: {
      double loss = 0;
      for (Eigen::Index i = 0; i < n; ++i) loss += std::pow(p.proba(i, 1) - (y(i) == 1 ? 1 : 0), 2);
      return loss / dn;
    }
    case Metric::kAuc: {
      double auc = Auc(y, p.proba.col(1));
      if (std::isnan(auc)) return Status::InvalidArgument("auc needs both classes among the rows");
      return auc;
    }
    case Metric::kMse:
      return (p.value - y).squaredNorm() / dn;
    case Metric::kMae:
      return (p.value - y).cwiseAbs().sum() / dn;
  }
  return Status::Internal("unknown metric");
}

}  // namespace unseen
