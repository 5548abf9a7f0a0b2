#include "harness/sampling/split.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <iostream>
#include <limits>
#include <numeric>
#include <string>
#include <vector>

#include "harness/sampling/random.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

// Golden values marked "Python reference" were computed with the independent
// Python xoshiro256**/Lemire/Fisher-Yates implementation written out in
// tests/sampling/random_test.cc, applying the rules of docs/splits.md by hand.

SplitRequest Request(SplitStrategy strategy, uint64_t rows, double fraction, uint64_t seed = 0) {
  SplitRequest r;
  r.strategy = strategy;
  r.rows = rows;
  r.fraction = fraction;
  r.seed = seed;
  return r;
}

// Holdout and dev are ascending, disjoint and together cover 0..rows-1.
void ExpectPartition(const SplitResult& s, uint64_t rows) {
  EXPECT_TRUE(std::is_sorted(s.holdout.begin(), s.holdout.end()));
  EXPECT_TRUE(std::is_sorted(s.dev.begin(), s.dev.end()));
  std::vector<uint32_t> all;
  std::merge(s.holdout.begin(), s.holdout.end(), s.dev.begin(), s.dev.end(),
             std::back_inserter(all));
  ASSERT_EQ(all.size(), rows);
  for (uint64_t i = 0; i < rows; ++i) ASSERT_EQ(all[i], i);
  EXPECT_FALSE(s.holdout.empty());
  EXPECT_FALSE(s.dev.empty());
}

std::vector<uint64_t> HoldoutPerLabel(const SplitRequest& r, const SplitResult& s, size_t k) {
  std::vector<uint64_t> counts(k, 0);
  for (uint32_t row : s.holdout) ++counts[r.labels[row]];
  return counts;
}

// Labels for `groups` groups with sizes 1..max_size drawn from `seed`, rows
// in shuffled order. Returns the largest group size through *largest.
std::vector<uint32_t> RandomGroups(uint32_t groups, uint64_t max_size, uint64_t seed,
                                   uint64_t* largest) {
  Random rng(seed);
  std::vector<uint32_t> labels;
  *largest = 0;
  for (uint32_t g = 0; g < groups; ++g) {
    const uint64_t size = 1 + rng.Bounded(max_size);
    *largest = std::max(*largest, size);
    labels.insert(labels.end(), size, g);
  }
  rng.Shuffle(labels.data(), labels.size());
  return labels;
}

// ---- names -------------------------------------------------------------------

TEST(SplitStrategyTest, NamesRoundTrip) {
  for (SplitStrategy s : {SplitStrategy::kRandom, SplitStrategy::kStratified, SplitStrategy::kGroup,
                          SplitStrategy::kTime}) {
    auto parsed = ParseSplitStrategy(SplitStrategyName(s));
    ASSERT_OK(parsed);
    EXPECT_EQ(*parsed, s);
  }
  EXPECT_STREQ(SplitStrategyName(SplitStrategy::kStratified), "stratified");
}

TEST(SplitStrategyTest, UnknownNameIsInvalidArgument) {
  auto parsed = ParseSplitStrategy("Random");
  ASSERT_FALSE(parsed.ok());
  EXPECT_TRUE(parsed.status().IsInvalidArgument());
  EXPECT_NE(parsed.status().message().find("expected random, stratified, group or time"),
            std::string::npos);
}

// ---- random ------------------------------------------------------------------

TEST(SplitRandomTest, RequestedSizeRoundsAndClamps) {
  struct Case {
    uint64_t rows;
    double fraction;
    uint64_t expected;
  };
  for (const Case& c : {Case{10, 0.25, 3}, Case{10, 0.24, 2}, Case{10, 0.001, 1},
                        Case{10, 0.999, 9}, Case{2, 0.5, 1}, Case{1000, 0.2, 200}}) {
    auto s = Split(Request(SplitStrategy::kRandom, c.rows, c.fraction));
    ASSERT_OK(s);
    EXPECT_EQ(s->requested_holdout, c.expected) << c.rows << " " << c.fraction;
    EXPECT_EQ(s->holdout.size(), c.expected);
    ExpectPartition(*s, c.rows);
    EXPECT_EQ(s->note, "");
  }
}

