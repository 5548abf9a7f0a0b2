#include "harness/data/row_matcher.h"

#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "storage/digest.h"

namespace unseen {
namespace {

// A row as the matcher sees it: content bytes with a target cell in the middle.
struct Row {
  std::string before, target, after;
  std::string Content() const { return before + target + after; }
  std::string Features() const { return before + after; }
};

std::string Digests(const std::vector<std::string>& texts) {
  std::string out;
  for (const std::string& t : texts) {
    const RowDigest d = TruncateToRowDigest(Sha256Of(t));
    out.append(reinterpret_cast<const char*>(d.data()), d.size());
  }
  return out;
}

void AddRow(const Row& r, uint64_t line, MatchBatch* b) {
  b->target_begin.push_back(static_cast<uint32_t>(b->bytes.size() + r.before.size()));
  b->target_end.push_back(
      static_cast<uint32_t>(b->bytes.size() + r.before.size() + r.target.size()));
  b->bytes += r.Content();
  b->ends.push_back(static_cast<uint32_t>(b->bytes.size()));
  b->lines.push_back(line);
}

// The source (rows in order) and its holdout (row numbers, ascending), as the ledger holds them.
class Source {
 public:
  Source(std::vector<Row> rows, std::vector<uint32_t> holdout_rows)
      : rows_(std::move(rows)), holdout_(RowSet::FromSorted(holdout_rows)) {
    std::vector<std::string> content, features;
    for (const Row& r : rows_) content.push_back(r.Content());
    for (uint32_t h : holdout_rows) features.push_back(rows_[h].Features());
    content_blob_ = Digests(content);
    feature_blob_ = Digests(features);
    content_ = std::make_unique<DigestIndex>(content_blob_);
    features_ = std::make_unique<DigestIndex>(feature_blob_);
  }

  // Matches `file` (lines from 2) in batches of RowMatcher::kBatchRows rows.
  MatchResult Match(const std::vector<Row>& file, bool by_content, bool dev_required) const {
    RowMatcher m(*content_, *features_, holdout_, rows_.size(), by_content, dev_required);
    std::unique_ptr<MatchBatch> b = m.NewBatch();
    for (size_t i = 0; i < file.size(); ++i) {
      AddRow(file[i], i + 2, b.get());
      if (b->rows() == RowMatcher::kBatchRows) {
        m.Add(std::move(b));
        b = m.NewBatch();
      }
    }
    if (b->rows() > 0) m.Add(std::move(b));
    return m.Finish();
  }

 private:
  std::vector<Row> rows_;
  RowSet holdout_;
  std::string content_blob_, feature_blob_;
  std::unique_ptr<DigestIndex> content_, features_;
};

const Row kA{"a1", "|0|", "a2"}, kB{"b1", "|1|", "b2"}, kC{"c1", "|0|", "c2"};

TEST(RowMatcherTest, DuplicatesAreMatchedToTheNextUnusedDevRowInRowOrder) {
  // Rows 0 and 2 are the same; row 3 is the holdout.
  const Source src({kA, kB, kA, kC}, {3});
  MatchResult r = src.Match({kA, kA, kB}, true, true);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 2, 1}));
  EXPECT_TRUE(r.every_row_dev);
  EXPECT_EQ(r.holdout_rows, 0u);
  EXPECT_EQ(r.other_rows, 0u);
  // A third copy has no dev row left: it is not a development row.
  r = src.Match({kA, kA, kA}, true, true);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 2}));
  EXPECT_FALSE(r.every_row_dev);
  EXPECT_EQ(r.other_rows, 1u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{4}));
}

TEST(RowMatcherTest, HoldoutRowsAreFoundByContentAndByFeatures) {
  const Source src({kA, kB, kC}, {2});
  Row relabelled = kC;
  relabelled.target = "|1|";  // the holdout row's features under another label
  const MatchResult r = src.Match({kA, kC, kB, relabelled}, true, true);
  EXPECT_EQ(r.holdout_rows, 2u);
  EXPECT_EQ(r.other_rows, 0u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{3, 5}));
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 1}));
}

TEST(RowMatcherTest, AnExactDuplicateOfADevRowIsThatDevRow) {
  // Row 1 (dev) and row 2 (holdout) are the same row.
  const Source src({kA, kB, kB}, {2});
  const MatchResult r = src.Match({kB}, true, true);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{1}));
  EXPECT_EQ(r.holdout_rows, 0u);
}

TEST(RowMatcherTest, WithoutContentRowsAreMatchedByFeaturesOnly) {
  const Source src({kA, kB, kC}, {2});
  Row unlabelled = kC;
  unlabelled.target = "";
  const MatchResult r = src.Match({kA, unlabelled}, false, false);
  EXPECT_TRUE(r.dev_rows.empty());
  EXPECT_FALSE(r.every_row_dev);
  EXPECT_EQ(r.holdout_rows, 1u);
  EXPECT_EQ(r.other_rows, 0u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{3}));
}

TEST(RowMatcherTest, ManyBatchesGiveTheResultOfOneOrderedPass) {
  // 3 batches and a part; rows of equal and unequal lengths (hashed in pairs or alone).
  std::vector<Row> rows;
  for (int i = 0; i < 3 * static_cast<int>(RowMatcher::kBatchRows) + 77; ++i) {
    rows.push_back(Row{"r" + std::to_string(i), "|" + std::to_string(i % 2) + "|", "x"});
  }
  std::vector<uint32_t> holdout;
  for (uint32_t i = 5; i < rows.size(); i += 1000) holdout.push_back(i);
  const Source src(rows, holdout);
  std::vector<Row> file;
  std::vector<uint32_t> want_dev;
  for (uint32_t i = static_cast<uint32_t>(rows.size()); i-- > 0;) {  // the source backwards
    file.push_back(rows[i]);
    if (i % 1000 != 5) want_dev.push_back(i);
  }
  const MatchResult r = src.Match(file, true, true);
  EXPECT_EQ(r.dev_rows, want_dev);
  EXPECT_EQ(r.holdout_rows, holdout.size());
  ASSERT_EQ(r.first_lines.size(), 5u);
  // The last holdout row comes first in the backwards file.
  EXPECT_EQ(r.first_lines[0], rows.size() - holdout.back() + 1);
}

}  // namespace
}  // namespace unseen
