#include "harness/pipeline/spec.h"

#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

using nlohmann::json;

// Line numbers below count from 1 at the first line of each raw string.
constexpr char kValidSpec[] = R"(# Parser test pipeline.
[[transform]]
kind = "impute"
strategy = "median"

[[transform]]
kind = "poly"
degree = [2, 3]
interaction_only = false
columns = ["age", "income"]

[learner]
kind = "ridge"
l2 = [0.1, 1.0, 10.0]

[select]
folds = 5
metric = "mse"
seed = 7
)";

const std::vector<std::string> kColumns = {"age", "income", "color"};

PipelineSpec MustParse(const std::string& text) {
  Result<PipelineSpec> spec = ParseSpecText(text, "spec.toml");
  EXPECT_TRUE(spec.ok()) << spec.status().ToString();
  return spec.ok() ? *spec : PipelineSpec();
}

// The message of a parse failure (empty when parsing succeeded).
std::string ParseError(const std::string& text) {
  Result<PipelineSpec> spec = ParseSpecText(text, "spec.toml");
  if (spec.ok()) return "";
  EXPECT_TRUE(spec.status().IsInvalidArgument()) << spec.status().ToString();
  return spec.status().message();
}

// The message of a validation failure (empty when the spec is valid).
std::string ValidateError(const std::string& text,
                          const std::vector<std::string>& columns = kColumns) {
  PipelineSpec spec = MustParse(text);
  Status s = ValidateSpec(spec, columns);
  if (s.ok()) return "";
  EXPECT_TRUE(s.IsInvalidArgument()) << s.ToString();
  return s.message();
}

bool StartsWith(const std::string& s, const std::string& prefix) {
  return s.compare(0, prefix.size(), prefix) == 0;
}

#define EXPECT_STARTS_WITH(s, prefix) EXPECT_TRUE(StartsWith(s, prefix)) << (s)

// ---------------------------------------------------------------------------
// Parsing

TEST(ParseSpecTest, ValidFileParsesToTheExactStructure) {
  testing::TempDir dir;
  testing::WriteFile(dir.File("pipe.toml"), kValidSpec);
  Result<PipelineSpec> parsed = ParseSpecFile(dir.File("pipe.toml"));
  ASSERT_OK(parsed);
  const PipelineSpec& spec = *parsed;
  EXPECT_EQ(spec.path, dir.File("pipe.toml"));
  ASSERT_EQ(spec.transforms.size(), 2u);

  EXPECT_EQ(spec.transforms[0].kind, "impute");
  EXPECT_EQ(spec.transforms[0].params, json({{"strategy", "median"}}));
  EXPECT_EQ(spec.transforms[0].line, 2);
  EXPECT_EQ(spec.transforms[0].column, 1);
  EXPECT_EQ(spec.transforms[0].keys.at("kind").line, 3);
  EXPECT_EQ(spec.transforms[0].keys.at("strategy").line, 4);
  EXPECT_EQ(spec.transforms[0].keys.at("strategy").column, 1);

  EXPECT_EQ(spec.transforms[1].kind, "poly");
  EXPECT_EQ(spec.transforms[1].params, json::parse(R"({"degree": [2, 3], "interaction_only": false,
                            "columns": ["age", "income"]})"));
  EXPECT_EQ(spec.transforms[1].line, 6);
  EXPECT_EQ(spec.transforms[1].keys.at("columns").line, 10);

  EXPECT_EQ(spec.learner.kind, "ridge");
  EXPECT_EQ(spec.learner.params, json::parse(R"({"l2": [0.1, 1.0, 10.0]})"));
  EXPECT_EQ(spec.learner.line, 12);

  ASSERT_TRUE(spec.select.has_value());
  EXPECT_EQ(spec.select->folds, 5);
  EXPECT_FALSE(spec.select->validation.has_value());
  EXPECT_EQ(spec.select->metric, "mse");
  EXPECT_EQ(spec.select->seed, 7u);
  EXPECT_EQ(spec.select->line, 16);
}

