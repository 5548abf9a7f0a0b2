// The learners' contracts: parameters, FittedParams round trips, determinism,
// and the behaviour each learner documents.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <cmath>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/learner.h"
#include "harness/sampling/random.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using nlohmann::json;

struct Data {
  Eigen::MatrixXd X;
  Eigen::VectorXd y;
  LearnTask task;
  int classes;
  std::vector<std::string> names;
};

// n rows of 3 features from unseen::Random; the target is a noisy linear
// function (regression) or its bins (classification with `classes` classes).
Data Synthetic(Eigen::Index n, int classes, uint64_t seed) {
  Random random(seed);
  Data d{Eigen::MatrixXd(n, 3),
         Eigen::VectorXd(n),
         classes ? LearnTask::kClassification : LearnTask::kRegression,
         classes,
         {"alpha", "beta", "gamma"}};
  for (Eigen::Index i = 0; i < n; ++i) {
    for (Eigen::Index j = 0; j < 3; ++j) d.X(i, j) = 4 * random.NextDouble() - 2;
    const double s =
        1.5 * d.X(i, 0) - d.X(i, 1) + 0.5 * d.X(i, 2) + 0.3 * (random.NextDouble() - 0.5);
    if (classes == 0) {
      d.y[i] = s + 2;
    } else {
      // Bins of s with equal-ish shares.
      const double u = 1 / (1 + std::exp(-s));
      d.y[i] = std::min<double>(classes - 1, std::floor(u * classes));
    }
  }
  return d;
}

std::unique_ptr<Learner> Make(const std::string& kind, const json& params = json::object()) {
  Result<std::unique_ptr<Learner>> made = MakeLearner(kind, params);
  EXPECT_TRUE(made.ok()) << made.status().ToString();
  return made.ok() ? std::move(made).value() : nullptr;
}

std::unique_ptr<Learner> Fitted(const std::string& kind, const json& params, const Data& d) {
  auto learner = Make(kind, params);
  if (learner == nullptr) return nullptr;
  Status s = learner->Fit(d.X, d.y, d.task, d.classes, d.names);
  EXPECT_TRUE(s.ok()) << kind << ": " << s.ToString();
  return learner;
}

double Accuracy(const Eigen::VectorXd& pred, const Eigen::VectorXd& y) {
  return (pred.array() == y.array()).cast<double>().mean();
}

// ---------------------------------------------------------------------------
// Kinds and parameters

TEST(LearnerKindsTest, ListsEveryKind) {
  EXPECT_EQ(LearnerKinds(), (std::vector<std::string>{"linear", "ridge", "logistic", "pocket",
                                                      "knn", "stump", "bagging", "adaboost"}));
  for (const std::string& kind : LearnerKinds()) {
    Result<std::unique_ptr<Learner>> made = MakeLearner(kind, json::object());
    ASSERT_OK(made);
    EXPECT_EQ((*made)->kind(), kind);
  }
}

TEST(LearnerParamsTest, DefaultsAreFilledIn) {
  const json params = Make("logistic")->FittedParams()["params"];
  EXPECT_EQ(params, (json{{"l2", 1.0}, {"tol", 1e-8}, {"max_iter", 1000}}));
  EXPECT_EQ(Make("knn")->FittedParams()["params"], (json{{"k", 5}, {"weights", "uniform"}}));
  EXPECT_EQ(Make("bagging")->FittedParams()["params"],
            (json{{"base", {{"kind", "stump"}}}, {"estimators", 10}, {"seed", 0}}));
  EXPECT_EQ(Make("adaboost")->FittedParams()["params"]["estimators"], 50);
  EXPECT_EQ(Make("linear")->FittedParams()["params"], (json{{"intercept", true}}));
  EXPECT_EQ(Make("ridge")->FittedParams()["params"], (json{{"l2", 1.0}}));
  EXPECT_EQ(Make("pocket")->FittedParams()["params"], (json{{"epochs", 100}, {"seed", 0}}));
}

