// The classic leak of tuning on the scored fold: in model selection every transform is refitted
// inside every fold, so a feature choice (or a scaler) never sees the rows it is scored on.
#include <gtest/gtest.h>

#include <vector>

#include "harness/pipeline/pipeline.h"
#include "harness/pipeline/spec.h"
#include "harness/sampling/random.h"
#include "harness/workflow/fit_steps.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

constexpr const char* kSpec = R"(
[[transform]]
kind = "select_topk"
k = 1
[learner]
kind = "linear"
)";

// Rows 0-99 are fold 0 and rows 100-199 fold 1. On fold 1 the target is feature a; on fold 0 it
// is ten times feature b. Over all rows b correlates far better with the target, so a feature
// choice that saw fold 0 keeps b; one made on fold 1 alone keeps a.
AdmittedData TwoRegimes(std::vector<int>* fold) {
  Random random(11);
  AdmittedData d;
  d.features.columns = {FrameColumn{"a", true, {}, {}}, FrameColumn{"b", true, {}, {}}};
  std::vector<double> y;
  for (int i = 0; i < 200; ++i) {
    const double u = 2 * random.NextDouble() - 1, noise = 0.01 * (2 * random.NextDouble() - 1);
    const bool scored = i < 100;
    d.features.columns[0].num.push_back(scored ? noise : u);
    d.features.columns[1].num.push_back(scored ? u : noise);
    y.push_back(scored ? 10 * u : u);
    fold->push_back(scored ? 0 : 1);
  }
  d.target = Eigen::Map<Eigen::VectorXd>(y.data(), static_cast<Eigen::Index>(y.size()));
  d.labelled = true;
  return d;
}

std::vector<size_t> Rows(size_t from, size_t to) {
  std::vector<size_t> r;
  for (size_t i = from; i < to; ++i) r.push_back(i);
  return r;
}

TEST(FoldScoringTest, TransformsInsideAFoldNeverSeeTheScoredRows) {
  std::vector<int> fold;
  const AdmittedData d = TwoRegimes(&fold);
  Result<PipelineSpec> spec = ParseSpecText(kSpec, "spec.toml");
  ASSERT_OK(spec.status());
  const Candidate c = ExpandGrid(*spec)[0];
  Result<double> scored =
      internal::ScoreOnFold(c, d, fold, 0, Metric::kMse, LearnTask::kRegression, 0);
  ASSERT_OK(scored.status());

  // By hand, without the scored rows: the choice falls on a, which says nothing about fold 0.
  const Eigen::VectorXd y_train = d.target.tail(100), y_test = d.target.head(100);
  Result<FittedPipeline> honest =
      FitPipeline(c, d.features.Select(Rows(100, 200)), y_train, LearnTask::kRegression, 0);
  ASSERT_OK(honest.status());
  EXPECT_EQ(honest->ToJson()["transforms"][0]["fitted"]["state"]["kept"], nlohmann::json({"a"}));
  Result<Predictions> p = honest->Predict(d.features.Select(Rows(0, 100)));
  ASSERT_OK(p.status());
  Result<double> want = Score(Metric::kMse, y_test, *p, 0);
  ASSERT_OK(want.status());
  EXPECT_DOUBLE_EQ(*scored, *want);
  EXPECT_GT(*scored, 10.0);  // about the variance of 10u: what explains fold 0 was left out

  // The leak, for contrast: a choice made on all rows keeps b, and fold 0 looks solved.
  Result<FittedPipeline> leaky = FitPipeline(c, d.features, d.target, LearnTask::kRegression, 0);
  ASSERT_OK(leaky.status());
  EXPECT_EQ(leaky->ToJson()["transforms"][0]["fitted"]["state"]["kept"], nlohmann::json({"b"}));
}

}  // namespace
}  // namespace unseen
