// The learners against published reference values: NIST StRD certified
// linear regressions, and scikit-learn 1.2.1 outputs written by
// tests/testdata/sklearn/make_reference.py.
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "harness/pipeline/learner.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using nlohmann::json;

// A numeric CSV with a header: every column but `target` is a feature.
struct Table {
  std::vector<std::string> names;  // feature names
  Eigen::MatrixXd X;
  Eigen::VectorXd y;
};

Table ReadTable(const std::string& relative, const std::string& target) {
  std::istringstream in(testing::ReadFile(testing::TestDataDir() + "/" + relative));
  std::string line;
  std::getline(in, line);
  std::vector<std::string> header;
  std::stringstream hs(line);
  for (std::string f; std::getline(hs, f, ',');) header.push_back(f);
  std::vector<std::vector<double>> rows;
  while (std::getline(in, line)) {
    if (line.empty()) continue;
    std::vector<double> row;
    std::stringstream ls(line);
    for (std::string f; std::getline(ls, f, ',');) row.push_back(std::strtod(f.c_str(), nullptr));
    rows.push_back(row);
  }
  Table t;
  const auto target_col = std::find(header.begin(), header.end(), target) - header.begin();
  t.X.resize(static_cast<Eigen::Index>(rows.size()), static_cast<Eigen::Index>(header.size()) - 1);
  t.y.resize(static_cast<Eigen::Index>(rows.size()));
  for (size_t c = 0, j = 0; c < header.size(); ++c) {
    if (static_cast<long>(c) == target_col) continue;
    t.names.push_back(header[c]);
    for (size_t r = 0; r < rows.size(); ++r) t.X(static_cast<Eigen::Index>(r), j) = rows[r][c];
    ++j;
  }
  for (size_t r = 0; r < rows.size(); ++r) t.y[static_cast<Eigen::Index>(r)] = rows[r][target_col];
  return t;
}

json ReadJson(const std::string& relative) {
  return json::parse(testing::ReadFile(testing::TestDataDir() + "/" + relative));
}

// Log relative error: the number of agreeing significant digits (15 when equal).
double Lre(double computed, double certified) {
  if (computed == certified) return 15.0;
  return std::min(15.0, -std::log10(std::abs(computed - certified) / std::abs(certified)));
}

std::unique_ptr<Learner> Make(const std::string& kind, const json& params) {
  Result<std::unique_ptr<Learner>> made = MakeLearner(kind, params);
  EXPECT_TRUE(made.ok()) << made.status().ToString();
  return made.ok() ? std::move(made).value() : nullptr;
}

// |a - b| <= tol * max(1, |b|).
::testing::AssertionResult Near(double a, double b, double tol) {
  if (std::abs(a - b) <= tol * std::max(1.0, std::abs(b))) return ::testing::AssertionSuccess();
  return ::testing::AssertionFailure()
         << a << " vs reference " << b << " (tolerance " << tol << " scaled)";
}

// ---------------------------------------------------------------------------
// NIST StRD (certified values: tests/testdata/nist/certified.json, transcribed from
// the public copies in tests/testdata/nist/README.md; docs/references.md, NIST StRD)

// The least LRE over the coefficients, intercept and residual SD of a fit.
double CheckNist(const std::string& name, Table t) {
  const json certified = ReadJson("nist/certified.json")[name];
  auto linear = Make("linear", json::object());
  EXPECT_OK(linear->Fit(t.X, t.y, LearnTask::kRegression, 0, t.names));
  const json fitted = linear->FittedParams();
  double least = Lre(fitted["intercept"].get<double>(), certified["intercept"].get<double>());
  for (const auto& item : certified["coefficients"].items()) {
    least = std::min(
        least, Lre(fitted["coefficients"][item.key()].get<double>(), item.value().get<double>()));
  }
  least = std::min(least, Lre(fitted["training"]["residual_sd"].get<double>(),
                              certified["residual_sd"].get<double>()));
  std::printf("NIST %s: least LRE %.1f digits\n", name.c_str(), least);
  ::testing::Test::RecordProperty(name + "_least_lre", std::to_string(least));
  return least;
}

TEST(NistLinearTest, LongleyAgreesWithCertifiedValues) {
  // 8 digits is the task's floor; Householder QR typically gives 11-13 here.
  EXPECT_GE(CheckNist("longley", ReadTable("nist/longley.csv", "y")), 8.0);
}

TEST(NistLinearTest, NorrisAgreesWithCertifiedValues) {
  EXPECT_GE(CheckNist("norris", ReadTable("nist/norris.csv", "y")), 8.0);
}

TEST(NistLinearTest, PontiusQuadraticAgreesWithCertifiedValues) {
  Table t = ReadTable("nist/pontius.csv", "y");
  t.X.conservativeResize(Eigen::NoChange, 2);
  t.X.col(1) = t.X.col(0).array().square();  // exact: x <= 3e6, so x^2 < 2^53
  t.names.push_back("x2");
  EXPECT_GE(CheckNist("pontius", t), 8.0);
}