// Expects InvalidArgument whose message names every string in `words`.
void ExpectBad(const std::string& kind, const json& params, std::vector<std::string> words) {
  Result<std::unique_ptr<Learner>> made = MakeLearner(kind, params);
  ASSERT_FALSE(made.ok()) << kind << " " << params.dump();
  EXPECT_TRUE(made.status().IsInvalidArgument()) << made.status().ToString();
  words.push_back(kind);
  for (const std::string& w : words) {
    EXPECT_NE(made.status().message().find(w), std::string::npos)
        << "'" << w << "' not in: " << made.status().message();
  }
}

TEST(LearnerParamsTest, UnknownParameterIsInvalidArgumentNamingIt) {
  ExpectBad("ridge", {{"alpha", 1.0}}, {"'alpha'", "l2"});
  ExpectBad("stump", {{"depth", 2}}, {"'depth'", "no parameters"});
  ExpectBad("linear", {{"fit_intercept", true}}, {"'fit_intercept'", "intercept"});
}

TEST(LearnerParamsTest, WrongTypeIsInvalidArgumentNamingTheParameter) {
  ExpectBad("linear", {{"intercept", 1}}, {"'intercept'", "true or false"});
  ExpectBad("ridge", {{"l2", "1.0"}}, {"'l2'", "number"});
  ExpectBad("knn", {{"k", 2.5}}, {"'k'", "integer"});
  ExpectBad("knn", {{"k", true}}, {"'k'"});
  ExpectBad("knn", {{"weights", "inverse"}}, {"'weights'", "\"distance\""});
  ExpectBad("bagging", {{"base", "stump"}}, {"'base'", "kind"});
  ExpectBad("pocket", {{"seed", -1}}, {"'seed'"});
  ExpectBad("logistic", json::array({1, 2}), {"JSON object"});
}

TEST(LearnerParamsTest, OutOfRangeIsInvalidArgumentNamingTheParameter) {
  ExpectBad("ridge", {{"l2", -0.5}}, {"'l2'", ">= 0"});
  ExpectBad("logistic", {{"l2", -1}}, {"'l2'"});
  ExpectBad("logistic", {{"max_iter", 0}}, {"'max_iter'"});
  ExpectBad("knn", {{"k", 0}}, {"'k'", "[1,"});
  ExpectBad("bagging", {{"estimators", 0}}, {"'estimators'"});
  ExpectBad("pocket", {{"epochs", -3}}, {"'epochs'"});
}

TEST(LearnerParamsTest, BadNestedBaseNamesParentAndChild) {
  ExpectBad("bagging", {{"base", {{"kind", "knn"}, {"k", 0}}}}, {"'base'", "knn", "'k'"});
  ExpectBad("adaboost", {{"base", {{"kind", "forest"}}}}, {"'base'", "forest"});
}

TEST(LearnerParamsTest, IntegralFloatIsAcceptedForIntegers) {
  auto knn = Make("knn", {{"k", 3.0}});
  ASSERT_NE(knn, nullptr);
  EXPECT_EQ(knn->FittedParams()["params"]["k"], 3);
}

TEST(MakeLearnerTest, UnknownKindListsTheKinds) {
  Result<std::unique_ptr<Learner>> made = MakeLearner("svm", json::object());
  ASSERT_FALSE(made.ok());
  EXPECT_TRUE(made.status().IsInvalidArgument());
  EXPECT_NE(made.status().message().find("'svm'"), std::string::npos);
  EXPECT_NE(made.status().message().find("adaboost"), std::string::npos);
}

// ---------------------------------------------------------------------------
// Fit and predict contracts

TEST(LearnerContractTest, PredictBeforeFitIsFailedPrecondition) {
  for (const std::string& kind : LearnerKinds()) {
    auto learner = Make(kind);
    Result<Eigen::VectorXd> pred = learner->Predict(Eigen::MatrixXd::Zero(2, 3));
    EXPECT_TRUE(pred.status().IsFailedPrecondition()) << kind;
    EXPECT_FALSE(learner->FittedParams()["fitted"].get<bool>());
  }
}

