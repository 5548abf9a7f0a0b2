#include "harness/bounds/bounds.h"

#include <gtest/gtest.h>

#include <cfloat>
#include <cmath>
#include <fstream>
#include <limits>
#include <sstream>
#include <string>
#include <vector>

#include "harness/bounds/adaptivity.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

// The check values below are printed with 10 decimals (docs/references.md); half a unit in the
// last place plus slack.
constexpr double kTenDecimals = 1e-10;
// The tolerance for Clopper–Pearson limits against scipy and R, a project choice
// (docs/references.md, opening section).
constexpr double kCpTolerance = 1e-9;

BoundRequest Request(BoundMethod method, uint64_t n, double mean, double delta, double log_h) {
  BoundRequest r;
  r.method = method;
  r.n = n;
  r.mean = mean;
  r.delta = delta;
  r.log_hypotheses = log_h;
  return r;
}

BoundRequest CpRequest(uint64_t k, uint64_t n, double delta, double log_h) {
  BoundRequest r =
      Request(BoundMethod::kClopperPearson, n, static_cast<double>(k) / n, delta, log_h);
  r.successes = k;
  return r;
}

// ---------------------------------------------------------------------------
// Method names

TEST(BoundMethodTest, NamesRoundTrip) {
  for (BoundMethod m :
       {BoundMethod::kHoeffding, BoundMethod::kClopperPearson, BoundMethod::kBernstein}) {
    Result<BoundMethod> parsed = ParseBoundMethod(BoundMethodName(m));
    ASSERT_OK(parsed);
    EXPECT_EQ(*parsed, m);
  }
  EXPECT_STREQ(BoundMethodName(BoundMethod::kClopperPearson), "clopper-pearson");
}

TEST(BoundMethodTest, UnknownNameIsInvalidArgumentListingTheChoices) {
  Result<BoundMethod> parsed = ParseBoundMethod("Hoeffding");
  ASSERT_FALSE(parsed.ok());
  EXPECT_TRUE(parsed.status().IsInvalidArgument());
  EXPECT_NE(parsed.status().message().find("\"Hoeffding\""), std::string::npos);
  EXPECT_NE(parsed.status().message().find("clopper-pearson"), std::string::npos);
}

// ---------------------------------------------------------------------------
// Hoeffding

struct HoeffdingRow {
  uint64_t n;
  double m, delta, two_sided, one_sided;
};
// Computed with Python math from the closed form (docs/references.md, Hoeffding).
const HoeffdingRow kHoeffdingRows[] = {
    {1000, 1, 0.05, 0.0429469408, 0.0387022756},     {1000, 100, 0.05, 0.0643973976, 0.0616477999},
    {10000, 1000, 0.05, 0.0230180741, 0.0222525140}, {100, 1, 0.05, 0.1358101516, 0.1223873415},
    {10000, 1, 0.01, 0.0162762363, 0.0151742713},
};

TEST(HoeffdingBoundTest, MatchesReferenceTableTwoSided) {
  for (const HoeffdingRow& row : kHoeffdingRows) {
    SCOPED_TRACE("N=" + std::to_string(row.n) + " M=" + std::to_string(row.m));
    Result<Bound> b =
        ComputeBound(Request(BoundMethod::kHoeffding, row.n, 0.5, row.delta, std::log(row.m)));
    ASSERT_OK(b);
    EXPECT_NEAR(b->half_width_raw, row.two_sided, kTenDecimals);
    EXPECT_NEAR(b->lower, 0.5 - row.two_sided, kTenDecimals);
    EXPECT_NEAR(b->upper, 0.5 + row.two_sided, kTenDecimals);
    EXPECT_DOUBLE_EQ(b->estimate, 0.5);
    EXPECT_EQ(b->method, "hoeffding");
    EXPECT_NEAR(b->delta_per_hypothesis, row.delta / row.m, 1e-15);
  }
}

