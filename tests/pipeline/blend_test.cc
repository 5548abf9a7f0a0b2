// Blend arithmetic: non-negative least squares against scipy.optimize.nnls,
// blend weights against numpy.linalg.lstsq and scipy (reference values
// written by tests/testdata/blend/make_nnls_reference.py with Debian's scipy
// 1.10.1 and numpy 1.24.2), the KKT conditions on seeded random problems,
// clipping, cross-validated contributions, the blend spec table and
// applying a frozen blend.
#include "harness/pipeline/blend.h"

#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <limits>
#include <map>
#include <nlohmann/json.hpp>
#include <string>
#include <utility>
#include <vector>

#include "harness/pipeline/frozen_model.h"
#include "harness/pipeline/nnls.h"
#include "harness/pipeline/pipeline.h"
#include "harness/pipeline/spec.h"
#include "harness/sampling/random.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using nlohmann::json;

json Reference() {
  return json::parse(testing::ReadFile(testing::TestDataDir() + "/blend/nnls_reference.json"));
}

Eigen::MatrixXd Matrix(const json& rows) {
  Eigen::MatrixXd m(static_cast<Eigen::Index>(rows.size()),
                    static_cast<Eigen::Index>(rows[0].size()));
  for (size_t i = 0; i < rows.size(); ++i) {
    for (size_t j = 0; j < rows[i].size(); ++j) {
      m(static_cast<Eigen::Index>(i), static_cast<Eigen::Index>(j)) = rows[i][j].get<double>();
    }
  }
  return m;
}

Eigen::VectorXd Vector(const json& v) {
  Eigen::VectorXd out(static_cast<Eigen::Index>(v.size()));
  for (size_t i = 0; i < v.size(); ++i) out(static_cast<Eigen::Index>(i)) = v[i].get<double>();
  return out;
}

TEST(NnlsTest, MatchesScipyNnls) {
  for (const json& c : Reference()["nnls"]) {
    const std::string name = c["name"].get<std::string>();
    Eigen::MatrixXd a = Matrix(c["A"]);
    Eigen::VectorXd b = Vector(c["b"]), want = Vector(c["x"]);
    Result<NnlsResult> r = NonNegativeLeastSquares(a, b);
    ASSERT_OK(r);
    EXPECT_NEAR(r->residual, c["rnorm"].get<double>(), 1e-10) << name;
    EXPECT_GE(r->x.minCoeff(), 0.0) << name;
    if (name.rfind("wide", 0) == 0) continue;  // underdetermined: x need not be unique
    for (Eigen::Index j = 0; j < want.size(); ++j) {
      EXPECT_NEAR(r->x(j), want(j), 1e-10) << name << " x[" << j << "]";
    }
  }
}

// Lawson & Hanson's optimality conditions: x >= 0, w = A'(b - Ax) <= 0 where
// x = 0, and w = 0 where x > 0 (to rounding).
TEST(NnlsTest, SeededRandomProblemsSatisfyKkt) {
  for (uint64_t seed = 1; seed <= 40; ++seed) {
    Random rng(seed);
    const Eigen::Index m = 5 + static_cast<Eigen::Index>(rng.Bounded(40));
    const Eigen::Index n = 1 + static_cast<Eigen::Index>(rng.Bounded(10));
    Eigen::MatrixXd a(m, n);
    Eigen::VectorXd b(m);
    for (Eigen::Index i = 0; i < m; ++i) {
      for (Eigen::Index j = 0; j < n; ++j) a(i, j) = rng.NextDouble() * 2 - 1;
      b(i) = rng.NextDouble() * 4 - 2;
    }
    Result<NnlsResult> r = NonNegativeLeastSquares(a, b);
    ASSERT_OK(r);
    Eigen::VectorXd w = a.transpose() * (b - a * r->x);
    const double tol = 1e-10 * (1 + a.norm() * b.norm());
    for (Eigen::Index j = 0; j < n; ++j) {
      EXPECT_GE(r->x(j), 0.0) << "seed " << seed;
      if (r->x(j) > 0) {
        EXPECT_NEAR(w(j), 0.0, tol) << "seed " << seed << " j " << j;
      } else {
        EXPECT_LE(w(j), tol) << "seed " << seed << " j " << j;
      }
    }
    EXPECT_LE(r->iterations, 3 * n);
  }
}

