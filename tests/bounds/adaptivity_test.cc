#include "harness/bounds/adaptivity.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <vector>

namespace unseen {
namespace {

TEST(LogHypothesesTest, BatchFrozenBeforeAnyRevealCostsItsSize) {
  // A batch of M models with r_j = 0 each: H = M, so ln 3 for three (closed form;
  // docs/references.md, Reveal counting).
  EXPECT_NEAR(LogHypotheses({0, 0, 0}, 1001), std::log(3.0), 1e-15);
  EXPECT_NEAR(LogHypotheses(std::vector<uint64_t>(100, 0), 11), std::log(100.0), 1e-14);
}

TEST(LogHypothesesTest, EachRevealMultipliesByTheResolution) {
  // r = {0, 1, 2}, R = 11: H = 1 + 11 + 121 (closed form; docs/references.md, Reveal counting).
  EXPECT_NEAR(LogHypotheses({0, 1, 2}, 11), std::log(1.0 + 11 + 121), 1e-14);
  EXPECT_NEAR(LogHypotheses({2, 0, 1}, 11), std::log(133.0), 1e-14);  // order does not matter
}

TEST(LogHypothesesTest, HugeRevealCountsDoNotOverflow) {
  // 1001^1000 is far beyond a double; its log is 1000 ln 1001 (closed form).
  const double one = LogHypotheses({1000}, 1001);
  EXPECT_TRUE(std::isfinite(one));
  EXPECT_NEAR(one, 1000 * std::log(1001.0), 1e-9);
  // Adding small terms barely moves it: ln(1001^1000 + 1001^999 + 1) = 1000 ln 1001 + ln(1 +
  // 1/1001).
  const double three = LogHypotheses({1000, 999, 0}, 1001);
  EXPECT_NEAR(three, 1000 * std::log(1001.0) + std::log1p(1 / 1001.0), 1e-9);
  const double many = LogHypotheses({1000000000000ull}, 1001);
  EXPECT_NEAR(many, 1e12 * std::log(1001.0), 1e-3);
}

TEST(LogHypothesesTest, DegenerateInputs) {
  EXPECT_EQ(LogHypotheses({}, 1001), 0.0);  // an empty history still bounds one hypothesis
  EXPECT_EQ(LogHypotheses({5, 7}, 1), std::log(2.0));  // R = 1: a reveal carries no information
  EXPECT_TRUE(std::isnan(LogHypotheses({0, 1}, 0)));
}

TEST(ResolutionTest, ThousandthsOnTheUnitIntervalGive1001Values) {
  EXPECT_EQ(ResolutionValues(0.001, 0, 1), 1001u);
  EXPECT_EQ(ResolutionValues(0.1, 0, 1), 11u);
  EXPECT_EQ(ResolutionValues(0.01, 0, 100), 10001u);
  EXPECT_EQ(ResolutionValues(0.5, -1, 1), 5u);
}

TEST(ResolutionTest, StepThatMissesHiAddsHiAsAValue) {
  // Grid 0, 0.3, 0.6, 0.9, then 1 itself.
  EXPECT_EQ(ResolutionValues(0.3, 0, 1), 5u);
  EXPECT_DOUBLE_EQ(RoundToResolution(0.94, 0.3, 0, 1), 0.9);
  EXPECT_EQ(RoundToResolution(0.96, 0.3, 0, 1), 1.0);
  EXPECT_EQ(RoundToResolution(0.95, 0.3, 0, 1), 1.0);  // tie goes up
}

TEST(ResolutionTest, RoundsToTheNearestGridPoint) {
  EXPECT_EQ(RoundToResolution(0.53749, 0.001, 0, 1), 0.537);  // correctly rounded, not 537*0.001
  EXPECT_EQ(RoundToResolution(0.5375, 0.001, 0, 1), 0.538);   // tie goes up
  EXPECT_EQ(RoundToResolution(0.0004, 0.001, 0, 1), 0.0);
  EXPECT_EQ(RoundToResolution(0.9996, 0.001, 0, 1), 1.0);
  EXPECT_EQ(RoundToResolution(1.7, 0.001, 0, 1), 1.0);  // clamped
  EXPECT_EQ(RoundToResolution(-3, 0.001, 0, 1), 0.0);
  EXPECT_EQ(RoundToResolution(0.26, 0.5, -1, 1), 0.5);
}

TEST(ResolutionTest, EveryRoundedValueIsOneOfTheCountedValues) {
  // Rounding a fine sweep lands on exactly ResolutionValues distinct points.
  for (double step : {0.001, 0.3, 0.07, 0.25}) {
    std::vector<double> seen;
    for (int i = 0; i <= 200000; ++i) {
      const double v = RoundToResolution(i / 200000.0, step, 0, 1);
      if (seen.empty() || seen.back() != v) seen.push_back(v);
    }
    EXPECT_EQ(seen.size(), ResolutionValues(step, 0, 1)) << "step " << step;
  }
}

TEST(ResolutionTest, BadStepOrRangeGivesZeroAndNaN) {
  const double nan = std::numeric_limits<double>::quiet_NaN();
  EXPECT_EQ(ResolutionValues(0, 0, 1), 0u);
  EXPECT_EQ(ResolutionValues(-0.1, 0, 1), 0u);
  EXPECT_EQ(ResolutionValues(nan, 0, 1), 0u);
  EXPECT_EQ(ResolutionValues(0.1, 1, 1), 0u);
  EXPECT_EQ(ResolutionValues(1e-300, 0, 1), 0u);  // too many values to count
  EXPECT_TRUE(std::isnan(RoundToResolution(0.5, 0, 0, 1)));
  EXPECT_TRUE(std::isnan(RoundToResolution(nan, 0.1, 0, 1)));
  // The chain to a bound: a bad step gives R = 0, hence NaN, which ComputeBound rejects.
  EXPECT_TRUE(std::isnan(LogHypotheses({1}, ResolutionValues(0, 0, 1))));
}

}  // namespace
}  // namespace unseen