TEST(HoeffdingBoundTest, OneSidedHelperMatchesReferenceTable) {
  for (const HoeffdingRow& row : kHoeffdingRows) {
    Result<double> eps = OneSidedHoeffdingEpsilon(row.n, 1.0, row.delta, std::log(row.m));
    ASSERT_OK(eps);
    EXPECT_NEAR(*eps, row.one_sided, kTenDecimals);  // docs/references.md, Hoeffding: one-sided
  }
}

TEST(HoeffdingBoundTest, RangeScalesTheHalfWidth) {
  BoundRequest r = Request(BoundMethod::kHoeffding, 1000, 0.25, 0.05, std::log(100.0));
  r.range_lo = -1;
  r.range_hi = 1;
  Result<Bound> b = ComputeBound(r);
  ASSERT_OK(b);
  // docs/references.md, Hoeffding: N=1000, M=100 gives 0.0643973976 on [0,1]; [a,b] multiplies
  // by b-a.
  EXPECT_NEAR(b->half_width_raw, 2 * 0.0643973976, 2 * kTenDecimals);
  EXPECT_NE(b->assumptions.find("[-1, 1]"), std::string::npos) << b->assumptions;
}

TEST(HoeffdingBoundTest, ClipsToTheRangeButKeepsTheRawHalfWidth) {
  Result<Bound> b = ComputeBound(Request(BoundMethod::kHoeffding, 100, 0.05, 0.05, 0));
  ASSERT_OK(b);
  EXPECT_NEAR(b->half_width_raw, 0.1358101516, kTenDecimals);  // docs/references.md, Hoeffding
  EXPECT_EQ(b->lower, 0.0);
  EXPECT_NEAR(b->upper, 0.05 + 0.1358101516, kTenDecimals);
}

TEST(HoeffdingBoundTest, HugeHypothesisCountStaysInLogSpace) {
  // H = e^5000 overflows a double; ln(2H/delta) = ln 2 + 5000 - ln 0.05 does not.
  Result<Bound> b = ComputeBound(Request(BoundMethod::kHoeffding, 1000000, 0.5, 0.05, 5000));
  ASSERT_OK(b);
  const double expected = std::sqrt((std::log(2.0) + 5000 - std::log(0.05)) / 2e6);  // closed form
  EXPECT_NEAR(b->half_width_raw, expected, 1e-15);
  EXPECT_EQ(b->delta_per_hypothesis, 0.0);  // underflows, as documented
  EXPECT_NEAR(b->log_delta_per_hypothesis, std::log(0.05) - 5000, 1e-12);
}

// ---------------------------------------------------------------------------
// Inverse: holdout size

TEST(HoeffdingSampleSizeTest, MatchesReferenceSizes) {
  // docs/references.md, Hoeffding, holdout sizes (two-sided): 737.78 -> 738, 18444.397 -> 18445,
  // 41470.248 -> 41471.
  Result<uint64_t> a = HoeffdingSampleSize(0.05, 0.05, 0, 1);
  Result<uint64_t> b = HoeffdingSampleSize(0.01, 0.05, 0, 1);
  Result<uint64_t> c = HoeffdingSampleSize(0.01, 0.05, std::log(100.0), 1);
  ASSERT_OK(a);
  ASSERT_OK(b);
  ASSERT_OK(c);
  EXPECT_EQ(*a, 738u);
  EXPECT_EQ(*b, 18445u);
  EXPECT_EQ(*c, 41471u);
}

TEST(HoeffdingSampleSizeTest, IsTheSmallestSizeThatReachesTheTarget) {
  for (double log_h : {0.0, std::log(100.0), 50.0}) {
    Result<uint64_t> n = HoeffdingSampleSize(0.02, 0.05, log_h, 1);
    ASSERT_OK(n);
    Result<Bound> at = ComputeBound(Request(BoundMethod::kHoeffding, *n, 0.5, 0.05, log_h));
    Result<Bound> below = ComputeBound(Request(BoundMethod::kHoeffding, *n - 1, 0.5, 0.05, log_h));
    ASSERT_OK(at);
    ASSERT_OK(below);
    EXPECT_LE(at->half_width_raw, 0.02);
    EXPECT_GT(below->half_width_raw, 0.02);
  }
}