TEST(NnlsTest, BadInputIsInvalidArgument) {
  Eigen::MatrixXd a = Eigen::MatrixXd::Ones(3, 2);
  EXPECT_TRUE(NonNegativeLeastSquares(a, Eigen::VectorXd::Ones(2)).status().IsInvalidArgument());
  a(1, 1) = std::numeric_limits<double>::quiet_NaN();
  EXPECT_TRUE(NonNegativeLeastSquares(a, Eigen::VectorXd::Ones(3)).status().IsInvalidArgument());
}

TEST(BlendWeightsTest, MatchReferenceWithAndWithoutSignConstraint) {
  for (const json& c : Reference()["weights"]) {
    const bool nonnegative = c["nonnegative"].get<bool>();
    Result<LinearWeights> w = FitLinearWeights(Matrix(c["P"]), Vector(c["y"]), nonnegative);
    ASSERT_OK(w);
    Eigen::VectorXd want = Vector(c["weights"]);
    for (Eigen::Index j = 0; j < want.size(); ++j) {
      EXPECT_NEAR(w->weights(j), want(j), 1e-10) << c["name"] << " nonnegative " << nonnegative;
    }
    EXPECT_NEAR(w->intercept, c["intercept"].get<double>(), 1e-10) << c["name"];
  }
}

TEST(BlendWeightsTest, ExactCombinationIsRecovered) {
  Random rng(9);
  Eigen::MatrixXd p(30, 2);
  for (Eigen::Index i = 0; i < 30; ++i) {
    p(i, 0) = rng.NextDouble();
    p(i, 1) = rng.NextDouble();
  }
  Eigen::VectorXd y = (0.5 + 2.0 * p.col(0).array() + 0.25 * p.col(1).array()).matrix();
  for (bool nonnegative : {false, true}) {
    Result<LinearWeights> w = FitLinearWeights(p, y, nonnegative);
    ASSERT_OK(w);
    EXPECT_NEAR(w->weights(0), 2.0, 1e-12);
    EXPECT_NEAR(w->weights(1), 0.25, 1e-12);
    EXPECT_NEAR(w->intercept, 0.5, 1e-12);
  }
  // No members at all: the intercept is the mean.
  Result<LinearWeights> none = FitLinearWeights(Eigen::MatrixXd(30, 0), y, false);
  ASSERT_OK(none);
  EXPECT_EQ(none->weights.size(), 0);
  EXPECT_NEAR(none->intercept, y.mean(), 1e-15);
}

TEST(BlendWeightsTest, IdenticalMembersGetMinimumNormWeights) {
  Eigen::MatrixXd p(4, 2);
  p << 1, 1, 2, 2, 3, 3, 5, 5;
  Eigen::VectorXd y(4);
  y << 2, 4, 6, 10;  // y = 2 * member
  Result<LinearWeights> w = FitLinearWeights(p, y, false);
  ASSERT_OK(w);
  EXPECT_NEAR(w->weights(0), 1.0, 1e-12);  // the minimum-norm split of 2 over two equal columns
  EXPECT_NEAR(w->weights(1), 1.0, 1e-12);
  EXPECT_NEAR(w->intercept, 0.0, 1e-12);
}

