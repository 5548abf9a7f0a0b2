// CalculateBound: the `bound` command as a library call.
#include "harness/workflow/bound.h"

#include <gtest/gtest.h>

#include <cmath>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

TEST(CalculateBoundTest, ErrorsGiveTheClopperPearsonInterval) {
  BoundCalcRequest req;
  req.n = 400;
  req.errors = 37;
  Result<BoundCalcReport> r = CalculateBound(req);
  ASSERT_OK(r.status());
  EXPECT_EQ(r->metric, "error_rate");
  EXPECT_EQ(r->bound.method, "clopper-pearson");
  EXPECT_DOUBLE_EQ(r->bound.estimate, 37.0 / 400);
  // scipy 1.10.1: beta.ppf(0.025, 37, 364) and beta.ppf(0.975, 38, 363).
  EXPECT_NEAR(r->bound.lower, 0.06596594259068848, 1e-9);
  EXPECT_NEAR(r->bound.upper, 0.1252433130966568, 1e-9);
  EXPECT_DOUBLE_EQ(r->log_hypotheses, 0.0);
}

TEST(CalculateBoundTest, RevealsWidenTheInterval) {
  BoundCalcRequest once, adaptive;
  once.n = adaptive.n = 400;
  once.errors = adaptive.errors = 37;
  adaptive.reveals = 3;  // answer 4 of a budget of 100, after 3 answers of 1001 values
  Result<BoundCalcReport> a = CalculateBound(once);
  Result<BoundCalcReport> b = CalculateBound(adaptive);
  ASSERT_OK(a.status());
  ASSERT_OK(b.status());
  // ln(2 / (1/20 + 1/100)) + ln 2 + 3 ln 1001 (docs/bounds.md, "One accounting").
  EXPECT_NEAR(b->log_hypotheses,
              std::log(2 / (1.0 / 20 + 0.01)) + std::log(2.0) + 3 * std::log(1001.0), 1e-9);
  // Among 40 questions fixed in advance it costs ln 2 + ln 40 instead.
  adaptive.advance = 40;
  Result<BoundCalcReport> c = CalculateBound(adaptive);
  ASSERT_OK(c.status());
  EXPECT_NEAR(c->log_hypotheses, std::log(2 / (1.0 / 20 + 0.01)) + std::log(80.0), 1e-9);
  EXPECT_LT(b->bound.lower, a->bound.lower);
  EXPECT_GT(b->bound.upper, a->bound.upper);
}

TEST(CalculateBoundTest, BernsteinFromACountUsesTheUnbiasedVariance) {
  BoundCalcRequest counted, stated;
  counted.n = stated.n = 400;
  counted.errors = 37;
  counted.method = stated.method = "bernstein";
  stated.mean = 37.0 / 400;
  stated.variance = 0.08415413533834587;  // p(1-p) n/(n-1), p = 37/400
  Result<BoundCalcReport> a = CalculateBound(counted);
  Result<BoundCalcReport> b = CalculateBound(stated);
  ASSERT_OK(a.status());
  ASSERT_OK(b.status());
  EXPECT_NEAR(a->bound.upper, b->bound.upper, 1e-12);
  EXPECT_EQ(b->metric, "mean_loss");
}

TEST(CalculateBoundTest, BadInputNamesTheOption) {
  auto message = [](const BoundCalcRequest& req) {
    Result<BoundCalcReport> r = CalculateBound(req);
    EXPECT_TRUE(r.status().IsInvalidArgument());
    return r.status().message();
  };
  BoundCalcRequest req;
  req.n = 10;
  EXPECT_NE(message(req).find("--errors K or --mean X"), std::string::npos);
  req.errors = 11;
  EXPECT_NE(message(req).find("--errors"), std::string::npos);
  req.errors = 3;
  req.reveals = 2;
  req.models = 3;
  EXPECT_NE(message(req).find("--models counts questions compared without a ledger"),
            std::string::npos);
  req.models = 1;
  req.answer = 0;
  EXPECT_NE(message(req).find("--answer"), std::string::npos);
  req.answer.reset();
  req.reveals = 0;
  req.range = "0-1";
  EXPECT_NE(message(req).find("--range"), std::string::npos);
  req.range = "0:1";
  req.method = "guess";
  EXPECT_NE(message(req).find("--method"), std::string::npos);
}

}  // namespace
}  // namespace unseen