TEST(LearnerContractTest, UnsupportedTaskIsInvalidArgument) {
  const Data cls = Synthetic(40, 2, 1);
  const Data reg = Synthetic(40, 0, 1);
  for (const char* kind : {"linear", "ridge"}) {
    Status s = Make(kind)->Fit(cls.X, cls.y, cls.task, 2, cls.names);
    EXPECT_TRUE(s.IsInvalidArgument()) << kind;
    EXPECT_NE(s.message().find("classification"), std::string::npos);
  }
  for (const char* kind : {"logistic", "pocket", "adaboost"}) {
    EXPECT_TRUE(Make(kind)->Fit(reg.X, reg.y, reg.task, 0, reg.names).IsInvalidArgument()) << kind;
  }
  const Data three = Synthetic(40, 3, 1);
  Status s = Make("pocket")->Fit(three.X, three.y, three.task, 3, three.names);
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_NE(s.message().find("binary"), std::string::npos);
}

TEST(LearnerContractTest, BadInputShapesAndValuesAreInvalidArgument) {
  const Data d = Synthetic(30, 3, 2);
  auto knn = Make("knn");
  EXPECT_TRUE(knn->Fit(d.X, d.y.head(29), d.task, 3, d.names).IsInvalidArgument());
  EXPECT_TRUE(knn->Fit(d.X, d.y, d.task, 3, {"a", "b"}).IsInvalidArgument());
  EXPECT_TRUE(knn->Fit(d.X, d.y, d.task, 3, {"a", "b", "a"}).IsInvalidArgument());
  EXPECT_TRUE(knn->Fit(d.X, d.y, d.task, 2, d.names).IsInvalidArgument());  // class 2 >= 2
  Eigen::MatrixXd nan = d.X;
  nan(3, 1) = std::nan("");
  Status s = knn->Fit(nan, d.y, d.task, 3, d.names);
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_NE(s.message().find("'beta'"), std::string::npos);
  ASSERT_OK(knn->Fit(d.X, d.y, d.task, 3, d.names));
  EXPECT_TRUE(knn->Predict(d.X.leftCols(2)).status().IsInvalidArgument());
  EXPECT_TRUE(knn->Predict(nan).status().IsInvalidArgument());
}

TEST(LearnerContractTest, ProbabilitiesAreFailedPreconditionForPocketAndRegression) {
  const Data cls = Synthetic(50, 2, 3);
  auto pocket = Fitted("pocket", json::object(), cls);
  EXPECT_TRUE(pocket->PredictProba(cls.X).status().IsFailedPrecondition());
  const Data reg = Synthetic(50, 0, 3);
  auto knn = Fitted("knn", json::object(), reg);
  EXPECT_TRUE(knn->PredictProba(reg.X).status().IsFailedPrecondition());
}

TEST(LearnerContractTest, ProbabilityRowsSumToOne) {
  const Data d = Synthetic(120, 3, 4);
  for (const char* kind : {"logistic", "knn", "stump", "bagging", "adaboost"}) {
    auto learner = Fitted(kind, json::object(), d);
    Result<Eigen::MatrixXd> proba = learner->PredictProba(d.X);
    ASSERT_OK(proba);
    ASSERT_EQ(proba->cols(), 3) << kind;
    EXPECT_LT((proba->rowwise().sum().array() - 1).abs().maxCoeff(), 1e-12) << kind;
    EXPECT_GE(proba->minCoeff(), 0.0) << kind;
  }
}

// ---------------------------------------------------------------------------
// Round trip and determinism

struct Case {
  std::string kind;
  json params;
  int classes;        // 0: regression
  bool proba = true;  // PredictProba gives probabilities (classification only)
};

std::vector<Case> AllCases() {
  return {
      {"linear", json::object(), 0},
      {"linear", {{"intercept", false}}, 0},
      {"ridge", {{"l2", 3.0}}, 0},
      {"logistic", json::object(), 2},
      {"logistic", json::object(), 3},
      {"pocket", {{"epochs", 20}}, 2, false},
      {"knn", {{"k", 3}}, 3},
      {"knn", {{"k", 4}, {"weights", "distance"}}, 0},
      {"stump", json::object(), 3},
      {"stump", json::object(), 0},
      {"bagging", {{"estimators", 5}}, 3},
      {"bagging", {{"estimators", 4}, {"base", {{"kind", "linear"}}}}, 0},
      {"bagging", {{"estimators", 3}, {"base", {{"kind", "pocket"}, {"epochs", 5}}}}, 2},
      {"adaboost", {{"estimators", 10}}, 3},
      {"adaboost", {{"estimators", 4}, {"base", {{"kind", "logistic"}}}}, 3},
  };
}