TEST(ParseSpecTest, IntegersFloatsAndBooleansKeepTheirTypes) {
  PipelineSpec spec = MustParse(kValidSpec);
  const json& poly = spec.transforms[1].params;
  EXPECT_TRUE(poly["degree"][0].is_number_integer());
  EXPECT_TRUE(poly["interaction_only"].is_boolean());
  for (const json& v : spec.learner.params["l2"]) EXPECT_TRUE(v.is_number_float()) << v;
}

TEST(ParseSpecTest, NestedBaseTableBecomesANestedObject) {
  PipelineSpec inline_form = MustParse(R"([learner]
kind = "bagging"
estimators = 25
base = { kind = "knn", k = 3 }
)");
  PipelineSpec table_form = MustParse(R"([learner]
kind = "bagging"
estimators = 25

[learner.base]
kind = "knn"
k = 3
)");
  json want = json::parse(R"({"estimators": 25, "base": {"kind": "knn", "k": 3}})");
  EXPECT_EQ(inline_form.learner.params, want);
  EXPECT_EQ(table_form.learner.params, want);
  EXPECT_EQ(inline_form.learner.keys.at("base.k").line, 4);
  EXPECT_EQ(inline_form.learner.keys.at("base.k").column, 24);
  EXPECT_EQ(table_form.learner.keys.at("base.k").line, 7);
  EXPECT_FALSE(inline_form.select.has_value());
  EXPECT_TRUE(inline_form.transforms.empty());
}

TEST(ParseSpecTest, ValidationFractionInsteadOfFolds) {
  PipelineSpec spec = MustParse("[learner]\nkind = \"ridge\"\n[select]\nvalidation = 0.25\n");
  ASSERT_TRUE(spec.select.has_value());
  EXPECT_FALSE(spec.select->folds.has_value());
  EXPECT_EQ(spec.select->validation, 0.25);
  EXPECT_EQ(spec.select->metric, "");
  EXPECT_EQ(spec.select->seed, 0u);
}

TEST(ParseSpecTest, MissingFileIsNotFound) {
  testing::TempDir dir;
  Result<PipelineSpec> spec = ParseSpecFile(dir.File("absent.toml"));
  ASSERT_FALSE(spec.ok());
  EXPECT_TRUE(spec.status().IsNotFound());
  EXPECT_STARTS_WITH(spec.status().message(), dir.File("absent.toml") + ": ");
}

// ---------------------------------------------------------------------------
// Grid expansion

TEST(ExpandGridTest, ThreeByTwoGridGivesSixCandidatesLastAxisFastest) {
  PipelineSpec spec = MustParse(kValidSpec);
  EXPECT_EQ(GridSize(spec), 6u);
  std::vector<Candidate> grid = ExpandGrid(spec);
  ASSERT_EQ(grid.size(), 6u);
  // Axes: transform[1].degree, then learner.l2 (transforms before the learner).
  const std::vector<std::pair<int, double>> want = {{2, 0.1}, {2, 1.0}, {2, 10.0},
                                                    {3, 0.1}, {3, 1.0}, {3, 10.0}};
  for (size_t i = 0; i < grid.size(); ++i) {
    const Candidate& c = grid[i];
    EXPECT_EQ(c.settings,
              json({{"learner.l2", want[i].second}, {"transform[1].degree", want[i].first}}))
        << i;
    EXPECT_EQ(c.transforms[1].params, json({{"degree", want[i].first},
                                            {"interaction_only", false},
                                            {"columns", {"age", "income"}}}));
    EXPECT_EQ(c.learner.params, json({{"l2", want[i].second}}));
    EXPECT_EQ(c.transforms[0].params, spec.transforms[0].params);
    EXPECT_EQ(c.learner.kind, "ridge");
  }
}

TEST(ExpandGridTest, NoGridGivesOneCandidateWithEmptySettings) {
  PipelineSpec spec =
      MustParse("[[transform]]\nkind = \"standardize\"\n[learner]\nkind = \"ridge\"\nl2 = 1.0\n");
  std::vector<Candidate> grid = ExpandGrid(spec);
  ASSERT_EQ(grid.size(), 1u);
  EXPECT_EQ(grid[0].settings, json::object());
  EXPECT_EQ(grid[0].learner.params, json({{"l2", 1.0}}));
}

