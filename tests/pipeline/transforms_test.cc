#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <limits>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "harness/pipeline/frame.h"
#include "harness/pipeline/transform.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using nlohmann::json;

// Every value marked "sklearn 1.2.1" comes from
// tests/testdata/sklearn/transform_reference.json, written by
// tests/testdata/sklearn/make_transform_reference.py with Debian
// python3-sklearn 1.2.1 on its bundled wine and diabetes datasets.
// Against scikit-learn; a project choice (docs/references.md, "Not traced to a published
// source": the test tolerances).
constexpr double kTolerance = 1e-6;

const std::string& DataDir() {
  static const std::string dir = testing::TestDataDir() + "/sklearn/";
  return dir;
}

const json& Reference() {
  static const json ref = json::parse(testing::ReadFile(DataDir() + "transform_reference.json"));
  return ref;
}

const json& Case(const std::string& name) { return Reference().at("cases").at(name); }

// A numeric CSV (header line, blank = missing) as a Frame; the column named
// `target` (if any) goes to *y instead.
Frame ReadCsv(const std::string& file, const std::string& target = "",
              Eigen::VectorXd* y = nullptr) {
  std::istringstream in(testing::ReadFile(DataDir() + file));
  std::string line;
  std::getline(in, line);
  std::vector<std::string> names;
  std::stringstream header(line);
  for (std::string cell; std::getline(header, cell, ',');) names.push_back(cell);
  Frame f;
  std::vector<double> ys;
  for (const std::string& n : names) {
    if (n != target) f.columns.push_back({n, true, {}, {}});
  }
  while (std::getline(in, line)) {
    std::vector<std::string> cells;
    size_t start = 0;
    while (true) {
      size_t comma = line.find(',', start);
      cells.push_back(line.substr(start, comma == std::string::npos ? comma : comma - start));
      if (comma == std::string::npos) break;
      start = comma + 1;
    }
    EXPECT_EQ(cells.size(), names.size());
    size_t c = 0;
    for (size_t i = 0; i < names.size(); ++i) {
      double v = cells[i].empty() ? std::nan("") : std::stod(cells[i]);
      if (names[i] == target) {
        ys.push_back(v);
      } else {
        f.columns[c++].num.push_back(v);
      }
    }
  }
  if (y != nullptr)
    *y = Eigen::Map<Eigen::VectorXd>(ys.data(), static_cast<Eigen::Index>(ys.size()));
  return f;
}

Frame Wine(Eigen::VectorXd* y = nullptr) { return ReadCsv("wine.csv", "class", y); }

bool Near(double got, double want) {
  return std::abs(got - want) <= kTolerance * std::max(1.0, std::abs(want));
}

std::unique_ptr<Transform> Make(const std::string& kind, const json& params = json::object()) {
  Result<std::unique_ptr<Transform>> t = MakeTransform(kind, params);
  EXPECT_TRUE(t.ok()) << t.status().ToString();
  return t.ok() ? std::move(t).value() : nullptr;
}

Frame FitApply(Transform* t, const Frame& f, const Eigen::VectorXd& y = Eigen::VectorXd()) {
  Status s = t->Fit(f, y.size() ? y : Eigen::VectorXd::Zero(static_cast<Eigen::Index>(f.rows())));
  EXPECT_TRUE(s.ok()) << s.ToString();
  Result<Frame> out = t->Apply(f);
  EXPECT_TRUE(out.ok()) << out.status().ToString();
  return out.ok() ? *out : Frame();
}

// Columns [first, first + want[0].size()) of `got` equal the row-major `want`.
void ExpectColumnsNear(const Frame& got, const json& want, size_t first = 0) {
  ASSERT_GT(want.size(), 0u);
  size_t width = want[0].size();
  ASSERT_GE(got.cols(), first + width);
  ASSERT_EQ(got.rows(), want.size());
  for (size_t r = 0; r < want.size(); ++r) {
    for (size_t c = 0; c < width; ++c) {
      ASSERT_TRUE(Near(got.columns[first + c].num[r], want[r][c].get<double>()))
          << got.columns[first + c].name << " row " << r << ": " << got.columns[first + c].num[r]
          << " vs " << want[r][c];
    }
  }
}

