// SummarizeRows: the figures published over a set of rows, counted from those rows only, and
// their JSON form read back.
#include "harness/data/row_summary.h"

#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

SourceInfo Source(TaskKind task) {
  SourceInfo s;
  s.columns = {{"id", ColumnType::kCategorical, ColumnRole::kId, 0},
               {"x", ColumnType::kNumeric, ColumnRole::kFeature, 0},
               {"label", ColumnType::kCategorical, ColumnRole::kTarget, 0}};
  s.task = task;
  return s;
}

std::unique_ptr<CsvFile> Csv(const std::string& text) {
  auto csv = CsvFile::FromBytes("t.csv", text, CsvOptions{});
  EXPECT_TRUE(csv.ok()) << csv.status().ToString();
  return std::move(*csv);
}

TEST(RowSummaryTest, ClassCountsAndMissingCellsOfTheListedRowsOnly) {
  // Rows 0..5; rows 1, 3 and 4 are summarised. Row 5 (label c, never read) must not count.
  auto csv = Csv("id,x,label\na,1,1\nb,NA,1.0\nc,,x\nd,2,x\ne,NaN,1e0\nf,3,c\n");
  auto s = SummarizeRows(*csv, Source(TaskKind::kClassification), {1, 3, 4});
  ASSERT_OK(s);
  EXPECT_EQ(s->rows, 3u);
  EXPECT_EQ(s->missing, (std::vector<uint64_t>{0, 2, 0}));
  // "1.0" and "1e0" are one label, spelled canonically.
  EXPECT_EQ(s->target.classes, (std::map<std::string, uint64_t>{{"1", 2}, {"x", 1}}));
  EXPECT_EQ(RowsSummaryToJson(*s),
            R"({"missing":[0,2,0],"rows":3,"target":{"classes":{"1":2,"x":1}}})");
}

TEST(RowSummaryTest, RegressionRangeAndMeanOfTheListedRows) {
  auto csv = Csv("id,x,label\na,1,10\nb,2,-2.5\nc,3,100\nd,4,0.5\n");
  auto s = SummarizeRows(*csv, Source(TaskKind::kRegression), {0, 1, 3});
  ASSERT_OK(s);
  EXPECT_EQ(s->target.min, -2.5);
  EXPECT_EQ(s->target.max, 10);
  EXPECT_EQ(s->target.mean, (10 - 2.5 + 0.5) / 3);  // the sum in row order, over the count
  auto back = RowsSummaryFromJson(RowsSummaryToJson(*s), 3);
  ASSERT_OK(back);
  EXPECT_EQ(back->task, TaskKind::kRegression);
  EXPECT_EQ(RowsSummaryToJson(*back), RowsSummaryToJson(*s));
}

TEST(RowSummaryTest, ATextTargetInARegressionIsAnErrorAtItsCell) {
  auto csv = Csv("id,x,label\na,1,10\nb,2,tall\n");
  auto s = SummarizeRows(*csv, Source(TaskKind::kRegression), {0, 1});
  ASSERT_FALSE(s.ok());
  EXPECT_NE(s.status().message().find("t.csv:3:"), std::string::npos) << s.status().ToString();
}

TEST(RowSummaryTest, MalformedJsonNamesTheField) {
  EXPECT_NE(RowsSummaryFromJson(R"({"rows":1,"missing":[0],"target":{}})", 2)
                .status()
                .message()
                .find("'missing'"),
            std::string::npos);
  EXPECT_NE(RowsSummaryFromJson(R"({"rows":1,"missing":[0],"target":{"min":1}})", 1)
                .status()
                .message()
                .find("'target.max'"),
            std::string::npos);
  EXPECT_FALSE(RowsSummaryFromJson("[]", 0).ok());
}

}  // namespace
}  // namespace unseen