TEST(LearnerRoundTripTest, LoadFittedGivesIdenticalPredictionsForEveryLearner) {
  for (const Case& c : AllCases()) {
    SCOPED_TRACE(c.kind + " " + c.params.dump());
    const Data d = Synthetic(80, c.classes, 5);
    auto learner = Fitted(c.kind, c.params, d);
    const json fitted = learner->FittedParams();
    // Through text, as the ledger stores it.
    const json parsed = json::parse(fitted.dump());
    auto loaded = Make(c.kind);  // default parameters: LoadFitted restores them
    ASSERT_OK(loaded->LoadFitted(parsed));
    EXPECT_EQ(loaded->FittedParams().dump(), fitted.dump());
    const Data fresh = Synthetic(40, c.classes, 6);
    Result<Eigen::VectorXd> a = learner->Predict(fresh.X);
    Result<Eigen::VectorXd> b = loaded->Predict(fresh.X);
    ASSERT_OK(a);
    ASSERT_OK(b);
    EXPECT_TRUE(*a == *b);
    if (c.classes > 0 && c.proba) {
      Result<Eigen::MatrixXd> pa = learner->PredictProba(fresh.X);
      Result<Eigen::MatrixXd> pb = loaded->PredictProba(fresh.X);
      ASSERT_OK(pa);
      ASSERT_OK(pb);
      EXPECT_TRUE(*pa == *pb);
    }
  }
}

TEST(LearnerRoundTripTest, CoefficientsAreKeyedByFeatureName) {
  const Data d = Synthetic(60, 0, 7);
  const json fitted = Fitted("linear", json::object(), d)->FittedParams();
  EXPECT_EQ(fitted["kind"], "linear");
  EXPECT_EQ(fitted["task"], "regression");
  EXPECT_EQ(fitted["features"], (json{"alpha", "beta", "gamma"}));
  ASSERT_TRUE(fitted["coefficients"].is_object());
  // The generating function is 1.5 alpha - beta + 0.5 gamma + 2 (+ noise).
  EXPECT_NEAR(fitted["coefficients"]["alpha"].get<double>(), 1.5, 0.05);
  EXPECT_NEAR(fitted["coefficients"]["beta"].get<double>(), -1.0, 0.05);
  EXPECT_NEAR(fitted["coefficients"]["gamma"].get<double>(), 0.5, 0.05);
  EXPECT_NEAR(fitted["intercept"].get<double>(), 2.0, 0.05);
}

TEST(LearnerRoundTripTest, MalformedFittedParamsAreInvalidArgument) {
  const Data d = Synthetic(60, 0, 7);
  json fitted = Fitted("linear", json::object(), d)->FittedParams();
  auto loaded = Make("linear");
  json missing = fitted;
  missing["coefficients"].erase("beta");
  Status s = loaded->LoadFitted(missing);
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_NE(s.message().find("coefficients"), std::string::npos);
  EXPECT_TRUE(loaded->Predict(d.X).status().IsFailedPrecondition());
  json other = fitted;
  other["kind"] = "ridge";
  EXPECT_TRUE(loaded->LoadFitted(other).IsInvalidArgument());
  EXPECT_TRUE(loaded->LoadFitted(json("text")).IsInvalidArgument());
  json bad_params = fitted;
  bad_params["params"]["intercept"] = "yes";
  EXPECT_TRUE(loaded->LoadFitted(bad_params).IsInvalidArgument());
  EXPECT_OK(loaded->LoadFitted(fitted));
}