// Fitted state -> JSON text -> a fresh transform of the same kind gives the
// same Apply output, bit for bit, and the same FittedParams.
void ExpectRoundTrip(const Transform& fitted, const Frame& in) {
  json saved = json::parse(fitted.FittedParams().dump());
  Result<std::unique_ptr<Transform>> fresh = MakeTransform(fitted.kind(), json::object());
  ASSERT_OK(fresh);
  ASSERT_OK((*fresh)->LoadFitted(saved));
  EXPECT_EQ((*fresh)->FittedParams(), fitted.FittedParams());
  Result<Frame> a = fitted.Apply(in);
  Result<Frame> b = (*fresh)->Apply(in);
  ASSERT_OK(a);
  ASSERT_OK(b);
  ASSERT_EQ(a->Names(), b->Names());
  for (size_t c = 0; c < a->cols(); ++c) {
    const FrameColumn &x = a->columns[c], &z = b->columns[c];
    ASSERT_EQ(x.numeric, z.numeric);
    ASSERT_EQ(x.cat, z.cat);
    ASSERT_EQ(x.num.size(), z.num.size());
    for (size_t r = 0; r < x.num.size(); ++r) {
      ASSERT_TRUE(x.num[r] == z.num[r] || (std::isnan(x.num[r]) && std::isnan(z.num[r])))
          << x.name << " row " << r;
    }
  }
}

std::vector<size_t> FirstRows(size_t n) {
  std::vector<size_t> rows(n);
  for (size_t i = 0; i < n; ++i) rows[i] = i;
  return rows;
}

double Mean(const std::vector<double>& v) {
  double s = 0;
  for (double x : v) s += x;
  return s / static_cast<double>(v.size());
}

Frame Colors(const std::vector<std::string>& colors, const std::vector<double>& size) {
  Frame f;
  f.columns.push_back({"color", false, {}, colors});
  f.columns.push_back({"size", true, size, {}});
  return f;
}

// ---------------------------------------------------------------------------
// Kinds and parameters

TEST(MakeTransformTest, KnowsEveryDocumentedKind) {
  EXPECT_EQ(TransformKinds(),
            (std::vector<std::string>{"impute", "standardize", "minmax", "onehot", "poly", "pca",
                                      "select_variance", "select_topk"}));
  for (const std::string& kind : TransformKinds()) {
    Result<std::unique_ptr<Transform>> t = MakeTransform(kind, json::object());
    ASSERT_OK(t);
    EXPECT_EQ((*t)->kind(), kind);
  }
}

TEST(MakeTransformTest, UnknownKindListsTheKinds) {
  Result<std::unique_ptr<Transform>> t = MakeTransform("normalize", json::object());
  ASSERT_FALSE(t.ok());
  EXPECT_TRUE(t.status().IsInvalidArgument());
  EXPECT_EQ(t.status().message(),
            "unknown transform kind 'normalize'; expected one of impute, standardize, minmax, "
            "onehot, poly, pca, select_variance, select_topk");
}

TEST(MakeTransformTest, UnknownParameterIsNamed) {
  Result<std::unique_ptr<Transform>> t = MakeTransform("impute", {{"strat", "median"}});
  ASSERT_FALSE(t.ok());
  EXPECT_EQ(t.status().message(),
            "transform 'impute': unknown parameter 'strat'; expected one of strategy, fill, "
            "columns");
}

TEST(MakeTransformTest, MistypedAndOutOfRangeParametersAreNamed) {
  struct BadCase {
    std::string kind;
    json params;
    std::string message;
  };
  const std::vector<BadCase> cases = {
      {"poly",
       {{"degree", 2.0}},
       "transform 'poly': parameter 'degree' must be an integer, got 2.0"},
      {"poly",
       {{"degree", 4}},
       "transform 'poly': parameter 'degree' must be between 2 and 3, got 4"},
      {"poly",
       {{"bias", "yes"}},
       "transform 'poly': parameter 'bias' must be true or false, got \"yes\""},
      {"impute",
       {{"strategy", "mode"}},
       "transform 'impute': parameter 'strategy' must be one of mean, median, most_frequent, "
       "constant, got \"mode\""},
      {"impute",
       {{"fill", 3}},
       "transform 'impute': parameter 'fill' is only used with strategy \"constant\""},
      {"onehot",
       {{"unknown", "drop"}},
       "transform 'onehot': parameter 'unknown' must be one of ignore, error, got \"drop\""},
      {"pca",
       {{"components", 2}, {"variance", 0.9}},
       "transform 'pca': parameter 'variance' cannot be given together with 'components'; choose "
       "one"},
      {"pca",
       {{"variance", 1.5}},
       "transform 'pca': parameter 'variance' must be a fraction in (0, 1], got 1.5"},
      {"pca",
       {{"components", 0}},
       "transform 'pca': parameter 'components' must be between 1 and 1048576, got 0"},
      {"select_variance",
       {{"threshold", -1}},
       "transform 'select_variance': parameter 'threshold' must be a finite number >= 0, got -1"},
      {"select_topk",
       {{"score", "chi2"}},
       "transform 'select_topk': parameter 'score' must be one of correlation, f, got \"chi2\""},
      {"standardize",
       {{"columns", "a"}},
       "transform 'standardize': parameter 'columns' must be a non-empty list of column names, got "
       "\"a\""},
      {"standardize",
       {{"columns", {"a", "a"}}},
       "transform 'standardize': parameter 'columns' names column 'a' twice"},
  };
  for (const BadCase& c : cases) {
    Result<std::unique_ptr<Transform>> t = MakeTransform(c.kind, c.params);
    ASSERT_FALSE(t.ok()) << c.kind << " " << c.params;
    EXPECT_TRUE(t.status().IsInvalidArgument());
    EXPECT_EQ(t.status().message(), c.message);
  }
}

