// ValueFreeError: the guard's messages about a model that fails on the
// holdout. Each case takes the error a real pipeline step raises on rows
// holding a telltale value, and checks that the value, the row number and
// anything else of the original message are gone, while the column and the
// kind of problem remain.
#include "harness/evaluate/guard_messages.h"

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "harness/pipeline/frame.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/transform.h"

namespace unseen {
namespace {

SourceInfo Source() {
  SourceInfo s;
  s.columns = {{"id", ColumnType::kCategorical, ColumnRole::kId, 0},
               {"colour", ColumnType::kCategorical, ColumnRole::kFeature, 0},
               {"weight", ColumnType::kNumeric, ColumnRole::kFeature, 0},
               {"label", ColumnType::kCategorical, ColumnRole::kTarget, 0}};
  return s;
}

// The message holds nothing but fixed words and the source's column names.
void ExpectValueFree(const Status& s, const std::string& telltale) {
  EXPECT_EQ(s.message().find(telltale), std::string::npos) << s.message();
  EXPECT_EQ(s.message().find("row "), std::string::npos) << s.message();
  EXPECT_NE(s.message().find("no holdout value or position is shown"), std::string::npos)
      << s.message();
}

TEST(ValueFreeErrorTest, UnknownCategoryNamesTheColumnNotTheValueOrRow) {
  auto onehot = MakeTransform("onehot", {{"unknown", "error"}});
  ASSERT_TRUE(onehot.ok());
  Frame train;
  train.columns = {FrameColumn{"colour", false, {}, {"red", "blue"}}};
  ASSERT_TRUE((*onehot)->Fit(train, Eigen::VectorXd::Zero(2)).ok());
  Frame holdout;
  holdout.columns = {FrameColumn{"colour", false, {}, {"red", "blue", "ultraviolet-77"}}};
  Result<Frame> applied = (*onehot)->Apply(holdout);
  ASSERT_FALSE(applied.ok());
  // The pipeline's own message names the value and the row: fine for development rows.
  ASSERT_NE(applied.status().message().find("ultraviolet-77"), std::string::npos);
  Status s = ValueFreeError(applied.status(), Source());
  EXPECT_TRUE(s.IsInvalidArgument());
  ExpectValueFree(s, "ultraviolet-77");
  EXPECT_NE(s.message().find("column 'colour' holds a category not seen when the model was fitted"),
            std::string::npos)
      << s.message();
}

TEST(ValueFreeErrorTest, MissingValueBeforeTheLearnerNamesTheColumn) {
  Frame holdout;
  holdout.columns = {FrameColumn{"weight", true, {1.5, std::nan(""), 2.5}, {}}};
  Result<Eigen::MatrixXd> m = holdout.ToMatrix();
  ASSERT_FALSE(m.ok());
  Status s = ValueFreeError(m.status(), Source());
  ExpectValueFree(s, "1.5");
  EXPECT_NE(s.message().find("column 'weight' holds a missing value"), std::string::npos)
      << s.message();
}

TEST(ValueFreeErrorTest, CategoricalColumnAtTheLearner) {
  Frame holdout;
  holdout.columns = {FrameColumn{"colour", false, {}, {"magenta-12"}}};
  Result<Eigen::MatrixXd> m = holdout.ToMatrix();
  ASSERT_FALSE(m.ok());
  Status s = ValueFreeError(m.status(), Source());
  ExpectValueFree(s, "magenta-12");
  EXPECT_NE(s.message().find("column 'colour' is categorical"), std::string::npos) << s.message();
}

TEST(ValueFreeErrorTest, MissingValueAtPcaNamesTheColumn) {
  auto pca = MakeTransform("pca", {{"components", 1}});
  ASSERT_TRUE(pca.ok());
  Frame train;
  train.columns = {FrameColumn{"weight", true, {1.0, 2.0, 4.0}, {}}};
  ASSERT_TRUE((*pca)->Fit(train, Eigen::VectorXd::Zero(3)).ok());
  Frame holdout;
  holdout.columns = {FrameColumn{"weight", true, {7.25, std::nan("")}, {}}};
  Result<Frame> applied = (*pca)->Apply(holdout);
  ASSERT_FALSE(applied.ok());
  Status s = ValueFreeError(applied.status(), Source());
  ExpectValueFree(s, "7.25");
  EXPECT_NE(s.message().find("column 'weight' holds a missing value"), std::string::npos)
      << s.message();
}

TEST(ValueFreeErrorTest, InfiniteFeatureAtTheLearnerNamesTheColumn) {
  auto learner = MakeLearner("linear", nlohmann::json::object());
  ASSERT_TRUE(learner.ok());
  Eigen::MatrixXd x(3, 1);
  x << 1, 2, 3;
  Eigen::VectorXd y(3);
  y << 2, 4, 6;
  ASSERT_TRUE((*learner)->Fit(x, y, LearnTask::kRegression, 0, {"weight"}).ok());
  Eigen::MatrixXd holdout(2, 1);
  holdout << 5.5, std::numeric_limits<double>::infinity();
  Result<Eigen::VectorXd> p = (*learner)->Predict(holdout);
  ASSERT_FALSE(p.ok());
  Status s = ValueFreeError(p.status(), Source());
  ExpectValueFree(s, "inf");
  EXPECT_NE(s.message().find("column 'weight' holds a missing or non-finite value"),
            std::string::npos)
      << s.message();
}

TEST(ValueFreeErrorTest, NonFiniteFeatureOfADerivedColumnIsNotNamed) {
  // The learner's message; "colour=red" is a column its transforms made, not a source column.
  Status s = ValueFreeError(
      Status::InvalidArgument("learner 'logistic': feature 'colour=red' holds a missing or "
                              "infinite value"),
      Source());
  ExpectValueFree(s, "colour=red");
  EXPECT_NE(s.message().find("a column derived by its transforms holds a missing or non-finite"),
            std::string::npos)
      << s.message();
}

TEST(ValueFreeErrorTest, AnUnknownMessageKeepsNothingOfItsText) {
  Status s = ValueFreeError(
      Status::Internal("learner 'knn': predict failed: value 3.14159 at row 42 of column 'weight'"),
      Source());
  EXPECT_EQ(s.code(), StatusCode::kInternal);
  ExpectValueFree(s, "3.14159");
  EXPECT_EQ(s.message().find("42"), std::string::npos) << s.message();
  EXPECT_EQ(s.message().find("knn"), std::string::npos) << s.message();
  EXPECT_NE(s.message().find("could not be applied to the holdout rows"), std::string::npos);
}

TEST(ValueFreeErrorTest, AValueThatLooksLikeAColumnNameIsNotTakenForOne) {
  // The first quoted name after "column " is the column; a value quoted later is never read.
  Status s = ValueFreeError(
      Status::InvalidArgument("transform 'onehot': column 'colour' has value 'weight' in row 3, "
                              "not seen in the training rows"),
      Source());
  EXPECT_NE(s.message().find("column 'colour'"), std::string::npos) << s.message();
  EXPECT_EQ(s.message().find("weight"), std::string::npos) << s.message();
}

}  // namespace
}  // namespace unseen