TEST(SplitRandomTest, HoldoutIsFrozenForSeed) {
  // Python reference: the first 5 of a forward Fisher-Yates shuffle of 0..19
  // with seed 7, sorted.
  auto s = Split(Request(SplitStrategy::kRandom, 20, 0.25, 7));
  ASSERT_OK(s);
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{3, 6, 14, 17, 19}));
}

TEST(SplitRandomTest, SameRequestSameResultOtherSeedOtherHoldout) {
  const SplitRequest r = Request(SplitStrategy::kRandom, 10000, 0.3, 123);
  auto a = Split(r);
  auto b = Split(r);
  ASSERT_OK(a);
  ASSERT_OK(b);
  EXPECT_EQ(a->holdout, b->holdout);
  EXPECT_EQ(a->dev, b->dev);
  SplitRequest other = r;
  other.seed = 124;
  auto c = Split(other);
  ASSERT_OK(c);
  EXPECT_EQ(c->holdout.size(), a->holdout.size());
  EXPECT_NE(c->holdout, a->holdout);
}

// ---- stratified --------------------------------------------------------------

// Class sizes 10, 6, 3, 1 over 20 rows.
const std::vector<uint32_t> kWorkedLabels = {0, 1, 0, 2, 0, 1, 0, 0, 3, 1,
                                             0, 2, 0, 1, 0, 1, 2, 0, 1, 0};

TEST(SplitStratifiedTest, WorkedApportionmentExample) {
  // Worked by hand: requested = round(0.25 * 20) = 5. Quotas 5*n/20 are
  // 2.5, 1.5, 0.75, 0.25; floors 2, 1, 0, 0 leave 2 seats. Largest
  // remainders: class 2 (0.75), then classes 0 and 1 tie at 0.5 and the lower
  // index (0) wins. Shares 3, 1, 1, 0; every class of >= 2 rows already has
  // a row on each side.
  SplitRequest r = Request(SplitStrategy::kStratified, 20, 0.25, 5);
  r.labels = kWorkedLabels;
  auto s = Split(r);
  ASSERT_OK(s);
  ExpectPartition(*s, 20);
  EXPECT_EQ(HoldoutPerLabel(r, *s, 4), (std::vector<uint64_t>{3, 1, 1, 0}));
  EXPECT_EQ(s->note, "");
  // Python reference: per class, rows ascending, one generator (seed 5)
  // shuffling class 0, then 1, 2, 3, taking each class's share.
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{4, 11, 12, 14, 15}));
}

TEST(SplitStratifiedTest, SmallClassesKeepARowOnEachSide) {
  // Worked by hand: 20 rows, classes 16, 2, 2; requested round(0.1*20) = 2.
  // Apportionment gives 2, 0, 0; the one-row rule lifts classes 1 and 2 to 1
  // (total 4); class 0 gives one back (it must keep one, total 3); the
  // minimum must then yield once: classes 1 and 2 are equally far above
  // their quota (0.8 rows) and the higher index gives it up. Shares 1, 1, 0.
  SplitRequest r = Request(SplitStrategy::kStratified, 20, 0.1, 3);
  r.labels.assign(16, 0);
  r.labels.insert(r.labels.end(), {1, 1, 2, 2});
  auto s = Split(r);
  ASSERT_OK(s);
  ExpectPartition(*s, 20);
  EXPECT_EQ(HoldoutPerLabel(r, *s, 3), (std::vector<uint64_t>{1, 1, 0}));
  EXPECT_NE(s->note.find("1 classes with 2 or more rows have all their rows on one side"),
            std::string::npos)
      << s->note;
}

TEST(SplitStratifiedTest, MinimumRuleLiftsTinyClassWithinRequestedSize) {
  // Worked by hand: 100 rows, classes 95, 3, 2; requested 10. Quotas 9.5,
  // 0.3, 0.2 -> floors 9, 0, 0 and the one spare seat goes to class 0 (0.5).
  // Lifting classes 1 and 2 to one row gives 12; only class 0 is above its
  // one-row minimum, so it gives back 2. Shares 8, 1, 1.
  SplitRequest r = Request(SplitStrategy::kStratified, 100, 0.1, 9);
  r.labels.assign(95, 0);
  r.labels.insert(r.labels.end(), {1, 1, 1, 2, 2});
  auto s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(HoldoutPerLabel(r, *s, 3), (std::vector<uint64_t>{8, 1, 1}));
  EXPECT_EQ(s->holdout.size(), 10u);
  EXPECT_EQ(s->note, "");
}