TEST(LearnerDeterminismTest, SameSeedGivesIdenticalFittedParams) {
  const Data cls = Synthetic(150, 3, 8);
  const Data bin = Synthetic(150, 2, 8);
  const std::vector<std::pair<std::string, json>> cases = {
      {"bagging", {{"seed", 11}}},
      {"bagging", {{"seed", 11}, {"base", {{"kind", "knn"}, {"k", 3}}}}},
      {"adaboost", {{"seed", 11}}},
      {"adaboost", {{"seed", 11}, {"estimators", 5}, {"base", {{"kind", "knn"}}}}},
      {"pocket", {{"seed", 11}}},
  };
  for (const auto& [kind, params] : cases) {
    const Data& d = kind == "pocket" ? bin : cls;
    const std::string a = Fitted(kind, params, d)->FittedParams().dump();
    const std::string b = Fitted(kind, params, d)->FittedParams().dump();
    EXPECT_EQ(a, b) << kind << " " << params.dump();
  }
  // A different seed draws different bootstrap samples.
  EXPECT_NE(Fitted("bagging", {{"seed", 1}}, cls)->FittedParams().dump(),
            Fitted("bagging", {{"seed", 2}}, cls)->FittedParams().dump());
}

// ---------------------------------------------------------------------------
// Learner behaviour

TEST(LinearTest, DuplicateColumnGetsTheMinimumNormSplit) {
  Data d = Synthetic(50, 0, 9);
  d.X.col(2) = d.X.col(1);  // rank 2 of 3
  d.y = 1.5 * d.X.col(0) - 0.5 * d.X.col(1);
  d.y.array() += 2;
  const json fitted = Fitted("linear", json::object(), d)->FittedParams();
  EXPECT_EQ(fitted["training"]["rank"], 2);
  const double beta = fitted["coefficients"]["beta"].get<double>();
  const double gamma = fitted["coefficients"]["gamma"].get<double>();
  // beta + gamma is the combined slope -0.5; minimum norm splits it evenly.
  EXPECT_NEAR(beta + gamma, -0.5, 1e-12);
  EXPECT_NEAR(beta, gamma, 1e-9);
}

TEST(LinearTest, ConstantColumnGetsZeroCoefficient) {
  Data d = Synthetic(50, 0, 10);
  d.X.col(0).setConstant(3.0);
  const json fitted = Fitted("linear", json::object(), d)->FittedParams();
  EXPECT_EQ(fitted["coefficients"]["alpha"].get<double>(), 0.0);
  EXPECT_EQ(fitted["training"]["rank"], 2);
}

TEST(LinearTest, WithoutInterceptFitsThroughTheOrigin) {
  // y = 2 x exactly: the slope is 2 and the intercept 0.
  Eigen::MatrixXd X(4, 1);
  X << 1, 2, 3, 5;
  const Eigen::VectorXd y = 2 * X.col(0);
  auto linear = Make("linear", {{"intercept", false}});
  ASSERT_OK(linear->Fit(X, y, LearnTask::kRegression, 0, {"x"}));
  const json fitted = linear->FittedParams();
  EXPECT_NEAR(fitted["coefficients"]["x"].get<double>(), 2.0, 1e-14);
  EXPECT_EQ(fitted["intercept"].get<double>(), 0.0);
}

TEST(RidgeTest, ZeroPenaltyEqualsLinearAndPenaltyShrinks) {
  const Data d = Synthetic(70, 0, 11);
  const json ols = Fitted("linear", json::object(), d)->FittedParams();
  const json r0 = Fitted("ridge", {{"l2", 0.0}}, d)->FittedParams();
  const json r100 = Fitted("ridge", {{"l2", 100.0}}, d)->FittedParams();
  for (const char* f : {"alpha", "beta", "gamma"}) {
    EXPECT_NEAR(r0["coefficients"][f].get<double>(), ols["coefficients"][f].get<double>(), 1e-12);
    EXPECT_LT(std::abs(r100["coefficients"][f].get<double>()),
              std::abs(ols["coefficients"][f].get<double>()));
  }
}

TEST(LogisticTest, NotConvergedIsReportedNotAnError) {
  const Data d = Synthetic(100, 3, 12);
  const json fitted = Fitted("logistic", {{"max_iter", 1}}, d)->FittedParams();
  EXPECT_FALSE(fitted["converged"].get<bool>());
  EXPECT_EQ(fitted["iterations"], 1);
  const json full = Fitted("logistic", json::object(), d)->FittedParams();
  EXPECT_TRUE(full["converged"].get<bool>());
  EXPECT_LT(full["iterations"].get<int>(), 30);
}