TEST(TransformTest, ApplyBeforeFitIsFailedPrecondition) {
  for (const std::string& kind : TransformKinds()) {
    std::unique_ptr<Transform> t = Make(kind);
    Result<Frame> out = t->Apply(Wine());
    ASSERT_FALSE(out.ok());
    EXPECT_TRUE(out.status().IsFailedPrecondition()) << kind;
  }
}

TEST(TransformTest, ApplyNamesAFittedColumnMissingFromTheInput) {
  Frame wine = Wine();
  std::unique_ptr<Transform> t = Make("standardize");
  ASSERT_OK(t->Fit(wine, Eigen::VectorXd()));
  Frame fewer = wine;
  fewer.columns.erase(fewer.columns.begin() + 2);  // ash
  Result<Frame> out = t->Apply(fewer);
  ASSERT_FALSE(out.ok());
  EXPECT_TRUE(out.status().IsInvalidArgument());
  EXPECT_NE(out.status().message().find("column 'ash' is not in the data"), std::string::npos)
      << out.status().message();
}

TEST(TransformTest, LoadFittedRejectsAnotherKindAndAnUnfittedState) {
  std::unique_ptr<Transform> minmax = Make("minmax");
  ASSERT_OK(minmax->Fit(Wine(), Eigen::VectorXd()));
  std::unique_ptr<Transform> standardize = Make("standardize");
  EXPECT_TRUE(standardize->LoadFitted(minmax->FittedParams()).IsInvalidArgument());
  EXPECT_TRUE(standardize->LoadFitted(Make("standardize")->FittedParams()).IsInvalidArgument());
  json broken = Make("standardize")->FittedParams();
  broken["state"] = {{"columns", {"a"}}, {"mean", {{"a", "zero"}}}, {"scale", {{"a", 1}}}};
  EXPECT_TRUE(standardize->LoadFitted(broken).IsInvalidArgument());
}

// ---------------------------------------------------------------------------
// scikit-learn references

TEST(StandardizeTest, MatchesScikitLearnStandardScaler) {
  Frame wine = Wine();
  std::unique_ptr<Transform> t = Make("standardize");
  Frame out = FitApply(t.get(), wine);
  const json& ref = Case("standardize");  // sklearn 1.2.1
  ExpectColumnsNear(out, ref.at("output"));
  json state = t->FittedParams().at("state");
  for (size_t j = 0; j < wine.cols(); ++j) {
    const std::string& name = ref.at("columns")[j];
    EXPECT_TRUE(Near(state.at("mean").at(name), ref.at("mean")[j])) << name;
    EXPECT_TRUE(Near(state.at("scale").at(name), ref.at("scale")[j])) << name;
  }
  ExpectRoundTrip(*t, wine);
}

TEST(MinMaxTest, MatchesScikitLearnMinMaxScaler) {
  Frame wine = Wine();
  std::unique_ptr<Transform> t = Make("minmax");
  Frame out = FitApply(t.get(), wine);
  const json& ref = Case("minmax");  // sklearn 1.2.1
  ExpectColumnsNear(out, ref.at("output"));
  json state = t->FittedParams().at("state");
  for (size_t j = 0; j < wine.cols(); ++j) {
    const std::string& name = ref.at("columns")[j];
    EXPECT_EQ(state.at("min").at(name).get<double>(), ref.at("data_min")[j].get<double>());
    EXPECT_TRUE(Near(state.at("range").at(name).get<double>(),
                     ref.at("data_max")[j].get<double>() - ref.at("data_min")[j].get<double>()));
  }
  ExpectRoundTrip(*t, wine);
}

