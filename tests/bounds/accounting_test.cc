// The one accounting (harness/bounds/accounting.h): the split of delta over
// the answers, the code lengths of Ladder and Thresholdout answers, and
// simulated sessions (2,000 repetitions each) in which every interval
// stored along the way must hold at once at least 1 - delta of the time,
// against the analysts that broke the accounting by freeze time.
#include "harness/bounds/accounting.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <vector>

#include "harness/bounds/bounds.h"
#include "harness/bounds/metric_bound.h"
#include "harness/sampling/random.h"

namespace unseen {
namespace {

constexpr int kReps = 2000;
constexpr double kDelta = 0.1;

TEST(AccountingTest, DeltaSharesByHand) {
  // delta_j / delta = (1/(j(j+1)) + [j <= B]/B) / 2, by hand (Python math,
  // 3.11): j = 1, B = 100: ln(2 / (1/2 + 1/100)) = 1.366492; j = 5:
  // ln(2 / (1/30 + 1/100)) = 3.831980; j = 101 (after a raise):
  // ln(2 * 101 * 102) = 9.933241.
  EXPECT_NEAR(LogDeltaShare(1, 100), 1.366492, 1e-6);
  EXPECT_NEAR(LogDeltaShare(5, 100), 3.831980, 1e-6);
  EXPECT_NEAR(LogDeltaShare(101, 100), 9.933241, 1e-6);
  EXPECT_NEAR(LogDeltaShare(1, 1), std::log(2 / 1.5), 1e-12);
  // Huge j stay finite: ln 2 + ln j + ln(j + 1).
  EXPECT_NEAR(LogDeltaShare(uint64_t{1} << 40, 100), std::log(2.0) + 2 * 40 * std::log(2.0), 1e-6);
}

TEST(AccountingTest, SharesNeverSumPastDelta) {
  // Sum of delta_j / delta over a sealed budget of 1000 and a million answers
  // after it: below 1 (1/2 + 1/2 * (1 - 1/(J + 1))).
  double sum = 0;
  for (uint64_t j = 1; j <= 1000000; ++j) sum += std::exp(-LogDeltaShare(j, 1000));
  EXPECT_LE(sum, 1.0);
  EXPECT_NEAR(sum, 1.0 - 0.5 / 1000001.0, 1e-9);
}

TEST(AccountingTest, LadderAndThresholdoutCodesMeetKraftsInequality) {
  for (uint64_t k : {1, 2, 10, 1000}) {
    for (uint64_t g : {1, 3, 11}) {
      const double sum = std::exp(-LadderAnswerCodeLength(false, k, g)) +
                         static_cast<double>(g) * std::exp(-LadderAnswerCodeLength(true, k, g));
      EXPECT_NEAR(sum, 1.0, 1e-12) << k << " " << g;
    }
  }
  for (uint64_t m : {1, 2, 100}) {
    const double r = 1001;
    const double sum = std::exp(-ThresholdoutAnswerCodeLength(false, m, std::log(r))) +
                       r * std::exp(-ThresholdoutAnswerCodeLength(true, m, std::log(r)));
    EXPECT_NEAR(sum, 1.0, 1e-12) << m;
  }
  // A thousand "no change" answers of a ladder fixed for k = 1000 cost about one nat.
  EXPECT_NEAR(1000 * LadderAnswerCodeLength(false, 1000, 11), 1.0005, 1e-3);
  EXPECT_NEAR(LadderAnswerCodeLength(true, 1000, 11), std::log(11000.0), 1e-12);
}

MetricSample ErrorSample(const std::vector<int>& wrong);

TEST(AccountingTest, WorkedExample) {
  // docs/bounds.md, "Worked example": B = 100, delta = 0.05, K = 13, n = 2000.
  const double r = std::log(1001.0);
  EXPECT_NEAR(LogDeltaShare(4, 100), 3.5066, 5e-5);
  EXPECT_NEAR(LogQuestionCode(0, 0, std::log(65.0)), 0, 1e-12);
  const double e = LogDeltaShare(5, 100) + LogQuestionCode(4, 4 * r, std::log(5.0 * 13));
  const double f = LogDeltaShare(6, 100) + LogQuestionCode(5, 5 * r, std::nullopt);
  EXPECT_NEAR(LogQuestionCode(4, 4 * r, std::log(5.0 * 13)), 4.8675, 5e-5);
  EXPECT_NEAR(e, 8.6995, 5e-5);
  EXPECT_NEAR(LogQuestionCode(5, 5 * r, std::nullopt), 35.2369, 5e-5);
  EXPECT_NEAR(f, 39.3171, 5e-5);
  std::vector<int> wrong(2000, 0);
  for (int i = 0; i < 173; ++i) wrong[static_cast<size_t>(i)] = 1;
  const MetricSample s = ErrorSample(wrong);
  // 173/2000 = 0.0865 lies just below the midpoint in binary64: shown as
  // 0.086, like 171/2000 (0.0855, just above its midpoint) and 172/2000.
  // Intervals computed with scipy 1.10.1 (beta.ppf at k = 171, beta.isf at
  // k = 173), rounded outwards to 0.001.
  const struct {
    double level, lower, upper;
  } want[] = {{LogDeltaShare(1, 100), 0.070, 0.104}, {e, 0.060, 0.118}, {f, 0.040, 0.154}};
  for (const auto& w : want) {
    auto shown = RevealAnswer(s, BoundMethod::kClopperPearson, 0.05, w.level);
    ASSERT_TRUE(shown.ok());
    EXPECT_NEAR(shown->estimate, 0.086, 1e-12);
    EXPECT_NEAR(shown->lower, w.lower, 1e-9) << w.level;
    EXPECT_NEAR(shown->upper, w.upper, 1e-9) << w.level;
    EXPECT_NEAR(shown->log_values, r, 1e-12);
  }
  auto size = HoeffdingSampleSize(0.05, 0.05, f, 1);
  ASSERT_TRUE(size.ok());
  EXPECT_EQ(*size, 8602u);
}

MetricSample ErrorSample(const std::vector<int>& wrong) {
  MetricSample s;
  s.metric = Metric::kErrorRate;
  s.n = wrong.size();
  uint64_t k = 0;
  for (int w : wrong) k += w != 0;
  s.successes = k;
  s.estimate = s.mean = static_cast<double>(k) / static_cast<double>(s.n);
  const double nn = static_cast<double>(s.n);
  s.variance = static_cast<double>(k) * (nn - static_cast<double>(k)) / (nn * (nn - 1));
  return s;
}

// One session of the ledger's answers: each plain answer at its level, the
// code length of what it showed added to the transcript.
struct Session {
  uint64_t budget;
  uint64_t answers = 0;
  double transcript = 0;
  bool all_covered = true;

