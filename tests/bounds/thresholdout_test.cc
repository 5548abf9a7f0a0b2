// Thresholdout's settings and step, against check values computed with
// Python `math` from Theorem 25 and Lemma 24 of Dwork et al.,
// arXiv:1506.02629 (docs/references.md, Thresholdout).
#include "harness/bounds/thresholdout.h"

#include <gtest/gtest.h>

#include <cmath>

namespace unseen {
namespace {

TEST(ThresholdoutTest, RequiredHoldoutSizeMatchesTheTheoremCalculator) {
  // tau = 0.1, m = 1000, beta = 0.05, B = 10: sigma = 9.226632e-05,
  // n0 = 1.734111e+07, n1 = 8.489327e+08, so n >= 1.734111e+07.
  EXPECT_NEAR(ThresholdoutRequiredN(0.1, 1000, 10, 0.05) / 1.734111e7, 1, 1e-6);
  // tau = 0.05, m = 10000, beta = 0.05, B = 100: n0 = 8.351150e+08, n1 = 1.416229e+10.
  EXPECT_NEAR(ThresholdoutRequiredN(0.05, 10000, 100, 0.05) / 8.351150e8, 1, 1e-6);
}

TEST(ThresholdoutTest, SettingsForAHoldoutInvertTheRequirement) {
  auto p = ThresholdoutForHoldout(17341110, 1000, 10, 0.05);
  ASSERT_TRUE(p.ok());
  EXPECT_NEAR(p->tau, 0.1, 1e-6);
  EXPECT_NEAR(p->threshold, 0.075, 1e-6);      // T = 3 tau / 4
  EXPECT_NEAR(p->sigma, 9.226632e-05, 1e-10);  // tau / (96 ln(4m / beta))
  auto small = ThresholdoutForHoldout(1000, 100, 10, 0.05);
  ASSERT_FALSE(small.ok());
  EXPECT_NE(small.status().message().find("needs a holdout of at least"), std::string::npos);
}

TEST(ThresholdoutTest, LaplaceInverseCdf) {
  // P(|X| >= b) = e^-1 for scale b: the draws at u = e^-1 / 2 and 1 - e^-1 / 2 are -b and b.
  EXPECT_NEAR(Laplace(std::exp(-1.0) / 2, 0.01), -0.01, 1e-15);
  EXPECT_NEAR(Laplace(1 - std::exp(-1.0) / 2, 0.01), 0.01, 1e-15);
  EXPECT_DOUBLE_EQ(Laplace(0.5, 3), 0);
}

TEST(ThresholdoutTest, AnswersTheTrainingValueUntilTheHoldoutDisagrees) {
  ThresholdoutParams p;
  p.threshold = 0.05;
  p.sigma = 0.001;
  ThresholdoutState st{0.05, 2};
  ThresholdoutAnswer a = ThresholdoutQuery(0.20, 0.23, p, 0, 0.001, 0, &st);
  EXPECT_FALSE(a.used_holdout);
  EXPECT_DOUBLE_EQ(a.value, 0.20);
  EXPECT_EQ(st.budget_left, 2u);
  a = ThresholdoutQuery(0.10, 0.30, p, 0, 0.002, 0.004, &st);
  EXPECT_TRUE(a.used_holdout);
  EXPECT_DOUBLE_EQ(a.value, 0.302);
  EXPECT_EQ(st.budget_left, 1u);
  EXPECT_DOUBLE_EQ(st.noisy_threshold, 0.054);  // redrawn: T + gamma
}

}  // namespace
}  // namespace unseen