TEST(PcaTest, ThreeComponentsMatchScikitLearnUpToSign) {
  Frame wine = Wine();
  std::unique_ptr<Transform> t = Make("pca", {{"components", 3}});
  Frame out = FitApply(t.get(), wine);
  const json& ref = Case("pca3");  // sklearn 1.2.1 PCA(n_components=3)
  ASSERT_EQ(out.Names(), (std::vector<std::string>{"pc1", "pc2", "pc3"}));
  json state = t->FittedParams().at("state");
  const json& axes = state.at("components");
  ASSERT_EQ(axes.size(), 3u);
  for (size_t i = 0; i < 3; ++i) {
    EXPECT_TRUE(Near(state.at("explained_variance_ratio")[i].get<double>() /
                         ref.at("explained_variance_ratio")[i].get<double>(),
                     1.0))
        << i;
    // Our convention: the largest absolute loading is positive.
    std::vector<double> a = axes[i].get<std::vector<double>>();
    auto big = std::max_element(a.begin(), a.end(),
                                [](double x, double y) { return std::abs(x) < std::abs(y); });
    EXPECT_GT(*big, 0);
    double sign = a[0] * ref.at("components")[i][0].get<double>() >= 0 ? 1 : -1;
    for (size_t j = 0; j < a.size(); ++j) {
      EXPECT_TRUE(Near(sign * a[j], ref.at("components")[i][j])) << i << "," << j;
    }
    for (size_t r = 0; r < out.rows(); ++r) {
      ASSERT_TRUE(Near(sign * out.columns[i].num[r], ref.at("output")[r][i])) << i << "," << r;
    }
  }
  ExpectRoundTrip(*t, wine);
}

TEST(PcaTest, VarianceFractionKeepsAsManyComponentsAsScikitLearn) {
  Frame wine = Wine();
  std::unique_ptr<Transform> scale = Make("standardize");
  Frame standardized = FitApply(scale.get(), wine);
  std::unique_ptr<Transform> t = Make("pca", {{"variance", 0.8}});
  Frame out = FitApply(t.get(), standardized);
  const json& ref = Case("pca_variance");  // sklearn 1.2.1 PCA(n_components=0.8)
  ASSERT_EQ(out.cols(), ref.at("n_components").get<size_t>());
  EXPECT_EQ(out.cols(), 5u);
  for (size_t i = 0; i < out.cols(); ++i) {
    double sign = out.columns[i].num[0] * ref.at("output")[0][i].get<double>() >= 0 ? 1 : -1;
    for (size_t r = 0; r < out.rows(); ++r) {
      ASSERT_TRUE(Near(sign * out.columns[i].num[r], ref.at("output")[r][i])) << i << "," << r;
    }
  }
}

TEST(PcaTest, MissingValueIsInvalidArgumentNamingTheColumn) {
  Frame wine = Wine();
  wine.columns[4].num[7] = std::nan("");
  std::unique_ptr<Transform> t = Make("pca");
  Status s = t->Fit(wine, Eigen::VectorXd());
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_EQ(s.message(),
            "transform 'pca': column 'magnesium' has missing values; impute it before pca");
}

TEST(PcaTest, TooManyComponentsForTheRowsIsInvalidArgument) {
  Frame few = Wine().Select({0, 1, 2});
  std::unique_ptr<Transform> t = Make("pca", {{"components", 4}});
  Status s = t->Fit(few, Eigen::VectorXd());
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_NE(s.message().find("at most 3"), std::string::npos) << s.message();
}

// scikit-learn names products "a b" and powers "a^2"; ours "a*b".
std::vector<std::string> StarNames(const json& names) {
  std::vector<std::string> out;
  for (const json& n : names) {
    std::string s = n;
    std::replace(s.begin(), s.end(), ' ', '*');
    out.push_back(s);
  }
  return out;
}

void ExpectPolyMatches(const std::string& case_name, const json& params) {
  Frame wine = Wine();
  const json& ref = Case(case_name);  // sklearn 1.2.1 PolynomialFeatures
  json p = params;
  p["columns"] = ref.at("columns");
  std::unique_ptr<Transform> t = Make("poly", p);
  Frame out = FitApply(t.get(), wine);
  std::vector<std::string> names = StarNames(ref.at("feature_names"));
  size_t width = names.size();
  ASSERT_EQ(out.cols(), width + wine.cols() - ref.at("columns").size());
  std::vector<std::string> got = out.Names();
  // The block stands where the first input column stood (position 0 here).
  EXPECT_EQ(std::vector<std::string>(got.begin(), got.begin() + static_cast<long>(width)), names);
  EXPECT_EQ(got[width], wine.columns[ref.at("columns").size()].name);
  ExpectColumnsNear(out, ref.at("output"));
  ExpectRoundTrip(*t, wine);
}