TEST(LogisticTest, MultinomialInterceptsSumToZero) {
  const Data d = Synthetic(100, 4, 13);
  const json fitted = Fitted("logistic", {{"l2", 0.5}}, d)->FittedParams();
  ASSERT_EQ(fitted["intercept"].size(), 4u);
  double sum = 0;
  for (const json& b : fitted["intercept"]) sum += b.get<double>();
  EXPECT_NEAR(sum, 0.0, 1e-12);
}

TEST(PocketTest, SeparableDataEndsWithNoTrainingError) {
  Data d = Synthetic(200, 2, 14);
  for (Eigen::Index i = 0; i < d.X.rows(); ++i) {
    d.y[i] = d.X(i, 0) + 0.5 * d.X(i, 1) > 0.3 ? 1 : 0;  // noise-free, separable
  }
  auto pocket = Fitted("pocket", {{"epochs", 1000}}, d);
  EXPECT_EQ(pocket->FittedParams()["training_errors"], 0);
  EXPECT_EQ(Accuracy(*pocket->Predict(d.X), d.y), 1.0);
}

TEST(PocketTest, NoisyDataKeepsTheBestWeightsSeen) {
  const Data d = Synthetic(200, 2, 15);
  auto pocket = Fitted("pocket", {{"epochs", 50}}, d);
  const json fitted = pocket->FittedParams();
  const int64_t errors = fitted["training_errors"].get<int64_t>();
  // The reported count is the pocket's own, and it beats the all-zero start.
  EXPECT_EQ(errors, std::lround((1 - Accuracy(*pocket->Predict(d.X), d.y)) * 200));
  EXPECT_LT(errors, 40);
}

TEST(KnnTest, DistanceTiesGoToTheEarlierTrainingRow) {
  // Query 0 has rows 1 and 2 at distance 1; with k = 1 row 1 (class 1) wins
  // over row 2 (class 0), although class 0 is smaller.
  Eigen::MatrixXd X(3, 1);
  X << 5, 1, -1;
  Eigen::VectorXd y(3);
  y << 0, 1, 0;
  auto knn = Make("knn", {{"k", 1}});
  ASSERT_OK(knn->Fit(X, y, LearnTask::kClassification, 2, {"x"}));
  Eigen::MatrixXd q(1, 1);
  q << 0;
  EXPECT_EQ((*knn->Predict(q))[0], 1.0);
}

TEST(KnnTest, VoteTiesGoToTheSmallerClass) {
  Eigen::MatrixXd X(4, 1);
  X << 0, 1, 2, 3;
  Eigen::VectorXd y(4);
  y << 2, 1, 2, 1;
  auto knn = Make("knn", {{"k", 4}});
  ASSERT_OK(knn->Fit(X, y, LearnTask::kClassification, 3, {"x"}));
  Eigen::MatrixXd q(1, 1);
  q << 1.5;
  EXPECT_EQ((*knn->Predict(q))[0], 1.0);
  const Eigen::MatrixXd proba = *knn->PredictProba(q);
  EXPECT_EQ(proba(0, 0), 0.0);
  EXPECT_EQ(proba(0, 1), 0.5);
  EXPECT_EQ(proba(0, 2), 0.5);
}

TEST(KnnTest, KLargerThanTheTrainingRowsIsInvalidArgument) {
  const Data d = Synthetic(4, 0, 16);
  Status s = Make("knn", {{"k", 5}})->Fit(d.X, d.y, d.task, 0, d.names);
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_NE(s.message().find("'k'"), std::string::npos);
}

