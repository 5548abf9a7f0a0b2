// Metric samples, per-metric intervals and the reveal rounding.
#include "harness/bounds/metric_bound.h"

#include <gtest/gtest.h>

#include <cmath>

#include "harness/bounds/adaptivity.h"

namespace unseen {
namespace {

Eigen::VectorXd Vec(std::initializer_list<double> v) {
  Eigen::VectorXd out(static_cast<Eigen::Index>(v.size()));
  Eigen::Index i = 0;
  for (double x : v) out(i++) = x;
  return out;
}

TEST(MetricSampleTest, ErrorRateCountsWrongRowsWithTheirVariance) {
  Predictions p;
  p.value = Vec({0, 1, 1, 0, 1});
  auto s = SampleMetric(Metric::kErrorRate, Vec({0, 1, 0, 0, 0}), p, 2, RangeOptions{});
  ASSERT_TRUE(s.ok());
  EXPECT_EQ(*s->successes, 2u);
  EXPECT_DOUBLE_EQ(s->estimate, 0.4);
  EXPECT_DOUBLE_EQ(s->mean, 0.4);
  EXPECT_DOUBLE_EQ(s->variance, 0.3);  // (2 * 0.36 + 3 * 0.16) / 4
}

TEST(MetricSampleTest, RegressionClipsPredictionsAndCountsTargetsOutsideTheRange) {
  Predictions p;
  p.value = Vec({-5, 2, 11});
  RangeOptions r;
  r.target_lo = 0;
  r.target_hi = 10;
  auto s = SampleMetric(Metric::kMae, Vec({1, 2, 10}), p, 0, r);
  ASSERT_TRUE(s.ok());
  EXPECT_DOUBLE_EQ(s->range_hi, 10);
  EXPECT_DOUBLE_EQ(s->estimate, (1 + 0 + 0) / 3.0);  // -5 -> 0, 11 -> 10
  EXPECT_EQ(s->outside_range, 0u);
  auto mse = SampleMetric(Metric::kMse, Vec({1, 2, 25}), p, 0, r);
  ASSERT_TRUE(mse.ok());
  EXPECT_DOUBLE_EQ(mse->range_hi, 100);
  EXPECT_EQ(mse->outside_range, 1u);  // (10 - 25)^2 = 225 > 100
  EXPECT_DOUBLE_EQ(mse->estimate, (1 + 0 + 225) / 3.0);
  EXPECT_DOUBLE_EQ(mse->mean, (1 + 0 + 100) / 3.0);
  r.target_hi = 0;
  EXPECT_FALSE(SampleMetric(Metric::kMse, Vec({1, 2, 3}), p, 0, r).ok());
}

TEST(MetricSampleTest, LogLossClipsProbabilitiesAtTheFloor) {
  Predictions p;
  p.value = Vec({1, 0});
  p.proba = Eigen::MatrixXd(2, 2);
  p.proba << 0.0, 1.0, 0.8, 0.2;
  RangeOptions r;
  r.prob_floor = 0.01;
  auto s = SampleMetric(Metric::kLogLoss, Vec({0, 0}), p, 2, r);
  ASSERT_TRUE(s.ok());
  EXPECT_DOUBLE_EQ(s->range_hi, -std::log(0.01));
  EXPECT_DOUBLE_EQ(s->estimate, (-std::log(0.01) - std::log(0.8)) / 2);
  Predictions no_proba;
  no_proba.value = Vec({1, 0});
  EXPECT_FALSE(SampleMetric(Metric::kLogLoss, Vec({0, 0}), no_proba, 2, r).ok());
}

TEST(MetricBoundTest, BalancedAccuracyAveragesPerClassClopperPearsonLimits) {
  // Class 0: 30 of 40 right; class 1: 51 of 60 right.
  MetricSample s;
  s.metric = Metric::kBalancedAccuracy;
  s.n = 100;
  s.class_rows = {40, 60};
  s.class_hits = {30, 51};
  s.estimate = s.mean = (30.0 / 40 + 51.0 / 60) / 2;
  auto b = MetricBound(s, BoundMethod::kClopperPearson, 0.05, 0);
  ASSERT_TRUE(b.ok());
  // scipy 1.10.1, tails 0.05/2/2: beta.ppf(0.0125, 30, 11), beta.isf(0.0125, 31, 10),
  // beta.ppf(0.0125, 51, 10), beta.isf(0.0125, 52, 9).
  EXPECT_NEAR(b->lower, (0.5655970836140582 + 0.7172239549805932) / 2, 1e-9);
  EXPECT_NEAR(b->upper, (0.8859772171145271 + 0.9369413633654288) / 2, 1e-9);
}

TEST(MetricBoundTest, AucUsesMcDiarmidsInequality) {
  MetricSample s;
  s.metric = Metric::kAuc;
  s.n = 80;
  s.positives = 30;
  s.negatives = 50;
  s.estimate = s.mean = 0.8;
  auto b = MetricBound(s, BoundMethod::kMcDiarmid, 0.05, 0);
  ASSERT_TRUE(b.ok());
  // sqrt((30 + 50) / (2 * 30 * 50) * ln(2 / 0.05)) = 0.3136401102798742 (closed form, Python math).
  EXPECT_NEAR(b->half_width_raw, 0.3136401102798742, 1e-12);
  EXPECT_DOUBLE_EQ(b->upper, 1.0);
  EXPECT_NEAR(b->lower, 0.8 - 0.3136401102798742, 1e-12);
  EXPECT_FALSE(MetricBound(s, BoundMethod::kHoeffding, 0.05, 0).ok());
}

TEST(MetricBoundTest, EveryMetricAndMethodIsListedOnce) {
  // The accounting counts the default questions from these lists
  // (docs/bounds.md, "One accounting"): each name must round-trip.
  const std::vector<Metric> metrics = AllMetrics();
  ASSERT_EQ(metrics.size(), 8u);
  for (Metric m : metrics) {
    auto parsed = ParseMetric(MetricName(m));
    ASSERT_TRUE(parsed.ok()) << MetricName(m);
    EXPECT_EQ(*parsed, m);
  }
  ASSERT_EQ(std::size(kBoundMethods), 4u);
  for (BoundMethod b : kBoundMethods) {
    auto parsed = ParseBoundMethod(BoundMethodName(b));
    ASSERT_TRUE(parsed.ok()) << BoundMethodName(b);
    EXPECT_EQ(*parsed, b);
  }
}

TEST(MetricBoundTest, MethodsThatDoNotFitTheMetricAreRefused) {
  EXPECT_FALSE(CheckBoundMethod(Metric::kMse, BoundMethod::kClopperPearson).ok());
  EXPECT_FALSE(CheckBoundMethod(Metric::kErrorRate, BoundMethod::kMcDiarmid).ok());
  EXPECT_FALSE(CheckBoundMethod(Metric::kBalancedAccuracy, BoundMethod::kBernstein).ok());
  EXPECT_TRUE(CheckBoundMethod(Metric::kBrier, BoundMethod::kBernstein).ok());
  EXPECT_EQ(DefaultBoundMethod(Metric::kAccuracy), BoundMethod::kClopperPearson);
  EXPECT_EQ(DefaultBoundMethod(Metric::kMse), BoundMethod::kHoeffding);
}

TEST(RevealTest, HoeffdingAnswerIsAFunctionOfTheShownEstimate) {
  // Two samples whose estimates round to the same grid point show the same answer.
  MetricSample a, b;
  a.metric = b.metric = Metric::kBrier;
  a.n = b.n = 500;
  a.estimate = a.mean = 0.20011;
  b.estimate = b.mean = 0.19962;
  auto ba = MetricBound(a, BoundMethod::kHoeffding, 0.05, 0);
  auto bb = MetricBound(b, BoundMethod::kHoeffding, 0.05, 0);
  ASSERT_TRUE(ba.ok() && bb.ok());
  auto shown_a = RevealAnswer(a, BoundMethod::kHoeffding, 0.05, 0);
  auto shown_b = RevealAnswer(b, BoundMethod::kHoeffding, 0.05, 0);
  ASSERT_TRUE(shown_a.ok() && shown_b.ok());
  const RevealedAnswer& ra = *shown_a;
  const RevealedAnswer& rb = *shown_b;
  EXPECT_DOUBLE_EQ(ra.estimate, 0.2);
  EXPECT_DOUBLE_EQ(ra.lower, rb.lower);
  EXPECT_DOUBLE_EQ(ra.upper, rb.upper);
  EXPECT_DOUBLE_EQ(ra.step, 0.001);
  EXPECT_NEAR(ra.log_values, std::log(1001.0), 1e-12);
  // The shown interval contains the exact one.
  EXPECT_LE(ra.lower, ba->lower);
  EXPECT_GE(ra.upper, ba->upper);
}

TEST(RevealTest, CountAnswersTakeAtMostNPlusOneValues) {
  MetricSample s;
  s.metric = Metric::kErrorRate;
  s.n = 50;
  s.successes = 7;
  s.estimate = s.mean = 0.14;
  auto b = MetricBound(s, BoundMethod::kClopperPearson, 0.05, 0);
  ASSERT_TRUE(b.ok());
  auto shown = RevealAnswer(s, BoundMethod::kClopperPearson, 0.05, 0);
  ASSERT_TRUE(shown.ok());
  const RevealedAnswer& r = *shown;
  EXPECT_NEAR(r.log_values, std::log(51.0), 1e-12);
  EXPECT_LE(r.lower, b->lower);
  EXPECT_GE(r.upper, b->upper);
  EXPECT_GT(r.lower, b->lower - 0.001);
}

TEST(RevealTest, ZeroOneAnswerIsAFunctionOfTheShownRateOnLargeHoldouts) {
  // n = 5000: the counts 1023..1027 give rates 0.2046..0.2054, all shown
  // as 0.205, and 1022 gives 0.204. Every count in a cell shows the same answer,
  // the answer takes at most 1001 values, and it holds for each count in it.
  auto shown = [](uint64_t k, BoundMethod m) {
    MetricSample s;
    s.metric = Metric::kErrorRate;
    s.n = 5000;
    s.successes = k;
    s.estimate = s.mean = static_cast<double>(k) / 5000;
    s.variance = s.mean * (1 - s.mean) * 5000 / 4999;
    auto r = RevealAnswer(s, m, 0.05, 3.0);
    EXPECT_TRUE(r.ok());
    return *r;
  };
  for (BoundMethod m :
       {BoundMethod::kClopperPearson, BoundMethod::kHoeffding, BoundMethod::kBernstein}) {
    const RevealedAnswer a = shown(1023, m);
    EXPECT_NEAR(a.estimate, 0.205, 1e-12);
    EXPECT_NEAR(a.log_values, std::log(1001.0), 1e-12);
    for (uint64_t k : {1024, 1025, 1026}) {
      const RevealedAnswer b = shown(k, m);
      EXPECT_EQ(b.estimate, a.estimate) << k;
      EXPECT_EQ(b.lower, a.lower) << k;
      EXPECT_EQ(b.upper, a.upper) << k;
    }
    EXPECT_NE(shown(1022, m).lower, a.lower);
  }
}

TEST(RevealTest, SideAnswersAreCountedOrNotShown) {
  // mse shows whether a row was clipped: one more bit.
  MetricSample mse;
  mse.metric = Metric::kMse;
  mse.n = 100;
  mse.range_hi = 4;
  mse.estimate = mse.mean = 1.0;
  mse.variance = 0.5;
  auto r = RevealAnswer(mse, BoundMethod::kHoeffding, 0.05, 0);
  ASSERT_TRUE(r.ok());
  EXPECT_NEAR(r->log_values, std::log(1001.0) + std::log(2.0), 1e-12);
  // AUC's interval depends on the class counts, which are not public: three
  // grid values, and the counts appear in no text.
  MetricSample auc;
  auc.metric = Metric::kAuc;
  auc.n = 100;
  auc.positives = 37;
  auc.negatives = 63;
  auc.estimate = 0.8;
  auto a = RevealAnswer(auc, BoundMethod::kMcDiarmid, 0.05, 0);
  ASSERT_TRUE(a.ok());
  EXPECT_NEAR(a->log_values, 3 * std::log(1001.0), 1e-12);
  auto b = MetricBound(auc, BoundMethod::kMcDiarmid, 0.05, 0);
  ASSERT_TRUE(b.ok());
  EXPECT_EQ(b->assumptions.find("37"), std::string::npos) << b->assumptions;
  EXPECT_EQ(b->assumptions.find("63"), std::string::npos) << b->assumptions;
}

TEST(AdaptivityWeightsTest, LogSumExpOfWeights) {
  EXPECT_DOUBLE_EQ(LogHypothesesOfWeights({}), 0);
  EXPECT_NEAR(LogHypothesesOfWeights({0, 0, std::log(5.0)}), std::log(7.0), 1e-12);
  EXPECT_NEAR(LogHypothesesOfWeights({1000, 1000}), 1000 + std::log(2.0), 1e-9);
  EXPECT_TRUE(std::isnan(LogHypothesesOfWeights({0, NAN})));
}

}  // namespace
}  // namespace unseen