TEST(PolyTest, DegreeTwoWithBiasMatchesScikitLearnOrderAndValues) {
  ExpectPolyMatches("poly2_bias", {{"degree", 2}, {"bias", true}});
}

TEST(PolyTest, DegreeThreeMatchesScikitLearnOrderAndValues) {
  ExpectPolyMatches("poly3", {{"degree", 3}});
}

TEST(PolyTest, InteractionOnlyMatchesScikitLearnOrderAndValues) {
  ExpectPolyMatches("poly3_interaction", {{"degree", 3}, {"interaction_only", true}});
}

TEST(PolyTest, NamesPowersAndProducts) {
  Frame f;
  f.columns.push_back({"a", true, {2}, {}});
  f.columns.push_back({"b", true, {3}, {}});
  std::unique_ptr<Transform> t = Make("poly", {{"degree", 3}});
  Frame out = FitApply(t.get(), f);
  EXPECT_EQ(out.Names(), (std::vector<std::string>{"a", "b", "a^2", "a*b", "b^2", "a^3", "a^2*b",
                                                   "a*b^2", "b^3"}));
  EXPECT_EQ(out.columns[6].num[0], 12.0);  // 2^2 * 3
}

TEST(SelectVarianceTest, MatchesScikitLearnVarianceThreshold) {
  Frame wine = Wine();
  const json& ref = Case("select_variance");  // sklearn 1.2.1 VarianceThreshold(0.1)
  std::unique_ptr<Transform> t = Make("select_variance", {{"threshold", 0.1}});
  Frame out = FitApply(t.get(), wine);
  std::vector<std::string> want;
  for (size_t j = 0; j < wine.cols(); ++j) {
    if (ref.at("support")[j].get<bool>()) want.push_back(wine.columns[j].name);
    EXPECT_TRUE(Near(t->FittedParams()["state"]["variance"][wine.columns[j].name].get<double>(),
                     ref.at("variances")[j].get<double>()));
  }
  EXPECT_EQ(out.Names(), want);
  EXPECT_EQ(want.size(), 10u);  // ash, nonflavanoid_phenols and hue go
  ExpectRoundTrip(*t, wine);
}

TEST(SelectVarianceTest, DefaultThresholdDropsOnlyConstantColumns) {
  Frame f;
  f.columns.push_back({"flat", true, {0.1, 0.1, 0.1}, {}});
  f.columns.push_back({"moving", true, {1, 2, 3}, {}});
  f.columns.push_back({"label", false, {}, {"x", "y", "z"}});
  std::unique_ptr<Transform> t = Make("select_variance");
  EXPECT_EQ(FitApply(t.get(), f).Names(), (std::vector<std::string>{"moving", "label"}));
}

void ExpectTopKMatches(const std::string& case_name, const std::string& file,
                       const std::string& target, const json& params, LearnTask task,
                       const std::string& score_key) {
  Eigen::VectorXd y;
  Frame data = ReadCsv(file, target, &y);
  const json& ref = Case(case_name);  // sklearn 1.2.1 SelectKBest
  std::unique_ptr<Transform> t = Make("select_topk", params);
  t->SetTask(task);
  Frame out = FitApply(t.get(), data, y);
  std::vector<std::string> want;
  json scores = t->FittedParams()["state"]["score"];
  for (size_t j = 0; j < data.cols(); ++j) {
    if (ref.at("support")[j].get<bool>()) want.push_back(data.columns[j].name);
    double ours = scores[data.columns[j].name];
    double theirs = ref.at(score_key)[j];
    if (score_key == "correlation") theirs = std::abs(theirs);
    EXPECT_TRUE(Near(ours, theirs)) << data.columns[j].name << ": " << ours << " vs " << theirs;
  }
  EXPECT_EQ(out.Names(), want);
  ExpectRoundTrip(*t, data);
}

TEST(SelectTopKTest, FClassifMatchesScikitLearn) {
  ExpectTopKMatches("select_topk_f_classif", "wine.csv", "class", {{"k", 4}, {"score", "f"}},
                    LearnTask::kClassification, "scores");
}

TEST(SelectTopKTest, FRegressionMatchesScikitLearn) {
  ExpectTopKMatches("select_topk_f_regression", "diabetes.csv", "target",
                    {{"k", 3}, {"score", "f"}}, LearnTask::kRegression, "scores");
}