TEST(HoeffdingSampleSizeTest, RejectsBadInput) {
  EXPECT_TRUE(HoeffdingSampleSize(0, 0.05, 0, 1).status().IsInvalidArgument());
  EXPECT_TRUE(HoeffdingSampleSize(0.01, 1.0, 0, 1).status().IsInvalidArgument());
  EXPECT_TRUE(HoeffdingSampleSize(0.01, 0.05, -1, 1).status().IsInvalidArgument());
  EXPECT_TRUE(HoeffdingSampleSize(0.01, 0.05, 0, 0).status().IsInvalidArgument());
  EXPECT_TRUE(HoeffdingSampleSize(1e-12, 0.05, 0, 1).status().IsInvalidArgument());  // > 2^63
}

// ---------------------------------------------------------------------------
// Clopper–Pearson

struct CpRow {
  uint64_t k, n;
  double m, lower, upper;
};
// Clopper–Pearson values computed with scipy 1.10.1 beta.ppf and R 4.2.2 binom.test/qbeta
// (docs/references.md, Clopper–Pearson); the Bonferroni rows use alpha' = 0.05 / M.
const CpRow kCpRows[] = {
    {0, 10, 1, 0.0, 0.3084971078},
    {5, 100, 1, 0.0164318792, 0.1128349111},
    {37, 1000, 1, 0.0261827088, 0.0506411231},
    {10, 10, 1, 0.6915028922, 1.0},
    {5, 100, 10, 0.0092812332, 0.1440599471},
    {37, 1000, 100, 0.0195960627, 0.0623977589},
    {0, 10, 20, 0.0, 0.4875033849},
    {682, 925, 1, 0.7076682641, 0.7654065582},  // R ?binom.test example, full precision (scipy)
};

TEST(ClopperPearsonBoundTest, MatchesReferenceTableIncludingBonferroniRows) {
  for (const CpRow& row : kCpRows) {
    SCOPED_TRACE(std::to_string(row.k) + "/" + std::to_string(row.n) +
                 " M=" + std::to_string(row.m));
    Result<Bound> b = ComputeBound(CpRequest(row.k, row.n, 0.05, std::log(row.m)));
    ASSERT_OK(b);
    EXPECT_NEAR(b->lower, row.lower, kCpTolerance);
    EXPECT_NEAR(b->upper, row.upper, kCpTolerance);
    EXPECT_TRUE(std::isnan(b->half_width_raw));
    EXPECT_EQ(b->method, "clopper-pearson");
  }
}

TEST(ClopperPearsonBoundTest, ClosedFormsAtTheEdges) {
  // Closed forms (docs/references.md, Clopper–Pearson): k = 0 gives U = 1 - (alpha/2)^(1/n);
  // k = n gives L = (alpha/2)^(1/n).
  Result<Bound> zero = ComputeBound(CpRequest(0, 10, 0.05, 0));
  Result<Bound> all = ComputeBound(CpRequest(10, 10, 0.05, 0));
  ASSERT_OK(zero);
  ASSERT_OK(all);
  EXPECT_NEAR(zero->upper, 0.30849710781876, 1e-13);  // closed form 1-0.025^(1/10)
  EXPECT_EQ(zero->lower, 0.0);
  EXPECT_NEAR(all->lower, 1 - 0.30849710781876, 1e-13);
  EXPECT_EQ(all->upper, 1.0);
}

TEST(ClopperPearsonBoundTest, OneSidedUpperLimitsMatchReference) {
  // One-sided upper bound (test-set bound) at delta = 0.05, computed with scipy 1.10.1 (and R 4.2.2
  // for k = 5) (docs/references.md, Clopper–Pearson).
  const struct {
    uint64_t k, n;
    double upper;
  } rows[] = {{0, 10, 0.2588655509},
              {0, 100, 0.0295130496},
              {5, 100, 0.1022533776},
              {37, 1000, 0.0483899267}};
  for (const auto& row : rows) {
    Result<ProportionInterval> pi = ClopperPearsonLimits(row.k, row.n, std::log(0.05));
    ASSERT_OK(pi);
    EXPECT_NEAR(pi->upper, row.upper, kCpTolerance);
  }
}