TEST(NistLinearTest, LongleyResidualStatisticsAreReported) {
  Table t = ReadTable("nist/longley.csv", "y");
  auto linear = Make("linear", json::object());
  ASSERT_OK(linear->Fit(t.X, t.y, LearnTask::kRegression, 0, t.names));
  const json training = linear->FittedParams()["training"];
  EXPECT_EQ(training["rows"], 16);
  EXPECT_EQ(training["rank"], 6);
  // NIST certified residual sum of squares, 836424.055505915.
  EXPECT_GE(Lre(training["rss"].get<double>(), 836424.055505915), 8.0);
}

// ---------------------------------------------------------------------------
// scikit-learn 1.2.1 (tests/testdata/sklearn/learner_reference.json)

class SklearnReferenceTest : public ::testing::Test {
 protected:
  static void SetUpTestSuite() { ref_ = new json(ReadJson("sklearn/learner_reference.json")); }
  static void TearDownTestSuite() {
    delete ref_;
    ref_ = nullptr;
  }
  static const json& ref() { return *ref_; }
  static json* ref_;
};
json* SklearnReferenceTest::ref_ = nullptr;

TEST_F(SklearnReferenceTest, RidgeMatchesSklearnOnDiabetes) {
  const Table t = ReadTable("sklearn/diabetes.csv", "target");
  ASSERT_EQ(ref()["ridge"].size(), 2u);
  for (const json& c : ref()["ridge"]) {
    auto ridge = Make("ridge", json{{"l2", c["l2"]}});
    ASSERT_OK(ridge->Fit(t.X, t.y, LearnTask::kRegression, 0, t.names));
    const json fitted = ridge->FittedParams();
    EXPECT_TRUE(Near(fitted["intercept"], c["intercept"], 1e-6)) << "l2 " << c["l2"];
    for (size_t j = 0; j < t.names.size(); ++j) {
      EXPECT_TRUE(Near(fitted["coefficients"][t.names[j]], c["coef"][j], 1e-6))
          << "l2 " << c["l2"] << " " << t.names[j];
    }
  }
}

// Our coefficients (classes x features; one row for two classes) and intercepts.
void LogisticCoefficients(const json& fitted, const std::vector<std::string>& names,
                          std::vector<std::vector<double>>* coef, std::vector<double>* intercept) {
  const bool binary = fitted["intercept"].is_number();
  const size_t k = binary ? 1 : fitted["intercept"].size();
  coef->assign(k, std::vector<double>(names.size()));
  intercept->assign(k, 0);
  for (size_t c = 0; c < k; ++c) {
    (*intercept)[c] =
        binary ? fitted["intercept"].get<double>() : fitted["intercept"][c].get<double>();
    for (size_t j = 0; j < names.size(); ++j) {
      const json& v = fitted["coefficients"][names[j]];
      (*coef)[c][j] = binary ? v.get<double>() : v[c].get<double>();
    }
  }
}

TEST_F(SklearnReferenceTest, LogisticMatchesSklearnBinaryAndMultinomial) {
  const Table cancer = ReadTable("sklearn/breast_cancer_std.csv", "target");
  const Table iris = ReadTable("sklearn/iris.csv", "target");
  ASSERT_EQ(ref()["logistic"].size(), 4u);
  for (const json& c : ref()["logistic"]) {
    const bool is_iris = c["data"] == "iris";
    const Table& t = is_iris ? iris : cancer;
    const int classes = is_iris ? 3 : 2;
    auto logistic = Make("logistic", json{{"l2", c["l2"]}, {"tol", 1e-12}});
    ASSERT_OK(logistic->Fit(t.X, t.y, LearnTask::kClassification, classes, t.names));
    const json fitted = logistic->FittedParams();
    EXPECT_TRUE(fitted["converged"].get<bool>()) << fitted["gradient_inf"];
    std::vector<std::vector<double>> coef;
    std::vector<double> intercept;
    LogisticCoefficients(fitted, t.names, &coef, &intercept);
    const std::string what = c["data"].get<std::string>() + " l2=" + c["l2"].dump();
    // sklearn's newton-cholesky / newton-cg reach gradients <= 1e-9 (see
    // gradient_inf_at_reference in the JSON): checked at the task's 1e-6 (we
    // observe <= 1e-9). Its lbfgs stops on the relative decrease of the
    // objective with gradients of 3e-4 to 2e-3, which leaves differences up
    // to 5.4e-4: checked at 2e-3.
    for (const auto& [key, tol] : {std::pair<const char*, double>{"second_order", 1e-6},
                                   std::pair<const char*, double>{"lbfgs", 2e-3}}) {
      const json& r = c[key];
      ASSERT_EQ(r["coef"].size(), coef.size()) << what;
      double worst = 0;  // the largest scaled difference, for the report
      auto scaled = [](double a, double b) { return std::abs(a - b) / std::max(1.0, std::abs(b)); };
      for (size_t k = 0; k < coef.size(); ++k) {
        EXPECT_TRUE(Near(intercept[k], r["intercept"][k], tol)) << what << " " << key;
        worst = std::max(worst, scaled(intercept[k], r["intercept"][k]));
        for (size_t j = 0; j < t.names.size(); ++j) {
          worst = std::max(worst, scaled(coef[k][j], r["coef"][k][j]));
          EXPECT_TRUE(Near(coef[k][j], r["coef"][k][j], tol))
              << what << " " << key << " class " << k << " " << t.names[j];
        }
      }
      std::vector<Eigen::Index> rows;
      for (const json& row : c["proba_rows"]) rows.push_back(row.get<Eigen::Index>());
      Result<Eigen::MatrixXd> proba = logistic->PredictProba(t.X(rows, Eigen::all));
      ASSERT_OK(proba);
      for (size_t i = 0; i < rows.size(); ++i) {
        for (int k = 0; k < classes; ++k) {
          EXPECT_TRUE(
              Near((*proba)(static_cast<Eigen::Index>(i), k), r["predict_proba"][i][k], tol))
              << what << " " << key << " row " << rows[i];
        }
      }
      std::printf("logistic %s vs sklearn %s: largest scaled difference %.1e\n", what.c_str(), key,
                  worst);
    }
  }
}