TEST(SelectTopKTest, CorrelationMatchesScikitLearnRRegression) {
  ExpectTopKMatches("select_topk_correlation", "diabetes.csv", "target", {{"k", 3}},
                    LearnTask::kRegression, "correlation");
}

TEST(SelectTopKTest, TiesGoToTheEarlierColumn) {
  Frame f;
  f.columns.push_back({"a", true, {1, 2, 3, 4}, {}});
  f.columns.push_back({"b", true, {2, 4, 6, 8}, {}});  // same |r| = 1 as a
  f.columns.push_back({"c", true, {4, 3, 2, 1}, {}});  // |r| = 1 too
  Eigen::VectorXd y(4);
  y << 1, 2, 3, 4;
  std::unique_ptr<Transform> t = Make("select_topk", {{"k", 2}});
  EXPECT_EQ(FitApply(t.get(), f, y).Names(), (std::vector<std::string>{"a", "b"}));
}

TEST(SelectTopKTest, FScoreWithoutTheTaskIsFailedPrecondition) {
  std::unique_ptr<Transform> t = Make("select_topk", {{"score", "f"}});
  Eigen::VectorXd y = Eigen::VectorXd::Zero(178);
  EXPECT_TRUE(t->Fit(Wine(), y).IsFailedPrecondition());
}

void ExpectImputeMatches(const std::string& strategy) {
  Frame blanked = ReadCsv("wine_blanked.csv");
  const json& ref = Case("impute_" + strategy);  // sklearn 1.2.1 SimpleImputer
  std::unique_ptr<Transform> t = Make("impute", {{"strategy", strategy}});
  Frame out = FitApply(t.get(), blanked);
  ExpectColumnsNear(out, ref.at("output"));
  json fill = t->FittedParams()["state"]["fill"];
  for (size_t j = 0; j < blanked.cols(); ++j) {
    EXPECT_TRUE(Near(fill[blanked.columns[j].name], ref.at("statistics")[j]));
  }
  ExpectRoundTrip(*t, blanked);
}

TEST(ImputeTest, MedianMatchesScikitLearnSimpleImputer) { ExpectImputeMatches("median"); }
TEST(ImputeTest, MeanMatchesScikitLearnSimpleImputer) { ExpectImputeMatches("mean"); }
TEST(ImputeTest, MostFrequentMatchesScikitLearnSimpleImputer) {
  ExpectImputeMatches("most_frequent");
}

// ---------------------------------------------------------------------------
// Fitting reads only the rows it is given

TEST(FitOnSubsetTest, StandardizeLearnsTheSubsetMean) {
  Frame wine = Wine();
  Frame train = wine.Select(FirstRows(60));
  std::unique_ptr<Transform> t = Make("standardize", {{"columns", {"proline"}}});
  ASSERT_OK(t->Fit(train, Eigen::VectorXd()));
  double mean = t->FittedParams()["state"]["mean"]["proline"];
  const std::vector<double>& all = wine.columns[12].num;
  EXPECT_NEAR(mean, Mean(train.columns[12].num), 1e-9);
  EXPECT_GT(std::abs(mean - Mean(all)), 100.0);  // class 0 wines carry more proline
  Result<Frame> out = t->Apply(wine);            // Apply on every row
  ASSERT_OK(out);
  EXPECT_EQ(out->rows(), 178u);
  ExpectRoundTrip(*t, wine);
}

TEST(FitOnSubsetTest, MinMaxLearnsTheSubsetRange) {
  Frame wine = Wine();
  Frame train = wine.Select(FirstRows(60));
  std::unique_ptr<Transform> t = Make("minmax");
  ASSERT_OK(t->Fit(train, Eigen::VectorXd()));
  const std::vector<double>& p = train.columns[12].num;
  double lo = *std::min_element(p.begin(), p.end());
  EXPECT_EQ(t->FittedParams()["state"]["min"]["proline"].get<double>(), lo);
  Result<Frame> out = t->Apply(wine);
  ASSERT_OK(out);
  // Rows outside the training range fall outside [0, 1] (no clipping).
  const std::vector<double>& scaled = out->columns[12].num;
  EXPECT_LT(*std::min_element(scaled.begin(), scaled.end()), 0.0);
}

TEST(FitOnSubsetTest, ImputeMedianComesFromTheSubset) {
  Frame f;
  f.columns.push_back({"x", true, {1, 2, std::nan(""), 100, 200}, {}});
  std::unique_ptr<Transform> t = Make("impute", {{"strategy", "median"}});
  ASSERT_OK(t->Fit(f.Select({0, 1, 2}), Eigen::VectorXd()));
  Result<Frame> out = t->Apply(f);
  ASSERT_OK(out);
  EXPECT_EQ(out->columns[0].num[2], 1.5);  // median of {1, 2}, not of {1, 2, 100, 200}
}