TEST(ClopperPearsonBoundTest, ScalesIntoTheLossRange) {
  BoundRequest r = CpRequest(5, 100, 0.05, 0);
  r.range_lo = 0;
  r.range_hi = 2;
  r.mean = 0.1;  // 5 of 100 rows at 2
  Result<Bound> b = ComputeBound(r);
  ASSERT_OK(b);
  EXPECT_NEAR(b->lower, 2 * 0.0164318792, 2 * kCpTolerance);  // the 5/100 row of kCpRows, doubled
  EXPECT_NEAR(b->upper, 2 * 0.1128349111, 2 * kCpTolerance);
  EXPECT_DOUBLE_EQ(b->estimate, 0.1);
}

std::vector<std::vector<std::string>> ReadCsv(const std::string& path) {
  std::ifstream f(path);
  std::vector<std::vector<std::string>> rows;
  std::string line;
  bool header = true;
  while (std::getline(f, line)) {
    if (line.empty() || line[0] == '#') continue;
    if (header) {
      header = false;
      continue;
    }
    std::vector<std::string> fields;
    std::stringstream ss(line);
    std::string field;
    while (std::getline(ss, field, ',')) fields.push_back(field);
    rows.push_back(fields);
  }
  return rows;
}

// A lower limit within `abs` and within `rel` of its own size, so that tiny
// limits are checked digit by digit (down to 1e-300, where doubles thin out).
void ExpectLower(double got, double want, double abs, double rel) {
  EXPECT_NEAR(got, want, abs);
  EXPECT_NEAR(got, want, rel * want + 1e-300);
}

// An upper limit within `abs` and within `rel` of its distance to the nearer
// end, plus one unit in the last place of numbers near 1.
void ExpectUpper(double got, double want, double abs, double rel) {
  EXPECT_NEAR(got, want, abs);
  EXPECT_NEAR(got, want, rel * std::fmin(want, 1 - want) + DBL_EPSILON);
}

TEST(ClopperPearsonBoundTest, MatchesGeneratedScipyTable) {
  // tests/testdata/bounds/clopper_pearson.csv, written by make_reference.py (scipy 1.10.1
  // beta.ppf/isf, each limit checked against mpmath 1.2.1 at 60 digits).
  const auto rows = ReadCsv(testing::TestDataDir() + "/bounds/clopper_pearson.csv");
  ASSERT_EQ(rows.size(), 950u);
  for (const auto& row : rows) {
    ASSERT_EQ(row.size(), 6u);
    const uint64_t k = std::stoull(row[0]), n = std::stoull(row[1]);
    const double alpha = std::stod(row[2]), lower = std::stod(row[3]), upper = std::stod(row[4]);
    SCOPED_TRACE(row[0] + "," + row[1] + "," + row[2]);
    Result<ProportionInterval> pi = ClopperPearsonLimits(k, n, std::log(alpha / 2));
    ASSERT_OK(pi);
    ExpectLower(pi->lower, lower, kCpTolerance, 1e-9);
    ExpectUpper(pi->upper, upper, kCpTolerance, 1e-9);
  }
}

TEST(ClopperPearsonBoundTest, MatchesMpmathTableBelowTheDoubleRange) {
  // tests/testdata/bounds/clopper_pearson_log_tail.csv, written by make_reference.py (mpmath 1.2.1
  // at 60 digits): tails exp(-650) .. exp(-10000), which need the log-space search.
  const auto rows = ReadCsv(testing::TestDataDir() + "/bounds/clopper_pearson_log_tail.csv");
  ASSERT_EQ(rows.size(), 140u);
  for (const auto& row : rows) {
    ASSERT_EQ(row.size(), 5u);
    const uint64_t k = std::stoull(row[0]), n = std::stoull(row[1]);
    const double log_tail = std::stod(row[2]), lower = std::stod(row[3]), upper = std::stod(row[4]);
    SCOPED_TRACE(row[0] + "," + row[1] + "," + row[2]);
    Result<ProportionInterval> pi = ClopperPearsonLimits(k, n, log_tail);
    ASSERT_OK(pi);
    ExpectLower(pi->lower, lower, kCpTolerance, 1e-9);
    ExpectUpper(pi->upper, upper, kCpTolerance, 1e-9);
    // The log-space search errs on the conservative side only.
    EXPECT_LE(pi->lower, lower * (1 + 1e-15));
    EXPECT_GE(pi->upper, upper - 4e-16);
  }
}