TEST(BlendPredictionsTest, ClassificationIsClippedAndThresholded) {
  LinearWeights w;
  w.weights = Eigen::Vector2d(1.0, 1.0);
  w.intercept = -0.25;
  Eigen::MatrixXd s(4, 2);
  s << 0.0, 0.0,  // -0.25 -> 0
      0.3, 0.45,  // 0.5 -> class 1 (ties go to 1)
      0.6, 0.9,   // 1.25 -> 1
      0.2, 0.3;   // 0.25
  Predictions p = BlendPredictions(w, s, LearnTask::kClassification);
  EXPECT_DOUBLE_EQ(p.proba(0, 1), 0.0);
  EXPECT_DOUBLE_EQ(p.proba(1, 1), 0.5);
  EXPECT_DOUBLE_EQ(p.proba(2, 1), 1.0);
  EXPECT_DOUBLE_EQ(p.proba(3, 1), 0.25);
  EXPECT_DOUBLE_EQ(p.proba(3, 0), 0.75);
  EXPECT_EQ(p.value, Eigen::Vector4d(0, 1, 1, 0));
  Predictions r = BlendPredictions(w, s, LearnTask::kRegression);
  EXPECT_DOUBLE_EQ(r.value(2), 1.25);
  EXPECT_EQ(r.proba.size(), 0);
}

TEST(BlendContributionsTest, UsefulMemberContributesAndNoiseDoesNot) {
  Random rng(21);
  const Eigen::Index n = 120;
  Eigen::VectorXd y(n);
  Eigen::MatrixXd s(n, 3);
  std::vector<int> fold(static_cast<size_t>(n));
  for (Eigen::Index i = 0; i < n; ++i) {
    y(i) = rng.NextDouble() * 10;
    s(i, 0) = y(i) + (rng.NextDouble() - 0.5) * 0.1;  // nearly exact
    s(i, 1) = y(i) + (rng.NextDouble() - 0.5) * 6;    // rough
    s(i, 2) = rng.NextDouble() * 10;                  // unrelated
    fold[static_cast<size_t>(i)] = static_cast<int>(i % 4);
  }
  Result<BlendContributions> c =
      CrossValidateBlend(s, y, fold, 4, false, true, Metric::kMse, LearnTask::kRegression);
  ASSERT_OK(c);
  ASSERT_EQ(c->fold_loss_all.size(), 4u);
  EXPECT_LT(c->loss_all, 0.01);  // the noise of member 0 is uniform on +-0.05: variance 1/1200
  EXPECT_GT(c->contribution[0], 1.0);
  EXPECT_LT(std::abs(c->contribution[2]), 0.01);
  for (size_t m = 0; m < 3; ++m) {
    EXPECT_DOUBLE_EQ(c->contribution[m], c->loss_without[m] - c->loss_all);
  }
  // The loss of fold 0 by hand: fit on folds 1-3, score fold 0.
  std::vector<Eigen::Index> train, test;
  for (Eigen::Index i = 0; i < n; ++i)
    (fold[static_cast<size_t>(i)] == 0 ? test : train).push_back(i);
  Eigen::MatrixXd st(static_cast<Eigen::Index>(train.size()), 3);
  Eigen::VectorXd yt(static_cast<Eigen::Index>(train.size()));
  for (size_t i = 0; i < train.size(); ++i) {
    st.row(static_cast<Eigen::Index>(i)) = s.row(train[i]);
    yt(static_cast<Eigen::Index>(i)) = y(train[i]);
  }
  Result<LinearWeights> w = FitLinearWeights(st, yt, true);
  ASSERT_OK(w);
  double sse = 0;
  for (Eigen::Index i : test) sse += std::pow(w->intercept + s.row(i).dot(w->weights) - y(i), 2);
  EXPECT_NEAR(c->fold_loss_all[0], sse / static_cast<double>(test.size()), 1e-12);
}

TEST(BlendContributionsTest, RefusesMetricsThatAreNotLosses) {
  Eigen::MatrixXd s = Eigen::MatrixXd::Ones(4, 2);
  Eigen::VectorXd y = Eigen::VectorXd::Ones(4);
  EXPECT_TRUE(CrossValidateBlend(s, y, {0, 1, 0, 1}, 2, false, false, Metric::kAccuracy,
                                 LearnTask::kClassification)
                  .status()
                  .IsInvalidArgument());
}