TEST(FitOnSubsetTest, PcaCentresOnTheSubsetMean) {
  Frame wine = Wine();
  Frame train = wine.Select(FirstRows(60));
  std::unique_ptr<Transform> t = Make("pca", {{"components", 2}});
  ASSERT_OK(t->Fit(train, Eigen::VectorXd()));
  json mean = t->FittedParams()["state"]["mean"];
  for (const FrameColumn& c : train.columns) EXPECT_NEAR(mean[c.name], Mean(c.num), 1e-9);
  Result<Frame> out = t->Apply(train);
  ASSERT_OK(out);
  EXPECT_NEAR(Mean(out->columns[0].num), 0.0, 1e-9);  // scores of the fit rows are centred
  ExpectRoundTrip(*t, wine);
}

TEST(FitOnSubsetTest, OneHotLearnsOnlyTheSubsetCategories) {
  Frame f = Colors({"red", "blue", "green"}, {1, 2, 3});
  std::unique_ptr<Transform> t = Make("onehot");
  ASSERT_OK(t->Fit(f.Select({0, 1}), Eigen::VectorXd()));
  Result<Frame> out = t->Apply(f);
  ASSERT_OK(out);
  EXPECT_EQ(out->Names(), (std::vector<std::string>{"color=blue", "color=red", "size"}));
  EXPECT_EQ(out->columns[0].num, (std::vector<double>{0, 1, 0}));
  EXPECT_EQ(out->columns[1].num, (std::vector<double>{1, 0, 0}));
}

TEST(FitOnSubsetTest, SelectTopKScoresOnlyTheSubset) {
  Frame f;
  // On rows 0-3 `a` tracks the target and `b` does not; row 4 reverses that.
  f.columns.push_back({"a", true, {1, 2, 3, 4, -50}, {}});
  f.columns.push_back({"b", true, {1, 1, 2, 1, 50}, {}});
  Eigen::VectorXd y(5);
  y << 1, 2, 3, 4, 50;
  std::unique_ptr<Transform> t = Make("select_topk", {{"k", 1}});
  ASSERT_OK(t->Fit(f.Select({0, 1, 2, 3}), y.head(4)));
  Result<Frame> out = t->Apply(f);
  ASSERT_OK(out);
  EXPECT_EQ(out->Names(), std::vector<std::string>{"a"});
  std::unique_ptr<Transform> all = Make("select_topk", {{"k", 1}});
  EXPECT_EQ(FitApply(all.get(), f, y).Names(), std::vector<std::string>{"b"});
}

// ---------------------------------------------------------------------------
// onehot and categorical impute

TEST(OneHotTest, SortedCategoriesMissingIsAllZeros) {
  Frame f = Colors({"red", "", "blue", "red"}, {1, 2, 3, 4});
  std::unique_ptr<Transform> t = Make("onehot");
  Frame out = FitApply(t.get(), f);
  EXPECT_EQ(out.Names(), (std::vector<std::string>{"color=blue", "color=red", "size"}));
  EXPECT_EQ(out.columns[0].num, (std::vector<double>{0, 0, 1, 0}));
  EXPECT_EQ(out.columns[1].num, (std::vector<double>{1, 0, 0, 1}));
  EXPECT_EQ(t->FittedParams()["state"]["categories"]["color"], json({"blue", "red"}));
  ExpectRoundTrip(*t, f);
}

TEST(OneHotTest, UnseenCategoryIsAllZerosByDefault) {
  std::unique_ptr<Transform> t = Make("onehot");
  ASSERT_OK(t->Fit(Colors({"red", "blue"}, {1, 2}), Eigen::VectorXd()));
  Result<Frame> out = t->Apply(Colors({"mauve", "blue"}, {3, 4}));
  ASSERT_OK(out);
  EXPECT_EQ(out->columns[0].num, (std::vector<double>{0, 1}));
  EXPECT_EQ(out->columns[1].num, (std::vector<double>{0, 0}));
}