TEST(StumpTest, FindsTheSeparatingThreshold) {
  Eigen::MatrixXd X(6, 2);
  X << 0, 9, 1, 3, 2, 7, 3, 1, 4, 8, 5, 2;
  Eigen::VectorXd y(6);
  y << 0, 0, 0, 1, 1, 1;
  auto stump = Make("stump");
  ASSERT_OK(stump->Fit(X, y, LearnTask::kClassification, 2, {"u", "v"}));
  const json fitted = stump->FittedParams();
  EXPECT_EQ(fitted["feature"], "u");
  EXPECT_EQ(fitted["threshold"], 2.5);
  EXPECT_EQ(fitted["left"]["class"], 0);
  EXPECT_EQ(fitted["right"]["class"], 1);
  EXPECT_EQ(Accuracy(*stump->Predict(X), y), 1.0);
}

TEST(StumpTest, RegressionLeavesAreMeans) {
  Eigen::MatrixXd X(4, 1);
  X << 1, 2, 10, 11;
  Eigen::VectorXd y(4);
  y << 1, 3, 10, 14;
  auto stump = Make("stump");
  ASSERT_OK(stump->Fit(X, y, LearnTask::kRegression, 0, {"x"}));
  const json fitted = stump->FittedParams();
  EXPECT_EQ(fitted["threshold"], 6.0);
  EXPECT_EQ(fitted["left"]["value"], 2.0);
  EXPECT_EQ(fitted["right"]["value"], 12.0);
}

TEST(StumpTest, ConstantFeaturesGiveTheConstantModel) {
  Eigen::MatrixXd X = Eigen::MatrixXd::Ones(5, 2);
  Eigen::VectorXd y(5);
  y << 1, 1, 0, 1, 0;
  auto stump = Make("stump");
  ASSERT_OK(stump->Fit(X, y, LearnTask::kClassification, 2, {"u", "v"}));
  EXPECT_TRUE(stump->FittedParams()["feature"].is_null());
  EXPECT_TRUE(*stump->Predict(X) == Eigen::VectorXd::Ones(5));
}

TEST(BaggingTest, RegressionIsTheMeanOfItsEstimators) {
  const Data d = Synthetic(60, 0, 17);
  auto bagging = Fitted("bagging", {{"estimators", 3}, {"base", {{"kind", "linear"}}}}, d);
  const json fitted = bagging->FittedParams();
  ASSERT_EQ(fitted["estimators"].size(), 3u);
  Eigen::VectorXd mean = Eigen::VectorXd::Zero(d.X.rows());
  for (const json& member : fitted["estimators"]) {
    auto m = Make("linear");
    ASSERT_OK(m->LoadFitted(member));
    mean += *m->Predict(d.X);
  }
  EXPECT_LT((mean / 3 - *bagging->Predict(d.X)).cwiseAbs().maxCoeff(), 1e-12);
}

TEST(AdaBoostTest, BoostingStumpsBeatsOneStump) {
  // Two classes separated by a diagonal line: one stump cannot follow it.
  Data d = Synthetic(300, 2, 18);
  for (Eigen::Index i = 0; i < d.X.rows(); ++i) d.y[i] = d.X(i, 0) + d.X(i, 1) > 0 ? 1 : 0;
  const double one = Accuracy(*Fitted("stump", json::object(), d)->Predict(d.X), d.y);
  auto boosted = Fitted("adaboost", {{"estimators", 50}}, d);
  const double many = Accuracy(*boosted->Predict(d.X), d.y);
  EXPECT_GT(many, one + 0.1);
  EXPECT_GT(many, 0.95);
  const json fitted = boosted->FittedParams();
  EXPECT_EQ(fitted["estimators"].size(), 50u);
  EXPECT_GT(fitted["estimators"][0]["alpha"].get<double>(), 0.0);
}

TEST(AdaBoostTest, PerfectFirstMemberStopsTheBoosting) {
  Eigen::MatrixXd X(4, 1);
  X << 0, 1, 2, 3;
  Eigen::VectorXd y(4);
  y << 0, 0, 1, 1;
  auto boosted = Make("adaboost");
  ASSERT_OK(boosted->Fit(X, y, LearnTask::kClassification, 2, {"x"}));
  const json fitted = boosted->FittedParams();
  ASSERT_EQ(fitted["estimators"].size(), 1u);
  EXPECT_EQ(fitted["estimators"][0]["error"], 0.0);
  EXPECT_TRUE(*boosted->Predict(X) == y);
}

}  // namespace
}  // namespace unseen