Result<BlendSpec> ReadText(const std::string& text) {
  UNSEEN_ASSIGN_OR_RETURN(PipelineSpec spec, ParseSpecText(text, "b.toml"));
  return ReadBlendSpec(spec);
}

TEST(BlendSpecTest, ReadsMembersPartitionAndSign) {
  Result<BlendSpec> b = ReadText(
      "[learner]\nkind = \"blend\"\nmembers = [\"ridge-a\", \"knn-b\"]\nnonnegative = true\n"
      "partition = \"blendset\"\n[select]\nfolds = 3\n");
  ASSERT_OK(b);
  EXPECT_EQ(b->members, (std::vector<std::string>{"ridge-a", "knn-b"}));
  EXPECT_TRUE(b->nonnegative);
  EXPECT_EQ(b->partition, "blendset");
  EXPECT_EQ(b->members_at.line, 3);
  Result<PipelineSpec> spec = ParseSpecText(
      "[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\npartition = \"p\"\n", "b.toml");
  ASSERT_OK(spec);
  EXPECT_OK(ValidateSpec(*spec, {"x"}));
  // The members list is one value, not a grid axis.
  std::vector<Candidate> one = ExpandGrid(*spec);
  ASSERT_EQ(one.size(), 1u);
  EXPECT_EQ(one[0].learner.params["members"], json({"a", "b"}));
  EXPECT_TRUE(one[0].settings.empty());
  EXPECT_FALSE(ReadText("[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\n"
                        "partition = \"p\"\n")
                   ->nonnegative);
}

