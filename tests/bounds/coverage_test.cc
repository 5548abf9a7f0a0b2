// Coverage by simulation on synthetic holdouts with known truth, at least
// 2,000 repetitions per case: each bound covers the true value at least
// 1 - delta of the time when the best of M fixed models is reported, and the
// adaptive bound (hypotheses counted from reveals) still does against an
// analyst who builds a model from the answers revealed so far, where the
// plain union bound over the M models asked fails.
#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <vector>

#include "harness/bounds/adaptivity.h"
#include "harness/bounds/metric_bound.h"
#include "harness/sampling/random.h"

namespace unseen {
namespace {

constexpr int kReps = 2000;
constexpr double kDelta = 0.1;

// Samples the 0/1 error metric of `wrong` (1 = error) as eval does.
MetricSample ErrorSample(const std::vector<int>& wrong) {
  Eigen::VectorXd y = Eigen::VectorXd::Zero(static_cast<Eigen::Index>(wrong.size()));
  Predictions p;
  p.value = Eigen::VectorXd::Zero(y.size());
  for (size_t i = 0; i < wrong.size(); ++i) p.value(static_cast<Eigen::Index>(i)) = wrong[i];
  auto s = SampleMetric(Metric::kErrorRate, y, p, 2, RangeOptions{});
  EXPECT_TRUE(s.ok());
  return *s;
}

double Covered(int hits) { return static_cast<double>(hits) / kReps; }

TEST(CoverageTest, BestOfFixedModelsIsCoveredByEveryMethod) {
  const int n = 300, models = 20;
  const std::vector<double> truth = [&] {
    std::vector<double> t;
    for (int j = 0; j < models; ++j) t.push_back(0.25 + 0.005 * j);  // close rivals
    return t;
  }();
  Random rng(20261202);
  int hits[3] = {0, 0, 0};
  const BoundMethod methods[3] = {BoundMethod::kClopperPearson, BoundMethod::kHoeffding,
                                  BoundMethod::kBernstein};
  for (int rep = 0; rep < kReps; ++rep) {
    int best = 0;
    MetricSample best_sample;
    for (int j = 0; j < models; ++j) {
      std::vector<int> wrong(n);
      for (int& w : wrong) w = rng.NextDouble() < truth[static_cast<size_t>(j)];
      MetricSample s = ErrorSample(wrong);
      if (j == 0 || s.estimate < best_sample.estimate) {
        best = j;
        best_sample = s;
      }
    }
    for (int m = 0; m < 3; ++m) {
      auto b = MetricBound(best_sample, methods[m], kDelta, std::log(static_cast<double>(models)));
      ASSERT_TRUE(b.ok());
      auto revealed = RevealAnswer(best_sample, methods[m], kDelta, std::log(double(models)));
      ASSERT_TRUE(revealed.ok());
      const RevealedAnswer& shown = *revealed;
      const double t = truth[static_cast<size_t>(best)];
      hits[m] += shown.lower <= t && t <= shown.upper;
    }
  }
  for (int m = 0; m < 3; ++m) {
    std::printf("best of %d fixed models, %s: coverage %.4f\n", models, BoundMethodName(methods[m]),
                Covered(hits[m]));
    EXPECT_GE(Covered(hits[m]), 1 - kDelta) << BoundMethodName(methods[m]);
  }
}

TEST(CoverageTest, AucIntervalCoversTheTrueAuc) {
  // Scores N(1, 1) for positives and N(0, 1) for negatives: the true AUC is
  // Phi(1 / sqrt 2) = 0.76024993890652326 (closed form, from memory of the
  // binormal model; Phi by std::erfc below).
  const double truth = 0.5 * std::erfc(-(1 / std::sqrt(2.0)) / std::sqrt(2.0));
  ASSERT_NEAR(truth, 0.76024993890652326, 1e-12);
  const int m = 150, n = 150;
  Random rng(7);
  auto normal = [&] {
    double u = rng.NextDouble(), v = rng.NextDouble();
    return std::sqrt(-2 * std::log(1 - u)) * std::cos(2 * M_PI * v);
  };
  int hits = 0;
  for (int rep = 0; rep < kReps; ++rep) {
    Eigen::VectorXd y(m + n);
    Predictions p;
    p.value = Eigen::VectorXd::Zero(m + n);
    p.proba = Eigen::MatrixXd::Zero(m + n, 2);
    for (int i = 0; i < m + n; ++i) {
      y(i) = i < m ? 1 : 0;
      double score = normal() + (i < m ? 1 : 0);
      p.proba(i, 1) = 1 / (1 + std::exp(-score));
      p.proba(i, 0) = 1 - p.proba(i, 1);
    }
    auto s = SampleMetric(Metric::kAuc, y, p, 2, RangeOptions{});
    ASSERT_TRUE(s.ok());
    auto b = MetricBound(*s, BoundMethod::kMcDiarmid, kDelta, 0);
    ASSERT_TRUE(b.ok());
    auto revealed = RevealAnswer(*s, BoundMethod::kMcDiarmid, kDelta, 0);
    ASSERT_TRUE(revealed.ok());
    const RevealedAnswer& shown = *revealed;
    hits += shown.lower <= truth && truth <= shown.upper;
  }
  std::printf("auc, mcdiarmid: coverage %.4f\n", Covered(hits));
  EXPECT_GE(Covered(hits), 1 - kDelta);
}

// The analyst: asks the holdout accuracy of `features` random +-1 predictors
// (labels are independent of them: every true accuracy is 1/2), then
// freezes the majority vote of those that scored above 1/2, signed. Its
// true accuracy is 1/2 too, but on the holdout it looks good.
TEST(CoverageTest, AdaptiveAnalystBeatsTheUnionBoundButNotTheAdaptiveOne) {
  const int n = 200, features = 100;
  const double truth = 0.5;
  Random rng(99);
  int plain_hits = 0, adaptive_hits = 0;
  double mean_estimate = 0;
  for (int rep = 0; rep < kReps; ++rep) {
    std::vector<int> label(n);
    for (int& l : label) l = rng.Next() & 1 ? 1 : -1;
    std::vector<std::vector<int>> x(features, std::vector<int>(n));
    std::vector<double> log_weights;
    double revealed_log_values = 0;
    std::vector<int> vote(n, 0);
    for (int j = 0; j < features; ++j) {
      std::vector<int> wrong(n);
      for (int i = 0; i < n; ++i) {
        x[j][i] = rng.Next() & 1 ? 1 : -1;
        wrong[i] = x[j][i] != label[i];
      }
      MetricSample s = ErrorSample(wrong);
      auto b = MetricBound(s, BoundMethod::kClopperPearson, kDelta, 0);
      ASSERT_TRUE(b.ok());
      auto revealed = RevealAnswer(s, BoundMethod::kClopperPearson, kDelta, 0);
      ASSERT_TRUE(revealed.ok());
      const RevealedAnswer& shown = *revealed;
      log_weights.push_back(0);  // each feature was fixed before any reveal
      revealed_log_values += shown.log_values;
      const int sign = shown.estimate < 0.5 ? 1 : -1;  // what the analyst saw
      for (int i = 0; i < n; ++i) vote[i] += sign * x[j][i];
    }
    std::vector<int> wrong(n);
    for (int i = 0; i < n; ++i) wrong[i] = (vote[i] >= 0 ? 1 : -1) != label[i];
    MetricSample final_sample = ErrorSample(wrong);
    mean_estimate += final_sample.estimate / kReps;
    // The plain union bound counts the M = features + 1 models asked.
    auto plain = MetricBound(final_sample, BoundMethod::kClopperPearson, kDelta,
                             std::log(static_cast<double>(features + 1)));
    // The adaptive one knows the final model came after `features` reveals.
    log_weights.push_back(revealed_log_values);
    auto adaptive = MetricBound(final_sample, BoundMethod::kClopperPearson, kDelta,
                                LogHypothesesOfWeights(log_weights));
    ASSERT_TRUE(plain.ok() && adaptive.ok());
    plain_hits += plain->lower <= truth && truth <= plain->upper;
    adaptive_hits += adaptive->lower <= truth && truth <= adaptive->upper;
  }
  std::printf("adaptive analyst: mean holdout error %.4f; plain union coverage %.4f, adaptive %.4f\n",
              mean_estimate, Covered(plain_hits), Covered(adaptive_hits));
  EXPECT_LT(mean_estimate, 0.33);  // the vote looks far better than chance on the holdout
  EXPECT_LT(Covered(plain_hits), 1 - kDelta);
  EXPECT_GE(Covered(adaptive_hits), 1 - kDelta);
}

}  // namespace
}  // namespace unseen