TEST(ExpandGridTest, AxesInsideTheBaseAndListsOfColumnLists) {
  PipelineSpec spec = MustParse(R"([[transform]]
kind = "standardize"
columns = [["age"], ["age", "income"]]

[learner]
kind = "bagging"
base = { kind = "knn", k = [1, 5] }
)");
  std::vector<Candidate> grid = ExpandGrid(spec);
  ASSERT_EQ(grid.size(), 4u);
  EXPECT_EQ(grid[0].settings, json::parse(R"({"transform[0].columns": ["age"],
                                              "learner.base.k": 1})"));
  EXPECT_EQ(grid[1].learner.params, json::parse(R"({"base": {"kind": "knn", "k": 5}})"));
  EXPECT_EQ(grid[3].transforms[0].params, json::parse(R"({"columns": ["age", "income"]})"));
  EXPECT_OK(ValidateSpec(spec, kColumns));
}

// ---------------------------------------------------------------------------
// Validation that passes

TEST(ValidateSpecTest, ValidSpecPasses) {
  EXPECT_OK(ValidateSpec(MustParse(kValidSpec), kColumns));
}

TEST(ValidateSpecTest, ColumnsMadeByEarlierStepsAreKnown) {
  EXPECT_EQ(ValidateError(R"([[transform]]
kind = "onehot"
columns = ["color"]
[[transform]]
kind = "poly"
columns = ["age", "income"]
[[transform]]
kind = "pca"
components = 2
columns = ["age^2", "age*income", "color=red"]
[[transform]]
kind = "standardize"
columns = ["pc1", "pc2"]
[learner]
kind = "ridge"
)"),
            "");
}

TEST(ValidateSpecTest, EmptyColumnListSkipsTheColumnCheck) {
  EXPECT_OK(ValidateSpec(MustParse("[[transform]]\nkind = \"minmax\"\ncolumns = [\"anything\"]\n"
                                   "[learner]\nkind = \"ridge\"\n"),
                         {}));
}

TEST(ValidateSpecTest, EveryExampleInTheDocsIsValid) {
  std::string doc = testing::ReadFile(testing::TestDataDir() + "/../../docs/pipelines.md");
  std::vector<uint64_t> sizes;
  for (size_t at = doc.find("```toml\n"); at != std::string::npos;
       at = doc.find("```toml\n", at + 1)) {
    size_t begin = at + 8;
    std::string text = doc.substr(begin, doc.find("```", begin) - begin);
    Result<PipelineSpec> spec = ParseSpecText(text, "pipelines.md");
    ASSERT_OK(spec);
    EXPECT_OK(ValidateSpec(*spec, {}));
    sizes.push_back(ExpandGrid(*spec).size());
  }
  // The counts the page states; the blend example (the second) has no grid.
  EXPECT_EQ(sizes, (std::vector<uint64_t>{3, 1, 12, 2}));
}

// ---------------------------------------------------------------------------
// Errors, each pointing at the file, line and column

TEST(SpecErrorTest, TomlSyntaxError) {
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = = \"ridge\"\n"),
                     "spec.toml:2:8: TOML syntax error: ");
}

TEST(SpecErrorTest, UnknownTopLevelKey) {
  EXPECT_EQ(ParseError("[learner]\nkind = \"ridge\"\n\n[modle]\nx = 1\n"),
            "spec.toml:4:2: unknown top-level key 'modle'; expected [[transform]], [learner] or "
            "[select]");
  EXPECT_STARTS_WITH(ParseError("seed = 3\n[learner]\nkind = \"ridge\"\n"),
                     "spec.toml:1:1: unknown top-level key 'seed'");
}