TEST(ClopperPearsonBoundTest, LogSpaceSearchAgreesWithBoostWhereBothWork) {
  for (uint64_t n : {3u, 40u, 925u, 100000u}) {
    for (uint64_t k : {uint64_t{1}, n / 3 + 1, n}) {
      // Tails down to exp(-229), just above where ComputeBound stops asking Boost.
      for (double log_tail : {std::log(0.5), std::log(0.25), -3.0, -40.0, -150.0, -229.0}) {
        SCOPED_TRACE(std::to_string(k) + "/" + std::to_string(n) + " " + std::to_string(log_tail));
        Result<ProportionInterval> boost = ClopperPearsonLimits(k, n, log_tail);
        ASSERT_OK(boost);
        const double ours = internal::ClopperPearsonLowerLogSpace(k, n, log_tail);
        EXPECT_NEAR(ours, boost->lower, 1e-10 * boost->lower + 1e-300);
        EXPECT_LE(ours, boost->lower * (1 + 1e-12));  // Boost has rounding of its own
      }
    }
  }
}

TEST(ClopperPearsonBoundTest, UnderflowingAlphaStillGivesAnIntervalInsideHoeffding) {
  // ln H = 1000: alpha = 0.05 e^-1000 is below the double range. Clopper–Pearson is never wider
  // than Hoeffding at the same level (the binomial tail is at most exp(-2n eps^2)).
  for (uint64_t k : {0u, 10u, 500u, 990u, 1000u}) {
    Result<Bound> cp = ComputeBound(CpRequest(k, 1000, 0.05, 1000));
    BoundRequest h = Request(BoundMethod::kHoeffding, 1000, k / 1000.0, 0.05, 1000);
    Result<Bound> hoeffding = ComputeBound(h);
    ASSERT_OK(cp);
    ASSERT_OK(hoeffding);
    EXPECT_GE(cp->lower, hoeffding->lower);
    EXPECT_LE(cp->upper, hoeffding->upper);
    EXPECT_LE(cp->lower, k / 1000.0);
    EXPECT_GE(cp->upper, k / 1000.0);
    EXPECT_EQ(cp->delta_per_hypothesis, 0.0);
  }
}

// The exact binomial tails, summed term by term: the plain reference with no outside values
// (docs/references.md, Clopper–Pearson).
long double BinomialAtLeast(int k, int n, long double p) {
  long double total = 0, choose = 1;
  for (int j = 0; j <= n; ++j) {
    if (j >= k) total += choose * std::pow(p, j) * std::pow(1 - p, n - j);
    choose = choose * (n - j) / (j + 1);
  }
  return total;
}

// The p at which `tail(p)` (monotone) crosses `target`, by plain bisection.
template <typename Tail>
double Bisect(Tail tail, long double target, bool increasing) {
  long double lo = 0, hi = 1;
  for (int i = 0; i < 200; ++i) {
    const long double mid = (lo + hi) / 2;
    if ((tail(mid) < target) == increasing) {
      lo = mid;
    } else {
      hi = mid;
    }
  }
  return static_cast<double>((lo + hi) / 2);
}

TEST(ClopperPearsonBoundTest, ExhaustiveSmallCasesMatchBisectionOnExactBinomialTail) {
  for (int n = 1; n <= 8; ++n) {
    for (int k = 0; k <= n; ++k) {
      for (double alpha : {0.5, 0.1, 0.05, 0.01, 1e-4, 1e-9}) {
        SCOPED_TRACE(std::to_string(k) + "/" + std::to_string(n) +
                     " alpha=" + std::to_string(alpha));
        Result<ProportionInterval> pi = ClopperPearsonLimits(k, n, std::log(alpha / 2));
        ASSERT_OK(pi);
        // L: P(Bin(n,L) >= k) = alpha/2 (increasing in p); U: P(Bin(n,U) <= k) = alpha/2.
        const double lower =
            k == 0
                ? 0.0
                : Bisect([&](long double p) { return BinomialAtLeast(k, n, p); }, alpha / 2, true);
        const double upper =
            k == n ? 1.0
                   : Bisect([&](long double p) { return 1 - BinomialAtLeast(k + 1, n, p); },
                            alpha / 2, false);
        EXPECT_NEAR(pi->lower, lower, 1e-12);
        EXPECT_NEAR(pi->upper, upper, 1e-12);
      }
    }
  }
}