  RevealedAnswer Ask(const MetricSample& s, double truth, BoundMethod method) {
    ++answers;
    const double level = LogDeltaShare(answers, budget) + transcript;
    auto shown = RevealAnswer(s, method, kDelta, level);
    EXPECT_TRUE(shown.ok());
    transcript += PlainAnswerCodeLength(shown->log_values);
    all_covered = all_covered && shown->lower <= truth && truth <= shown->upper;
    return *shown;
  }
};

TEST(AccountingCoverageTest, OneQuestionPerCallIntervalsHoldTogether) {
  // Ten close models asked one per call; every stored interval must hold at once.
  const int n = 300, models = 10;
  Random rng(20261203);
  for (BoundMethod method :
       {BoundMethod::kClopperPearson, BoundMethod::kHoeffding, BoundMethod::kBernstein}) {
    int together = 0;
    for (int rep = 0; rep < kReps; ++rep) {
      Session session{static_cast<uint64_t>(models)};
      for (int j = 0; j < models; ++j) {
        const double truth = 0.25 + 0.005 * j;
        std::vector<int> wrong(n);
        for (int& w : wrong) w = rng.NextDouble() < truth;
        session.Ask(ErrorSample(wrong), truth, method);
      }
      together += session.all_covered;
    }
    const double coverage = static_cast<double>(together) / kReps;
    std::printf("one question per call, %s: every stored interval covers in %.4f\n",
                BoundMethodName(method), coverage);
    EXPECT_GE(coverage, 1 - kDelta) << BoundMethodName(method);
  }
}

TEST(AccountingCoverageTest, VoteChosenAfterItsPartsIsChargedForThem) {
  // Nine +-1 predictors on no-signal labels are asked one per call; then the
  // vote signed by their answers (one of 2^9 = 512 votes frozen in advance)
  // is asked. It is charged for the 9 answers before it: at least ln 521.
  const int n = 200, parts = 9;
  Random rng(521);
  int together = 0;
  double vote_error = 0, vote_charge = 0;
  for (int rep = 0; rep < kReps; ++rep) {
    std::vector<int> label(n);
    for (int& l : label) l = rng.Next() & 1 ? 1 : -1;
    std::vector<int> vote(n, 0);
    Session session{100};
    for (int j = 0; j < parts; ++j) {
      std::vector<int> x(n), wrong(n);
      for (int i = 0; i < n; ++i) {
        x[i] = rng.Next() & 1 ? 1 : -1;
        wrong[i] = x[i] != label[i];
      }
      RevealedAnswer shown = session.Ask(ErrorSample(wrong), 0.5, BoundMethod::kClopperPearson);
      const int sign = shown.estimate < 0.5 ? 1 : -1;
      for (int i = 0; i < n; ++i) vote[i] += sign * x[i];
    }
    std::vector<int> wrong(n);
    for (int i = 0; i < n; ++i) wrong[i] = (vote[i] >= 0 ? 1 : -1) != label[i];
    vote_charge = session.transcript;
    MetricSample final_sample = ErrorSample(wrong);
    vote_error += final_sample.mean / kReps;
    session.Ask(final_sample, 0.5, BoundMethod::kClopperPearson);
    together += session.all_covered;
  }
  const double coverage = static_cast<double>(together) / kReps;
  std::printf("vote after its parts: mean holdout error %.4f, charge %.2f nats, coverage %.4f\n",
              vote_error, vote_charge, coverage);
  EXPECT_GE(vote_charge, std::log(521.0));
  EXPECT_NEAR(vote_charge, parts * std::log(201.0), 1e-9);  // n + 1 = 201 values each
  EXPECT_LT(vote_error, 0.47);  // the vote looks better than chance on the holdout
  EXPECT_GE(coverage, 1 - kDelta);
}

TEST(AccountingCoverageTest, LadderAfterPlainAnswersThatReadTheLabels) {
  // Plain answers each differ from an all-zero predictor on one row, so each
  // shows one label; a lookup predictor built from them (holdout error 0,
  // true error 1/2) is then laddered. Its interval must cover 1/2.
  const int n = 60;
  Random rng(401);
  int together = 0;
  double width = 0;
  for (int rep = 0; rep < kReps; ++rep) {
    std::vector<int> label(n);
    for (int& l : label) l = static_cast<int>(rng.Next() & 1);
    Session session{1000};
    std::vector<int> base(n);
    for (int i = 0; i < n; ++i) base[i] = label[i] != 0;
    const RevealedAnswer zero = session.Ask(ErrorSample(base), 0.5, BoundMethod::kClopperPearson);
    std::vector<int> lookup(n, 0);
    for (int i = 0; i < n; ++i) {
      std::vector<int> wrong = base;
      wrong[i] = !wrong[i];
      const RevealedAnswer shown =
          session.Ask(ErrorSample(wrong), 0.5, BoundMethod::kClopperPearson);
      lookup[i] = shown.estimate < zero.estimate;  // flipping row i helped: its label is 1
    }
    std::vector<int> wrong(n);
    int errors = 0;
    for (int i = 0; i < n; ++i) errors += wrong[i] = lookup[i] != label[i];
    ASSERT_EQ(errors, 0);  // the labels were read back exactly
    // The Ladder's interval for a leader at this answer (accounting.h).
    const double level = LogDeltaShare(session.answers + 1, 1000) + session.transcript;
    const double eps = std::sqrt((std::log(2.0) + level - std::log(kDelta)) / (2.0 * n));
    const double step = 0.1;
    const double lower = std::fmax(0.0, 0.0 - step / 2 - eps);
    const double upper = std::fmin(1.0, 0.0 + step / 2 + eps);
    width += (upper - lower) / kReps;
    together += session.all_covered && lower <= 0.5 && 0.5 <= upper;
  }
  const double coverage = static_cast<double>(together) / kReps;
  std::printf("ladder after %d plain answers: coverage %.4f, mean width %.3f\n", n + 1, coverage,
              width);
  EXPECT_GE(coverage, 1 - kDelta);
}

}  // namespace
}  // namespace unseen