TEST(SplitStratifiedTest, DevSideMinimumForLargeFraction) {
  // Worked by hand: 10 rows, classes 8 and 2, fraction 0.8 -> requested 8.
  // Quotas 6.4, 1.6 -> floors 6, 1, spare seat to class 1 (0.6): 6, 2. Class 1
  // must keep a dev row (1), and class 0 takes the seat (7 <= 8 - 1): 7, 1.
  SplitRequest r = Request(SplitStrategy::kStratified, 10, 0.8, 1);
  r.labels = {0, 0, 0, 0, 1, 0, 0, 0, 0, 1};
  auto s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(HoldoutPerLabel(r, *s, 2), (std::vector<uint64_t>{7, 1}));
}

TEST(SplitStratifiedTest, LargeRandomDataKeepsProportions) {
  const uint64_t rows = 200000;
  SplitRequest r = Request(SplitStrategy::kStratified, rows, 0.2, 77);
  Random rng(1);
  std::vector<uint64_t> size(7, 0);
  for (uint64_t i = 0; i < rows; ++i) {
    // Skewed classes: class c has weight 2^c.
    const uint64_t u = rng.Bounded(127);
    uint32_t c = 0;
    while (u >= (uint64_t{2} << c) - 1) ++c;
    r.labels.push_back(c);
    ++size[c];
  }
  auto s = Split(r);
  ASSERT_OK(s);
  ExpectPartition(*s, rows);
  EXPECT_EQ(s->holdout.size(), 40000u);
  const std::vector<uint64_t> got = HoldoutPerLabel(r, *s, 7);
  for (size_t c = 0; c < 7; ++c) {
    const double quota = 40000.0 * static_cast<double>(size[c]) / rows;
    EXPECT_LT(std::fabs(static_cast<double>(got[c]) - quota), 1.0) << "class " << c;
  }
  auto again = Split(r);
  ASSERT_OK(again);
  EXPECT_EQ(again->holdout, s->holdout);
}

// ---- group -------------------------------------------------------------------

TEST(SplitGroupTest, SmallExampleFollowsPrefixRule) {
  // Groups 0..4 of sizes 3, 2, 4, 1, 2; requested round(0.25*12) = 3.
  SplitRequest r = Request(SplitStrategy::kGroup, 12, 0.25, 1);
  r.labels = {0, 0, 0, 1, 1, 2, 2, 2, 2, 3, 4, 4};
  // Python reference: seed 1 shuffles the groups to 3, 0, 1, 2, 4; prefixes
  // hold 1, 4, 6, 10 rows; 4 is closest to 3, so groups {3, 0}.
  auto s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{0, 1, 2, 9}));
  EXPECT_EQ(s->note,
            "holdout has 4 rows, 1 more than the requested 3: groups stay whole (largest group 4 "
            "rows)");
  // Python reference: seed 11 gives 1, 0, 2, 3, 4; prefix {1} has 2 rows (gap 1),
  // {1, 0} has 5 (gap 2).
  r.seed = 11;
  s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{3, 4}));
  EXPECT_EQ(CountGroupViolations(r.labels, s->holdout), 0u);
}

TEST(SplitGroupTest, FiveThousandGroupsNeverStraddle) {
  uint64_t largest = 0;
  SplitRequest r = Request(SplitStrategy::kGroup, 0, 0.2, 2024);
  r.labels = RandomGroups(5000, 40, 31, &largest);
  r.rows = r.labels.size();
  auto s = Split(r);
  ASSERT_OK(s);
  ExpectPartition(*s, r.rows);
  EXPECT_EQ(CountGroupViolations(r.labels, s->holdout), 0u);
  const uint64_t got = s->holdout.size();
  const uint64_t gap =
      got > s->requested_holdout ? got - s->requested_holdout : s->requested_holdout - got;
  EXPECT_LE(gap, largest);
  auto again = Split(r);
  ASSERT_OK(again);
  EXPECT_EQ(again->holdout, s->holdout);
  r.seed = 2025;
  auto other = Split(r);
  ASSERT_OK(other);
  EXPECT_NE(other->holdout, s->holdout);
  EXPECT_EQ(CountGroupViolations(r.labels, other->holdout), 0u);
}