TEST_F(SklearnReferenceTest, KnnClassifierMatchesSklearnOnIrisExceptAtDistanceTies) {
  const Table t = ReadTable("sklearn/iris.csv", "target");
  const json& r = ref()["knn_classifier"];
  auto knn = Make("knn", json{{"k", 5}});
  ASSERT_OK(knn->Fit(t.X, t.y, LearnTask::kClassification, 3, t.names));
  Result<Eigen::VectorXd> pred = knn->Predict(t.X);
  Result<Eigen::MatrixXd> proba = knn->PredictProba(t.X);
  ASSERT_OK(pred);
  ASSERT_OK(proba);
  // Where the 5th and 6th nearest rows are equally far, which one counts is
  // implementation-defined (sklearn's kd-tree and brute force disagree there;
  // we take the smaller row number). make_reference.py lists those queries.
  std::vector<Eigen::Index> tied;
  for (const json& i : r["tied_queries"]) tied.push_back(i.get<Eigen::Index>());
  EXPECT_EQ(tied.size(), 8u);
  int compared = 0;
  for (Eigen::Index i = 0; i < t.X.rows(); ++i) {
    if (std::find(tied.begin(), tied.end(), i) != tied.end()) continue;
    ++compared;
    EXPECT_EQ((*pred)[i], r["predict"][i].get<double>()) << "row " << i;
    for (int k = 0; k < 3; ++k) {
      EXPECT_TRUE(Near((*proba)(i, k), r["predict_proba"][i][k], 1e-6)) << "row " << i;
    }
  }
  EXPECT_EQ(compared, 142);
}

TEST_F(SklearnReferenceTest, KnnRegressorMatchesSklearnOnDiabetes) {
  const Table t = ReadTable("sklearn/diabetes.csv", "target");
  {
    const json& r = ref()["knn_regressor"];
    ASSERT_TRUE(r["tied_queries"].empty());
    auto knn = Make("knn", json{{"k", 5}});
    ASSERT_OK(knn->Fit(t.X, t.y, LearnTask::kRegression, 0, t.names));
    Result<Eigen::VectorXd> pred = knn->Predict(t.X);
    ASSERT_OK(pred);
    for (Eigen::Index i = 0; i < t.X.rows(); ++i) {
      EXPECT_TRUE(Near((*pred)[i], r["predict"][i], 1e-6)) << "row " << i;
    }
  }
  {
    // Distance weights: fitted on the even rows, predicting the odd rows.
    const json& r = ref()["knn_regressor_distance"];
    ASSERT_TRUE(r["tied_queries"].empty());
    std::vector<Eigen::Index> even, odd;
    for (Eigen::Index i = 0; i < t.X.rows(); ++i) (i % 2 ? odd : even).push_back(i);
    auto knn = Make("knn", json{{"k", 5}, {"weights", "distance"}});
    ASSERT_OK(knn->Fit(t.X(even, Eigen::all), t.y(even), LearnTask::kRegression, 0, t.names));
    Result<Eigen::VectorXd> pred = knn->Predict(t.X(odd, Eigen::all));
    ASSERT_OK(pred);
    ASSERT_EQ(r["predict"].size(), odd.size());
    for (size_t i = 0; i < odd.size(); ++i) {
      EXPECT_TRUE(Near((*pred)[static_cast<Eigen::Index>(i)], r["predict"][i], 1e-6))
          << "row " << odd[i];
    }
  }
}

}  // namespace
}  // namespace unseen