TEST(SpecErrorTest, TransformTablesMustBeAnArrayOfTables) {
  EXPECT_STARTS_WITH(ParseError("[transform]\nkind = \"impute\"\n[learner]\nkind = \"ridge\"\n"),
                     "spec.toml:1:2: 'transform' must be [[transform]] tables, got a table");
  EXPECT_STARTS_WITH(ParseError("[[learner]]\nkind = \"ridge\"\n"),
                     "spec.toml:1:3: 'learner' must be a single [learner] table");
}

TEST(SpecErrorTest, MissingKind) {
  EXPECT_EQ(ParseError("[learner]\nkind = \"ridge\"\n[[transform]]\nstrategy = \"median\"\n"),
            "spec.toml:3:1: [[transform]] table has no 'kind'; expected kind = one of impute, "
            "standardize, minmax, onehot, poly, pca, select_variance, select_topk");
  EXPECT_STARTS_WITH(ParseError("[learner]\nl2 = 1.0\n"),
                     "spec.toml:1:1: [learner] table has no 'kind'");
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = 3\n"),
                     "spec.toml:2:1: 'kind' must be a non-empty string, got an integer");
}

TEST(SpecErrorTest, MissingLearner) {
  EXPECT_STARTS_WITH(ParseError("[[transform]]\nkind = \"impute\"\n"),
                     "spec.toml:1:1: no [learner] table");
}

TEST(SpecErrorTest, UnknownTransformKind) {
  EXPECT_EQ(ValidateError("[[transform]]\nkind = \"normalise\"\n[learner]\nkind = \"ridge\"\n"),
            "spec.toml:2:1: unknown transform kind 'normalise'; expected one of impute, "
            "standardize, minmax, onehot, poly, pca, select_variance, select_topk");
}

TEST(SpecErrorTest, UnknownParameter) {
  EXPECT_EQ(ValidateError("[[transform]]\nkind = \"impute\"\n  strat = \"median\"\n"
                          "[learner]\nkind = \"ridge\"\n"),
            "spec.toml:3:3: transform[0]: transform 'impute': unknown parameter 'strat'; expected "
            "one of strategy, fill, columns");
}

TEST(SpecErrorTest, MistypedParameter) {
  EXPECT_EQ(ValidateError("[[transform]]\nkind = \"standardize\"\n[[transform]]\nkind = \"poly\"\n"
                          "degree = \"two\"\n[learner]\nkind = \"ridge\"\n"),
            "spec.toml:5:1: transform[1]: transform 'poly': parameter 'degree' must be an "
            "integer, got \"two\"");
}

TEST(SpecErrorTest, BadGridValueNamesTheGridPoint) {
  EXPECT_EQ(ValidateError("[[transform]]\nkind = \"poly\"\ndegree = [2, 5]\n"
                          "[learner]\nkind = \"ridge\"\n"),
            "spec.toml:3:1: transform[0]: transform 'poly': parameter 'degree' must be between 2 "
            "and 3, got 5 (grid point {\"transform[0].degree\":5})");
}

TEST(SpecErrorTest, UnknownLearnerKind) {
  EXPECT_EQ(ValidateError("[learner]\nkind = \"forest\"\n"),
            "spec.toml:2:1: unknown learner kind 'forest'; expected one of linear, ridge, "
            "logistic, pocket, knn, stump, bagging, adaboost, blend");
}

TEST(SpecErrorTest, MistypedLearnerParameter) {
  EXPECT_STARTS_WITH(ValidateError("[learner]\nkind = \"ridge\"\nl2 = \"high\"\n"),
                     "spec.toml:3:1: learner: learner 'ridge': parameter 'l2' must be ");
}

TEST(SpecErrorTest, BadLearnerGridValueNamesTheGridPoint) {
  std::string m = ValidateError("[learner]\nkind = \"ridge\"\nl2 = [1.0, -1.0]\n");
  EXPECT_STARTS_WITH(m, "spec.toml:3:1: learner: learner 'ridge': parameter 'l2' ");
  EXPECT_NE(m.find("(grid point {\"learner.l2\":-1.0})"), std::string::npos) << m;
}