TEST(ClopperPearsonBoundTest, ExactCoverageIsAtLeastNominal) {
  // Coverage at p summed over every outcome k of Bin(n, p): exact, no simulation.
  const int n = 40;
  const double delta = 0.05;
  for (BoundMethod method :
       {BoundMethod::kClopperPearson, BoundMethod::kHoeffding, BoundMethod::kBernstein}) {
    std::vector<Bound> bounds;
    for (int k = 0; k <= n; ++k) {
      BoundRequest r = CpRequest(k, n, delta, 0);
      r.method = method;
      r.variance = static_cast<double>(k) * (n - k) / (n * (n - 1.0));
      Result<Bound> b = ComputeBound(r);
      ASSERT_OK(b);
      bounds.push_back(*b);
    }
    for (int i = 1; i < 100; ++i) {
      const double p = i / 100.0;
      long double covered = 0, choose = 1;
      for (int k = 0; k <= n; ++k) {
        const long double pmf = choose * std::pow(p, k) * std::pow(1 - p, n - k);
        if (bounds[k].lower <= p && p <= bounds[k].upper) covered += pmf;
        choose = choose * (n - k) / (k + 1);
      }
      EXPECT_GE(covered, 1 - delta - 1e-12) << BoundMethodName(method) << " p=" << p;
    }
  }
}

// ---------------------------------------------------------------------------
// Empirical Bernstein

struct BernsteinRow {
  uint64_t n;
  double mean, variance, log_h, one_sided, two_sided;
};
// one_sided: Maurer & Pontil (2009) Theorem 4 at delta = 0.05, computed with NumPy var(ddof=1) +
// Python math (docs/references.md, Empirical Bernstein).
// two_sided: derived from the same rows with ln(4H/delta) in place of ln(2H/delta) (Theorem 4 on
// Z and 1-Z at delta/2 each), computed with Python math.
const BernsteinRow kBernsteinRows[] = {
    {100, 0.1, 0.0909090909090909, 0, 0.1688398896, 0.1925399409},
    {10000, 0.1, 0.0900090009000900, 0, 0.0090098412, 0.0099042624},
    {100, 0.5, 0.0, 0, 0.0869432868, 0.1032800890},
    {10, 0.55, 0.0916666666666667, 0, 1.2164327960, 1.4195190766},
    {10000, 0.1, 0.0900090009000900, 4.605170185988091, 0.0141546299, 0.0148167239},  // M = 100
};

TEST(BernsteinBoundTest, OneSidedHelperMatchesReferenceTable) {
  for (const BernsteinRow& row : kBernsteinRows) {
    Result<double> eps = OneSidedBernsteinEpsilon(row.n, row.variance, 1.0, 0.05, row.log_h);
    ASSERT_OK(eps);
    EXPECT_NEAR(*eps, row.one_sided, kTenDecimals);
  }
}

TEST(BernsteinBoundTest, TwoSidedMatchesDerivedValues) {
  for (const BernsteinRow& row : kBernsteinRows) {
    BoundRequest r = Request(BoundMethod::kBernstein, row.n, row.mean, 0.05, row.log_h);
    r.variance = row.variance;
    Result<Bound> b = ComputeBound(r);
    ASSERT_OK(b);
    EXPECT_NEAR(b->half_width_raw, row.two_sided, kTenDecimals);
    EXPECT_NEAR(b->lower, std::fmax(0.0, row.mean - row.two_sided), kTenDecimals);
    EXPECT_NEAR(b->upper, std::fmin(1.0, row.mean + row.two_sided), kTenDecimals);
    // The two-sided eps is the one-sided helper at twice the hypotheses.
    Result<double> one =
        OneSidedBernsteinEpsilon(row.n, row.variance, 1, 0.05, row.log_h + std::log(2.0));
    ASSERT_OK(one);
    EXPECT_NEAR(b->half_width_raw, *one, 1e-15);
  }
}