TEST(OneHotTest, UnseenCategoryWithErrorNamesTheValue) {
  std::unique_ptr<Transform> t = Make("onehot", {{"unknown", "error"}});
  ASSERT_OK(t->Fit(Colors({"red", "blue"}, {1, 2}), Eigen::VectorXd()));
  Result<Frame> out = t->Apply(Colors({"blue", "mauve"}, {3, 4}));
  ASSERT_FALSE(out.ok());
  EXPECT_TRUE(out.status().IsInvalidArgument());
  EXPECT_EQ(out.status().message(),
            "transform 'onehot': column 'color' has value 'mauve' in row 2, not seen in the "
            "training rows; expected one of blue, red (or set unknown = \"ignore\")");
  // A missing value is not an unseen category.
  EXPECT_OK(t->Apply(Colors({"", "red"}, {3, 4})));
}

TEST(OneHotTest, NumericColumnNamedIsInvalidArgument) {
  std::unique_ptr<Transform> t = Make("onehot", {{"columns", {"size"}}});
  Status s = t->Fit(Colors({"red"}, {1}), Eigen::VectorXd());
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_EQ(s.message(),
            "transform 'onehot': column 'size' is numeric; expected a categorical column");
}

TEST(ImputeTest, MostFrequentOnCategoricalPicksTheSmallestAmongTies) {
  Frame f = Colors({"red", "", "blue", "red", "blue", ""}, {1, std::nan(""), 1, 2, 2, 3});
  std::unique_ptr<Transform> t = Make("impute", {{"strategy", "most_frequent"}});
  Frame out = FitApply(t.get(), f);
  EXPECT_EQ(out.columns[0].cat,
            (std::vector<std::string>{"red", "blue", "blue", "red", "blue", "blue"}));
  EXPECT_EQ(out.columns[1].num, (std::vector<double>{1, 1, 1, 2, 2, 3}));  // 1 and 2 tie
  ExpectRoundTrip(*t, f);
}

TEST(ImputeTest, ConstantFillsByColumnType) {
  Frame f = Colors({"red", ""}, {1, std::nan("")});
  std::unique_ptr<Transform> both = Make("impute", {{"strategy", "constant"}});
  Frame out = FitApply(both.get(), f);
  EXPECT_EQ(out.columns[0].cat, (std::vector<std::string>{"red", "missing"}));
  EXPECT_EQ(out.columns[1].num, (std::vector<double>{1, 0}));

  std::unique_ptr<Transform> text = Make("impute", {{"strategy", "constant"}, {"fill", "none"}});
  out = FitApply(text.get(), f);
  EXPECT_EQ(out.columns[0].cat, (std::vector<std::string>{"red", "none"}));
  EXPECT_TRUE(std::isnan(out.columns[1].num[1]));  // a string fill leaves numbers alone

  std::unique_ptr<Transform> wrong =
      Make("impute", {{"strategy", "constant"}, {"fill", 7}, {"columns", {"color"}}});
  EXPECT_TRUE(wrong->Fit(f, Eigen::VectorXd()).IsInvalidArgument());
}

TEST(ImputeTest, MeanOnCategoricalColumnIsInvalidArgument) {
  std::unique_ptr<Transform> t = Make("impute", {{"columns", {"color"}}});
  Status s = t->Fit(Colors({"red"}, {1}), Eigen::VectorXd());
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_EQ(s.message(),
            "transform 'impute': column 'color' is categorical; expected a numeric column");
}

TEST(ImputeTest, ColumnWithNoTrainingValuesIsInvalidArgument) {
  Frame f;
  f.columns.push_back({"x", true, {std::nan(""), std::nan("")}, {}});
  std::unique_ptr<Transform> t = Make("impute", {{"strategy", "median"}});
  EXPECT_TRUE(t->Fit(f, Eigen::VectorXd()).IsInvalidArgument());
}

// ---------------------------------------------------------------------------
// Constant columns

TEST(StandardizeTest, ConstantColumnMapsToZeroAndKeepsMissing) {
  Frame f;
  f.columns.push_back({"c", true, {0.1, 0.1, 0.1, std::nan("")}, {}});
  std::unique_ptr<Transform> t = Make("standardize");
  Frame out = FitApply(t.get(), f);
  EXPECT_EQ(t->FittedParams()["state"]["scale"]["c"].get<double>(), 1.0);
  for (size_t r = 0; r < 3; ++r) EXPECT_NEAR(out.columns[0].num[r], 0.0, 1e-15);
  EXPECT_TRUE(std::isnan(out.columns[0].num[3]));
}

TEST(MinMaxTest, ConstantColumnMapsToZero) {
  Frame f;
  f.columns.push_back({"c", true, {5, 5, 5}, {}});
  std::unique_ptr<Transform> t = Make("minmax");
  EXPECT_EQ(FitApply(t.get(), f).columns[0].num, (std::vector<double>{0, 0, 0}));
}

}  // namespace
}  // namespace unseen