TEST(BlendSpecTest, BadTablesNameTheLine) {
  struct Case {
    std::string text, where, says;
  };
  const std::string tail = "partition = \"p\"\n";
  for (const Case& c : {
           Case{"[[transform]]\nkind = \"standardize\"\n[learner]\nkind = \"blend\"\n"
                "members = [\"a\", \"b\"]\n" +
                    tail,
                "b.toml:1:1: ", "takes no [[transform]]"},
           Case{"[learner]\nkind = \"blend\"\n" + tail, "b.toml:1:1: ", "has no 'members'"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\"]\n" + tail,
                "b.toml:3:1: ", "at least two"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\", \"a\"]\n" + tail,
                "b.toml:3:1: ", "named twice"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [[\"a\", \"b\"], [\"a\", \"c\"]]\n" + tail,
                "b.toml:3:1: ", "no grid over members"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\", 3]\n" + tail,
                "b.toml:3:1: ", "model name"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\n",
                "b.toml:1:1: ", "has no 'partition'"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\npartition = [\"p\", "
                "\"q\"]\n",
                "b.toml:4:1: ", "has no grid"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\nnonnegative = \"yes\"\n" +
                    tail,
                "b.toml:4:1: ", "true or false"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\nl2 = 1.0\n" + tail,
                "b.toml:4:1: ", "unknown parameter 'l2'"},
       }) {
    Result<BlendSpec> b = ReadText(c.text);
    ASSERT_FALSE(b.ok()) << c.text;
    EXPECT_TRUE(b.status().IsInvalidArgument());
    EXPECT_EQ(b.status().message().rfind(c.where, 0), 0u) << b.status().message();
    EXPECT_NE(b.status().message().find(c.says), std::string::npos) << b.status().message();
  }
}

TEST(BlendSpecTest, UnknownLearnerKindListsBlend) {
  Result<PipelineSpec> spec = ParseSpecText("[learner]\nkind = \"mixture\"\n", "b.toml");
  ASSERT_OK(spec);
  Status s = ValidateSpec(*spec, {});
  EXPECT_NE(s.message().find("blend"), std::string::npos) << s.message();
}

// A frozen linear model of y on x fitted on `rows` (x, y) pairs, as `fit` stores it.
json FrozenLinear(const std::vector<std::pair<double, double>>& rows) {
  Frame f;
  f.columns.push_back(FrameColumn{"x", true, {}, {}});
  Eigen::VectorXd y(static_cast<Eigen::Index>(rows.size()));
  for (size_t i = 0; i < rows.size(); ++i) {
    f.columns[0].num.push_back(rows[i].first);
    y(static_cast<Eigen::Index>(i)) = rows[i].second;
  }
  Candidate c;
  c.learner.kind = "linear";
  Result<FittedPipeline> p = FitPipeline(c, f, y, LearnTask::kRegression, 0);
  EXPECT_TRUE(p.ok()) << p.status().ToString();
  return json{{"pipeline", p->ToJson()}};
}

json BlendOf(const std::vector<std::string>& digests, const std::vector<double>& weights,
             double intercept) {
  json members = json::array();
  for (size_t i = 0; i < digests.size(); ++i) {
    members.push_back(
        {{"name", "m" + std::to_string(i)}, {"model_digest", digests[i]}, {"weight", weights[i]}});
  }
  return json{{"blend", {{"task", "regression"}, {"intercept", intercept}, {"members", members}}}};
}

TEST(FrozenModelTest, BlendAppliesItsMembersThroughTheSource) {
  const std::string d1(64, 'a'), d2(64, 'b');
  std::map<std::string, json> store = {{d1, FrozenLinear({{0, 1}, {1, 3}, {2, 5}})},     // 1 + 2x
                                       {d2, FrozenLinear({{0, 0}, {1, -1}, {2, -2}})}};  // -x
  FrozenModel::MemberSource source = [&](const Digest256& d) -> Result<json> {
    auto it = store.find(ToHex(d));
    if (it == store.end()) return Status::NotFound("no blob " + ToHex(d));
    return it->second;
  };
  Result<FrozenModel> m = FrozenModel::FromJson(BlendOf({d1, d2}, {0.5, 2.0}, 0.25), source);
  ASSERT_OK(m);
  EXPECT_TRUE(m->is_blend());
  EXPECT_EQ(m->task(), LearnTask::kRegression);
  Frame x;
  x.columns.push_back(FrameColumn{"x", true, {0.0, 1.0, 4.0}, {}});
  x.columns.push_back(FrameColumn{"ignored", true, {9.0, 9.0, 9.0}, {}});
  Result<Predictions> p = m->Predict(x);
  ASSERT_OK(p);
  for (Eigen::Index i = 0; i < 3; ++i) {
    double xi = x.columns[0].num[static_cast<size_t>(i)];
    EXPECT_NEAR(p->value(i), 0.25 + 0.5 * (1 + 2 * xi) + 2.0 * (-xi), 1e-12) << i;
  }
  // A missing column, a missing member and a blend that contains itself.
  Frame empty;
  empty.columns.push_back(FrameColumn{"z", true, {1.0}, {}});
  EXPECT_TRUE(m->Predict(empty).status().IsInvalidArgument());
  EXPECT_TRUE(FrozenModel::FromJson(BlendOf({d1, std::string(64, 'c')}, {1, 1}, 0), source)
                  .status()
                  .IsNotFound());
  store[d2] = BlendOf({d1, d2}, {1, 1}, 0);
  Status loop = FrozenModel::FromJson(BlendOf({d1, d2}, {1, 1}, 0), source).status();
  EXPECT_TRUE(loop.IsCorruption()) << loop.ToString();
  EXPECT_NE(loop.message().find("nested more than 16"), std::string::npos) << loop.message();
}

TEST(FrozenModelTest, MalformedModelsAreCorruption) {
  FrozenModel::MemberSource none = [](const Digest256&) -> Result<json> {
    return Status::NotFound("none");
  };
  for (const json& bad : {json::object(), json{{"pipeline", 3}}, json{{"blend", {{"task", 1}}}},
                          json{{"blend", {{"task", "regression"}}}}}) {
    EXPECT_TRUE(FrozenModel::FromJson(bad, none).status().IsCorruption()) << bad.dump();
  }
  EXPECT_TRUE(FrozenModel::TaskOf(json::array()).status().IsCorruption());
}

}  // namespace
}  // namespace unseen