TEST(BernsteinBoundTest, RawSpreadUsesVarianceButRangeScalesTheSecondTerm) {
  // Values in [0, 10] with the variance of the raw values: eps = sqrt(2 V L / n) + 7 * 10
  // L/(3(n-1)).
  BoundRequest r = Request(BoundMethod::kBernstein, 500, 3.0, 0.05, std::log(7.0));
  r.range_hi = 10;
  r.variance = 4.0;
  Result<Bound> b = ComputeBound(r);
  ASSERT_OK(b);
  // ln(4H/δ), the two-sided closed form (docs/references.md, Empirical Bernstein).
  const double l = std::log(4 * 7 / 0.05);
  EXPECT_NEAR(b->half_width_raw, std::sqrt(2 * 4.0 * l / 500) + 70 * l / (3 * 499.0), 1e-14);
}

// ---------------------------------------------------------------------------
// Request validation

TEST(BoundRequestTest, RejectsBadFieldsNamingThem) {
  auto expect_invalid = [](const BoundRequest& r, const std::string& word) {
    Result<Bound> b = ComputeBound(r);
    ASSERT_FALSE(b.ok()) << word;
    EXPECT_TRUE(b.status().IsInvalidArgument()) << b.status().ToString();
    EXPECT_NE(b.status().message().find(word), std::string::npos) << b.status().ToString();
  };
  const BoundRequest good = Request(BoundMethod::kHoeffding, 100, 0.5, 0.05, 0);
  ASSERT_OK(ComputeBound(good));

  BoundRequest r = good;
  r.n = 0;
  expect_invalid(r, "n = 0");
  for (double d : {0.0, 1.0, -0.1, std::numeric_limits<double>::quiet_NaN()}) {
    r = good;
    r.delta = d;
    expect_invalid(r, "delta");
  }
  r = good;
  r.mean = 1.5;
  expect_invalid(r, "mean");
  r = good;
  r.log_hypotheses = -0.5;
  expect_invalid(r, "log_hypotheses");
  r = good;
  r.log_hypotheses = std::numeric_limits<double>::infinity();
  expect_invalid(r, "log_hypotheses");
  r = good;
  r.range_lo = 1;
  expect_invalid(r, "range");
  r = good;
  r.method = static_cast<BoundMethod>(99);
  expect_invalid(r, "method");

  r = good;
  r.method = BoundMethod::kClopperPearson;
  expect_invalid(r, "successes");
  r.successes = 101;
  r.mean = 1;
  expect_invalid(r, "successes");
  r.successes = 30;
  r.mean = 0.5;  // 30/100 is 0.3
  expect_invalid(r, "disagrees");

  r = good;
  r.method = BoundMethod::kBernstein;
  expect_invalid(r, "variance");
  r.variance = -0.1;
  expect_invalid(r, "variance");
  r.variance = 0.3;  // values in [0,1] have at most 0.25 * 100/99
  expect_invalid(r, "variance");
  r.variance = 0.1;
  r.n = 1;
  expect_invalid(r, "n >= 2");
}

TEST(BoundRequestTest, MeanRoundedJustPastTheRangeIsClipped) {
  Result<Bound> b = ComputeBound(Request(BoundMethod::kHoeffding, 100, 1 + 1e-12, 0.05, 0));
  ASSERT_OK(b);
  EXPECT_EQ(b->estimate, 1.0);
  EXPECT_EQ(b->upper, 1.0);
}

TEST(BoundRequestTest, AssumptionsNameTheIndependenceAndTheRange) {
  Result<Bound> b = ComputeBound(Request(BoundMethod::kHoeffding, 100, 0.5, 0.05, 0));
  ASSERT_OK(b);
  EXPECT_NE(b->assumptions.find("independent"), std::string::npos);
  EXPECT_NE(b->assumptions.find("[0, 1]"), std::string::npos);
  EXPECT_NE(b->assumptions.find("sampling bias"), std::string::npos);
}