TEST(SplitGroupTest, TwoGroupsGoOneEachSide) {
  SplitRequest r = Request(SplitStrategy::kGroup, 5, 0.9, 0);
  r.labels = {1, 1, 1, 1, 3};  // indexes may skip values
  auto s = Split(r);
  ASSERT_OK(s);
  ExpectPartition(*s, 5);
  EXPECT_EQ(CountGroupViolations(r.labels, s->holdout), 0u);
}

TEST(SplitGroupTest, CountGroupViolationsCountsStraddlingGroups) {
  const std::vector<uint32_t> groups = {0, 0, 1, 1, 2, 2, 4000000000u, 4000000000u};
  EXPECT_EQ(CountGroupViolations(groups, {0, 1}), 0u);
  EXPECT_EQ(CountGroupViolations(groups, {0, 2}), 2u);
  EXPECT_EQ(CountGroupViolations(groups, {0, 2, 4, 6, 99}), 4u);  // sparse value, bad row ignored
  EXPECT_EQ(CountGroupViolations(groups, {}), 0u);
}

// ---- time --------------------------------------------------------------------

TEST(SplitTimeTest, HoldoutIsTheLatestRowsWithTiesTogether) {
  // Worked by hand: sorted times 1 2 3 3 4 5 7 7 7 9; requested round(0.3*10)
  // = 3. Cuts are allowed where the time changes, giving holdout sizes 9, 8,
  // 7, 5, 4, 1. Closest to 3 is 4: times 7, 7, 7, 9 = rows 4, 5, 6, 8.
  SplitRequest r = Request(SplitStrategy::kTime, 10, 0.3);
  r.time_numeric = {5, 1, 3, 3, 9, 7, 7, 2, 7, 4};
  auto s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{4, 5, 6, 8}));
  EXPECT_EQ(s->dev, (std::vector<uint32_t>{0, 1, 2, 3, 7, 9}));
  EXPECT_EQ(s->note,
            "holdout has 4 rows, 1 more than the requested 3: rows sharing a time value stay on "
            "one side");
  EXPECT_EQ(CountTimeViolations(r, *s), 0u);
}

TEST(SplitTimeTest, EqualDistanceTiePrefersSmallerHoldout) {
  // Worked by hand: times 1 1 2 2 3 3, requested 3; holdout 4 or 2 are both 1
  // away, so 2 (the two rows at time 3).
  SplitRequest r = Request(SplitStrategy::kTime, 6, 0.5);
  r.time_numeric = {3, 1, 2, 1, 3, 2};
  auto s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{0, 4}));
}

TEST(SplitTimeTest, TextTimesCompareBytewise) {
  // Worked by hand: bytewise "2023-12-31" < "2024-01-15" < "2024-03-01" <
  // "2024-03-01T10:00:00Z" (a prefix sorts first); requested round(0.4*5) = 2.
  SplitRequest r = Request(SplitStrategy::kTime, 5, 0.4);
  r.time_text = {"2024-03-01", "2023-12-31", "2024-03-01T10:00:00Z", "2024-01-15", "2023-12-31"};
  auto s = Split(r);
  ASSERT_OK(s);
  EXPECT_EQ(s->holdout, (std::vector<uint32_t>{0, 2}));
  EXPECT_EQ(s->note, "");
  EXPECT_EQ(CountTimeViolations(r, *s), 0u);
}

TEST(SplitTimeTest, CountTimeViolationsCountsLaterDevRows) {
  SplitRequest r = Request(SplitStrategy::kTime, 5, 0.4);
  r.time_numeric = {1, 2, 3, 4, 5};
  SplitResult bad;
  bad.holdout = {1, 4};  // earliest holdout time 2
  bad.dev = {0, 2, 3};   // times 3 and 4 are later
  EXPECT_EQ(CountTimeViolations(r, bad), 2u);
}