TEST(SpecErrorTest, UnknownParameterOfTheBaseLearnerPointsInsideTheTable) {
  EXPECT_STARTS_WITH(
      ValidateError("[learner]\nkind = \"bagging\"\nbase = { kind = \"knn\", kk = 3 }\n"),
      "spec.toml:3:24: learner: learner 'bagging': parameter 'base': ");
}

TEST(SpecErrorTest, UnknownColumn) {
  EXPECT_EQ(ValidateError("[[transform]]\nkind = \"standardize\"\ncolumns = [\"age\", \"incme\"]\n"
                          "[learner]\nkind = \"ridge\"\n"),
            "spec.toml:3:1: transform[0] (standardize): unknown column 'incme'; expected one of "
            "age, color, income");
  // An onehot column name is known only after the onehot step.
  EXPECT_STARTS_WITH(
      ValidateError("[[transform]]\nkind = \"minmax\"\ncolumns = [\"color=red\"]\n"
                    "[[transform]]\nkind = \"onehot\"\n[learner]\nkind = \"ridge\"\n"),
      "spec.toml:3:1: transform[0] (minmax): unknown column 'color=red'");
}

TEST(SpecErrorTest, BothFoldsAndValidation) {
  EXPECT_EQ(ParseError("[learner]\nkind = \"ridge\"\n[select]\nfolds = 5\nvalidation = 0.2\n"),
            "spec.toml:5:1: [select] has both 'folds' and 'validation'; expected one of them");
}

TEST(SpecErrorTest, TooFewFolds) {
  EXPECT_EQ(ParseError("[learner]\nkind = \"ridge\"\n[select]\nfolds = 1\n"),
            "spec.toml:4:1: 'folds' is 1; expected at least 2");
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = \"ridge\"\n[select]\nfolds = 2.5\n"),
                     "spec.toml:4:1: 'folds' must be an integer, got a float");
}

TEST(SpecErrorTest, ValidationOutsideTheOpenUnitInterval) {
  EXPECT_EQ(ParseError("[learner]\nkind = \"ridge\"\n[select]\nvalidation = 1.0\n"),
            "spec.toml:4:1: 'validation' is 1.0; expected a fraction strictly between 0 and 1");
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = \"ridge\"\n[select]\nvalidation = 0\n"),
                     "spec.toml:4:1: 'validation' is 0;");
}

TEST(SpecErrorTest, UnknownMetric) {
  EXPECT_EQ(ParseError("[learner]\nkind = \"ridge\"\n[select]\nmetric = \"rmse\"\n"),
            "spec.toml:4:1: unknown metric 'rmse'; expected one of error_rate, accuracy, "
            "balanced_accuracy, log_loss, brier, auc, mse, mae");
}

TEST(SpecErrorTest, UnknownSelectKeyAndNegativeSeed) {
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = \"ridge\"\n[select]\nfold = 5\n"),
                     "spec.toml:4:1: unknown key 'fold' in [select]");
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = \"ridge\"\n[select]\nseed = -1\n"),
                     "spec.toml:4:1: 'seed' must be a non-negative integer");
}

TEST(SpecErrorTest, DatesAndEmptyArraysAreNotParameterValues) {
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = \"ridge\"\nwhen = 1979-05-27\n"),
                     "spec.toml:3:1: 'when' is a date/time");
  EXPECT_STARTS_WITH(ParseError("[learner]\nkind = \"ridge\"\nl2 = []\n"),
                     "spec.toml:3:1: 'l2' is an empty array");
}

TEST(SpecErrorTest, TooManyCandidates) {
  std::string a, b;
  for (int i = 0; i < 100; ++i) a += (i ? ", " : "") + std::to_string(i);
  for (int i = 0; i < 101; ++i) b += (i ? ", " : "") + std::to_string(i);
  std::string text = "[learner]\nkind = \"ridge\"\nb = [" + b + "]\na = [" + a + "]\n";
  EXPECT_EQ(GridSize(MustParse(text)), 10100u);
  // The first axis is learner.a (keys in name order), on line 4.
  EXPECT_EQ(ValidateError(text),
            "spec.toml:4:1: the grid has 10100 candidates; expected at most 10000");
}

}  // namespace
}  // namespace unseen
