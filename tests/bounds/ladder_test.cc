// The Ladder's step rule and its counting (Blum & Hardt 2015, Algorithm 1),
// against a hand trace and step sizes computed with Python `math`
// (docs/references.md, Ladder).
#include "harness/bounds/ladder.h"

#include <gtest/gtest.h>

#include <cmath>
#include <vector>

namespace unseen {
namespace {

TEST(LadderTest, HandTraceOfAlgorithmOne) {
  // eta = 0.01, losses 0.300 0.295 0.289 0.300 0.2701 0.265 release
  // 0.30 0.30 0.29 0.29 0.27 0.27: 0.295 is not below 0.30 - 0.01, and 0.289 rounds to 0.29.
  const std::vector<double> losses = {0.300, 0.295, 0.289, 0.300, 0.2701, 0.265};
  const std::vector<double> released = {0.30, 0.30, 0.29, 0.29, 0.27, 0.27};
  const std::vector<bool> improved = {true, false, true, false, true, false};
  std::optional<double> board;
  for (size_t i = 0; i < losses.size(); ++i) {
    LadderStepResult r = LadderStep(board, losses[i], 0.01);
    EXPECT_NEAR(r.released, released[i], 1e-12) << i;
    EXPECT_EQ(r.improved, improved[i]) << i;
    board = r.released;
  }
}

TEST(LadderTest, DefaultStepIsBlumHardtWithCOne) {
  // (ln(k n) / n)^(1/3), natural log: 0.117248, 0.225802, 0.028449.
  EXPECT_NEAR(LadderDefaultStep(1000, 10000, 1), 0.117248, 5e-7);
  EXPECT_NEAR(LadderDefaultStep(100, 1000, 1), 0.225802, 5e-7);
  EXPECT_NEAR(LadderDefaultStep(10000, 1000000, 1), 0.028449, 5e-7);
}

TEST(LadderTest, CountingAndEpsilon) {
  LadderParams p;
  p.step = 0.1;
  p.max_submissions = 100;
  // width / step = 10 cells: at most 11 improvements, 12 grid values.
  const double want = std::log(100.0) + 11 * (std::log(100.0) + std::log(12.0));
  EXPECT_NEAR(LadderLogSubmissions(p), want, 1e-12);
  auto eps = LadderEpsilon(1000, 0.05, p);
  ASSERT_TRUE(eps.ok());
  EXPECT_NEAR(*eps, std::sqrt((std::log(2.0) + want - std::log(0.05)) / 2000), 1e-12);
  // Many submissions cost log k, not k: a thousand times more of them
  // raises ln|F| by 12 ln 1000 only.
  LadderParams more = p;
  more.max_submissions = 100000;
  EXPECT_NEAR(LadderLogSubmissions(more) - LadderLogSubmissions(p), 12 * std::log(1000.0), 1e-9);
  p.step = 0;
  EXPECT_FALSE(LadderEpsilon(1000, 0.05, p).ok());
  p.step = 2;
  EXPECT_FALSE(LadderEpsilon(1000, 0.05, p).ok());
}

}  // namespace
}  // namespace unseen