TEST(SplitTimeTest, LargeRandomTimesHaveNoViolations) {
  SplitRequest r = Request(SplitStrategy::kTime, 100000, 0.2);
  Random rng(8);
  for (uint64_t i = 0; i < r.rows; ++i) r.time_numeric.push_back(rng.Bounded(5000) * 0.5);
  auto s = Split(r);
  ASSERT_OK(s);
  ExpectPartition(*s, r.rows);
  EXPECT_EQ(CountTimeViolations(r, *s), 0u);
  double dev_max = -1, holdout_min = 1e300;
  for (uint32_t row : s->dev) dev_max = std::max(dev_max, r.time_numeric[row]);
  for (uint32_t row : s->holdout) holdout_min = std::min(holdout_min, r.time_numeric[row]);
  EXPECT_LT(dev_max, holdout_min);  // ties never straddle
  EXPECT_LE(std::llabs(static_cast<long long>(s->holdout.size()) - 20000), 40);
}

// A plain-loop reference for the time rule: sort, try every cut where the
// time changes, keep the closest (ties: the smaller holdout).
std::vector<uint32_t> NaiveTimeHoldout(const std::vector<double>& t, uint64_t requested) {
  std::vector<uint32_t> order(t.size());
  std::iota(order.begin(), order.end(), 0u);
  std::stable_sort(order.begin(), order.end(), [&](uint32_t x, uint32_t y) { return t[x] < t[y]; });
  size_t best = 0;
  long long best_gap = -1;
  for (size_t cut = 1; cut < t.size(); ++cut) {
    if (t[order[cut - 1]] == t[order[cut]]) continue;
    const long long gap =
        std::llabs(static_cast<long long>(t.size() - cut) - static_cast<long long>(requested));
    if (best_gap < 0 || gap <= best_gap) best_gap = gap, best = cut;
  }
  std::vector<uint32_t> holdout(order.begin() + best, order.end());
  std::sort(holdout.begin(), holdout.end());
  return holdout;
}

TEST(SplitTimeTest, MatchesPlainLoopReferenceOnSmallCases) {
  Random rng(99);
  for (int trial = 0; trial < 2000; ++trial) {
    const uint64_t rows = 2 + rng.Bounded(15);
    SplitRequest r = Request(SplitStrategy::kTime, rows, 0.05 + 0.9 * rng.NextDouble());
    const uint64_t distinct = 1 + rng.Bounded(6);
    for (uint64_t i = 0; i < rows; ++i) r.time_numeric.push_back(rng.Bounded(distinct));
    auto s = Split(r);
    const std::vector<double> t = r.time_numeric;
    if (std::all_of(t.begin(), t.end(), [&](double x) { return x == t[0]; })) {
      EXPECT_FALSE(s.ok());
      continue;
    }
    ASSERT_OK(s);
    ASSERT_EQ(s->holdout, NaiveTimeHoldout(t, s->requested_holdout)) << "trial " << trial;
  }
}

TEST(SplitStratifiedTest, SmallCasesKeepSizeAndBothSidesWherePossible) {
  Random rng(12);
  int checked = 0;  // trials where every class of >= 2 rows can sit on both sides
  for (int trial = 0; trial < 2000; ++trial) {
    const uint64_t classes = 1 + rng.Bounded(5);
    SplitRequest r = Request(SplitStrategy::kStratified, 0, 0.05 + 0.9 * rng.NextDouble(), trial);
    std::vector<uint64_t> size(classes, 0);
    for (uint32_t c = 0; c < classes; ++c) {
      size[c] = rng.Bounded(6);
      r.labels.insert(r.labels.end(), size[c], c);
    }
    r.rows = r.labels.size();
    // Indexes must stay below the row count (unused indexes are allowed).
    if (r.rows < 2 || *std::max_element(r.labels.begin(), r.labels.end()) >= r.rows) continue;
    rng.Shuffle(r.labels.data(), r.labels.size());
    auto s = Split(r);
    ASSERT_OK(s);
    ExpectPartition(*s, r.rows);
    ASSERT_EQ(s->holdout.size(), s->requested_holdout);
    const uint64_t big = std::count_if(size.begin(), size.end(), [](uint64_t n) { return n >= 2; });
    if (big > s->requested_holdout || big > r.rows - s->requested_holdout) continue;
    const std::vector<uint64_t> got = HoldoutPerLabel(r, *s, classes);
    for (size_t c = 0; c < classes; ++c) {
      if (size[c] < 2) continue;
      EXPECT_GE(got[c], 1u) << "trial " << trial << " class " << c;
      EXPECT_LT(got[c], size[c]) << "trial " << trial << " class " << c;
    }
    EXPECT_EQ(s->note, "") << "trial " << trial;
    ++checked;
  }
  EXPECT_GT(checked, 500);
}