TEST(ClopperPearsonLimitsTest, RejectsBadInput) {
  EXPECT_TRUE(ClopperPearsonLimits(0, 0, -3).status().IsInvalidArgument());
  EXPECT_TRUE(ClopperPearsonLimits(5, 4, -3).status().IsInvalidArgument());
  EXPECT_TRUE(ClopperPearsonLimits(1, 4, -0.1).status().IsInvalidArgument());
  EXPECT_TRUE(ClopperPearsonLimits(1, 4, -std::numeric_limits<double>::infinity())
                  .status()
                  .IsInvalidArgument());
}

// ---------------------------------------------------------------------------
// docs/bounds.md worked example: keep the numbers there in step with the code.

TEST(BoundsDocTest, WorkedExampleNumbers) {
  // Check values computed with Python math and scipy 1.10.1 beta.ppf/isf for docs/bounds.md.
  // Ledger: 4 models frozen before any reveal, then one frozen after 1 reveal and one after 2,
  // each reveal rounded to 0.001 on [0, 1] (R = 1001). H = 4 + 1001 + 1001^2 = 1003006.
  const uint64_t r = ResolutionValues(0.001, 0, 1);
  ASSERT_EQ(r, 1001u);
  const double log_h = LogHypotheses({0, 0, 0, 0, 1, 2}, r);
  EXPECT_NEAR(log_h, 13.818512048980018, 1e-12);

  // The reported model: 173 errors on a holdout of 2000 rows.
  Result<Bound> cp = ComputeBound(CpRequest(173, 2000, 0.05, log_h));
  BoundRequest h = Request(BoundMethod::kHoeffding, 2000, 173 / 2000.0, 0.05, log_h);
  Result<Bound> hoeffding = ComputeBound(h);
  BoundRequest e = h;
  e.method = BoundMethod::kBernstein;
  e.variance = 173.0 * (2000 - 173) / (2000.0 * 1999);  // 0/1 values: k(n-k)/(n(n-1))
  Result<Bound> bernstein = ComputeBound(e);
  ASSERT_OK(cp);
  ASSERT_OK(hoeffding);
  ASSERT_OK(bernstein);
  EXPECT_NEAR(hoeffding->half_width_raw, 0.0661577499297965, 1e-12);
  EXPECT_NEAR(hoeffding->lower, 0.020342250070203488, 1e-12);
  EXPECT_NEAR(bernstein->half_width_raw, 0.0591772225175087, 1e-12);
  EXPECT_NEAR(cp->lower, 0.05616919426133883, kCpTolerance);
  EXPECT_NEAR(cp->upper, 0.12519909565543752, kCpTolerance);
  EXPECT_NEAR(cp->delta_per_hypothesis, 4.985015044775405e-08, 1e-20);

  // Rows needed for a Hoeffding half-width of 0.05 at this H: ceil(3501.478...) (Python math).
  Result<uint64_t> rows = HoeffdingSampleSize(0.05, 0.05, log_h, 1);
  ASSERT_OK(rows);
  EXPECT_EQ(*rows, 3502u);

  // Had all six been frozen before any reveal: H = 6.
  Result<Bound> batch =
      ComputeBound(CpRequest(173, 2000, 0.05, LogHypotheses({0, 0, 0, 0, 0, 0}, r)));
  ASSERT_OK(batch);
  EXPECT_NEAR(batch->lower, 0.07071441736191546, kCpTolerance);
  EXPECT_NEAR(batch->upper, 0.10438197937813297, kCpTolerance);
  // And a single model fixed in advance: H = 1.
  Result<Bound> single = ComputeBound(CpRequest(173, 2000, 0.05, 0));
  ASSERT_OK(single);
  EXPECT_NEAR(single->lower, 0.0745434906314059, kCpTolerance);
  EXPECT_NEAR(single->upper, 0.09968426603990928, kCpTolerance);
}

}  // namespace
}  // namespace unseen