// ---- errors ------------------------------------------------------------------

void ExpectInvalid(const SplitRequest& r, const std::string& fragment) {
  auto s = Split(r);
  ASSERT_FALSE(s.ok()) << fragment;
  EXPECT_TRUE(s.status().IsInvalidArgument()) << s.status().ToString();
  EXPECT_NE(s.status().message().find(fragment), std::string::npos) << s.status().message();
}

TEST(SplitErrorTest, BadFractionAndRowCount) {
  for (double f : {0.0, 1.0, -0.1, 1.5, std::numeric_limits<double>::quiet_NaN()}) {
    ExpectInvalid(Request(SplitStrategy::kRandom, 10, f), "expected 0 < fraction < 1");
  }
  ExpectInvalid(Request(SplitStrategy::kRandom, 1, 0.5), "1 rows; expected between 2");
  ExpectInvalid(Request(SplitStrategy::kRandom, 0, 0.5), "0 rows; expected between 2");
  ExpectInvalid(Request(SplitStrategy::kRandom, kMaxSplitRows + 1, 0.5), "expected between 2");
}

TEST(SplitErrorTest, LabelMismatches) {
  SplitRequest r = Request(SplitStrategy::kStratified, 4, 0.5);
  r.labels = {0, 1, 0};
  ExpectInvalid(r, "labels has 3 entries for 4 rows; expected one class index per row");
  r.labels = {0, 1, 0, 4};
  ExpectInvalid(r, "row 3 has class index 4; expected an index below the row count 4");
  r.strategy = SplitStrategy::kGroup;
  r.labels = {2, 2, 2, 2};
  ExpectInvalid(r, "a group split needs at least two groups");
  r.labels.clear();
  ExpectInvalid(r, "expected one group index per row");
}

TEST(SplitErrorTest, TimeProblems) {
  SplitRequest r = Request(SplitStrategy::kTime, 3, 0.5);
  ExpectInvalid(r, "0 time values for 3 rows");
  r.time_numeric = {1, 1, 1};
  ExpectInvalid(r, "all 3 rows share one time value");
  r.time_numeric = {1, std::nan(""), 2};
  ExpectInvalid(r, "row 1 has a NaN time");
  r.time_numeric = {1, 2, 3};
  r.time_text = {"a", "b", "c"};
  ExpectInvalid(r, "expected exactly one");
  r.time_numeric.clear();
  r.time_text = {"x", "x", "x"};
  ExpectInvalid(r, "share one time value");
}

// ---- performance ---------------------------------------------------------------

TEST(SplitPerformanceTest, FiveMillionRows) {
  const uint64_t rows = 5000000;
  uint64_t largest = 0;
  std::vector<uint32_t> groups = RandomGroups(1000000, 9, 4, &largest);  // ~5M rows
  groups.resize(rows, 0);
  std::vector<uint32_t> classes(rows);
  for (uint64_t i = 0; i < rows; ++i) classes[i] = static_cast<uint32_t>((i * 7919) % 5);
  for (SplitStrategy strategy :
       {SplitStrategy::kRandom, SplitStrategy::kStratified, SplitStrategy::kGroup}) {
    SplitRequest r = Request(strategy, rows, 0.2, 42);
    if (strategy == SplitStrategy::kStratified) r.labels = classes;
    if (strategy == SplitStrategy::kGroup) r.labels = groups;
    const auto start = std::chrono::steady_clock::now();
    auto s = Split(r);
    const double seconds =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    ASSERT_OK(s);
    EXPECT_EQ(s->holdout.size() + s->dev.size(), rows);
    std::cout << "[ timing   ] " << SplitStrategyName(strategy)
              << " split of 5,000,000 rows: " << seconds << " s\n";
    // Generous bound for a shared, possibly unoptimised build; the target is
    // well under a second.
    EXPECT_LT(seconds, 3.0);
  }
}

}  // namespace
}  // namespace unseen
