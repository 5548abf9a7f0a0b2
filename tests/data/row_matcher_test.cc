#include "harness/data/row_matcher.h"

#include <gtest/gtest.h>

#include <functional>
#include <string>
#include <vector>

#include "harness/data/row_digest.h"
#include "storage/digest.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

// Rows of three columns: id, a feature and the target (column 2).
using Row = std::vector<std::string_view>;
constexpr size_t kColumns = 3, kTarget = 2, kId = 0;

// The digests the ledger stores, by the definition of row_digest.h.
std::string Digests(const std::vector<Row>& rows, std::vector<size_t> skip) {
  RowDigester digester(std::move(skip));
  std::string out;
  for (const Row& r : rows) {
    const RowDigest d = digester.Digest(r);
    out.append(reinterpret_cast<const char*>(d.data()), d.size());
  }
  return out;
}

// A file with the source's columns in the source's order.
MatchLayout Identity() { return MatchLayout{',', {0, 1, 2}}; }

// The source (rows in order) and its holdout (row numbers, ascending), as the ledger holds them.
class Source {
 public:
  Source(std::vector<Row> rows, std::vector<uint32_t> holdout_rows)
      : rows_(std::move(rows)), holdout_rows_(std::move(holdout_rows)) {}

  // Matches `file` (lines from 2) in full batches and a last part.
  // With `loaded_by_matcher`, the matcher builds the tables on its own thread.
  MatchResult Match(const std::vector<Row>& file, bool by_content, bool dev_required,
                    bool loaded_by_matcher = false) const {
    // The records as a file holds them: cells joined by the delimiter.
    std::vector<std::string> records;
    for (const Row& row : file) {
      std::string line;
      for (size_t c = 0; c < row.size(); ++c) line += (c ? "," : "") + std::string(row[c]);
      records.push_back(line);
    }
    return MatchRecords(records, Identity(), by_content, dev_required, loaded_by_matcher);
  }

  // Matches records as a file holds them, mapped onto the source's columns by `layout`.
  MatchResult MatchRecords(const std::vector<std::string>& records, const MatchLayout& layout,
                           bool by_content, bool dev_required,
                           bool loaded_by_matcher = false) const {
    auto tables = [this]() -> Result<MatchTables> {
      std::vector<Row> held;
      for (uint32_t h : holdout_rows_) held.push_back(rows_[h]);
      return MatchTables{Digests(rows_, {kId}), Digests(held, {kId, kTarget}),
                         RowSet::FromSorted(holdout_rows_), {}};
    };
    std::unique_ptr<RowMatcher> made =
        loaded_by_matcher
            ? std::make_unique<RowMatcher>(tables, layout, kTarget, kId, by_content, dev_required)
            : std::make_unique<RowMatcher>(std::move(*tables()), layout, kTarget, kId, by_content,
                                           dev_required);
    RowMatcher& m = *made;
    std::unique_ptr<MatchBatch> b = m.NewBatch();
    for (size_t i = 0; i < records.size(); ++i) {
      b->AddRow(records[i], i + 2);
      if (b->full()) {
        m.Add(std::move(b));
        b = m.NewBatch();
      }
    }
    if (b->rows() > 0) m.Add(std::move(b));
    return m.Finish();
  }

 private:
  std::vector<Row> rows_;
  std::vector<uint32_t> holdout_rows_;
};

// Ids differ from the source's in the file: content digests leave the id out.
const Row kA{"id1", "apple", "0"}, kB{"id2", "2.5", "1"}, kC{"id3", "pear", "0"};

TEST(RowMatcherTest, DuplicatesAreMatchedToTheNextUnusedDevRowInRowOrder) {
  // Rows 0 and 2 are the same; row 3 is the holdout.
  const Source src({kA, kB, kA, kC}, {3});
  MatchResult r = src.Match({kA, kA, kB}, true, true);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 2, 1}));
  EXPECT_EQ(r.holdout_rows, 0u);
  EXPECT_EQ(r.other_rows, 0u);
  // A third copy has no dev row left: it is not a development row.
  r = src.Match({kA, kA, kA}, true, true);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 2}));
  EXPECT_EQ(r.other_rows, 1u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{4}));
}

TEST(RowMatcherTest, HoldoutRowsAreFoundByContentAndByFeatures) {
  const Source src({kA, kB, kC}, {2});
  Row relabelled = kC;
  relabelled[kTarget] = "1";                // the holdout row's features under another label
  const Row renamed{"copy", kC[1], kC[2]};  // the holdout row under a new id
  const MatchResult r = src.Match({kA, renamed, kB, relabelled}, true, true);
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
  unlabelled[kTarget] = "";  // the file has no target column
  const MatchResult r = src.Match({kA, unlabelled}, false, false);
  EXPECT_TRUE(r.dev_rows.empty());
  EXPECT_EQ(r.holdout_rows, 1u);
  EXPECT_EQ(r.other_rows, 0u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{3}));
}

TEST(RowMatcherTest, ManyBatchesGiveTheResultOfOneOrderedPass) {
  // 3 batches and a part; rows of equal and unequal lengths (hashed in pairs or alone), text
  // and numbers.
  std::vector<std::string> cells;
  const size_t n = 3 * MatchBatch::kRows + 77;
  for (size_t i = 0; i < n; ++i)
    cells.push_back(i % 3 ? std::to_string(i) : "t" + std::to_string(i));
  std::vector<Row> rows;
  for (size_t i = 0; i < n; ++i) rows.push_back(Row{"x", cells[i], i % 2 ? "1" : "0"});
  std::vector<uint32_t> holdout;
  for (uint32_t i = 5; i < rows.size(); i += 1000) holdout.push_back(i);
  const Source src(rows, holdout);
  std::vector<Row> file;
  std::vector<uint32_t> want_dev;
  for (uint32_t i = static_cast<uint32_t>(rows.size()); i-- > 0;) {  // the source backwards
    file.push_back(rows[i]);
    if (i % 1000 != 5) want_dev.push_back(i);
  }
  for (bool loaded_by_matcher : {false, true}) {
    const MatchResult r = src.Match(file, true, true, loaded_by_matcher);
    ASSERT_OK(r.status);
    EXPECT_EQ(r.dev_rows, want_dev);
    EXPECT_EQ(r.holdout_rows, holdout.size());
    ASSERT_EQ(r.first_lines.size(), 5u);
    // The last holdout row comes first in the backwards file.
    EXPECT_EQ(r.first_lines[0], rows.size() - holdout.back() + 1);
  }
}

TEST(RowMatcherTest, QuotedCellsAndOtherColumnOrdersAreMatchedByTheirValues) {
  const Row quoted{"id9", "a,\"b\"", "1"};
  const Source src({kA, quoted, kB, kC}, {3});
  // The file quotes the cell (a delimiter and doubled quotes inside) and puts the target
  // first: the digests are of the values, in the source's column order.
  const MatchResult r = src.MatchRecords({"0,id1,apple", "1,id9,\"a,\"\"b\"\"\"", "0,id3,pear"},
                                         MatchLayout{',', {1, 2, 0}}, true, true);
  ASSERT_OK(r.status);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 1}));
  EXPECT_EQ(r.holdout_rows, 1u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{4}));
}

// n source rows (row i is "r<i>,v<i>,<i%2>"), as cells and as a file's records.
struct Numbered {
  explicit Numbered(size_t n) {
    for (size_t i = 0; i < n; ++i) {
      ids.push_back("r" + std::to_string(i));
      values.push_back("v" + std::to_string(i));
      records.push_back(ids[i] + "," + values[i] + "," + (i % 2 ? "1" : "0"));
    }
    for (size_t i = 0; i < n; ++i) rows.push_back(Row{ids[i], values[i], i % 2 ? "1" : "0"});
  }
  // The tables of a holdout of `held` (ascending).
  std::function<Result<MatchTables>()> Tables(std::vector<uint32_t> held) const {
    return [this, held]() -> Result<MatchTables> {
      std::vector<Row> h;
      for (uint32_t i : held) h.push_back(rows[i]);
      return MatchTables{Digests(rows, {kId}), Digests(h, {kId, kTarget}),
                         RowSet::FromSorted(held), {}};
    };
  }
  std::vector<std::string> ids, values, records;
  std::vector<Row> rows;
};

// Hands `records` over as single-row batches, which would fill the queue of a matcher that
// is not matching after three.
void AddOneRowBatches(RowMatcher* m, const std::vector<std::string>& records) {
  for (size_t i = 0; i < records.size(); ++i) {
    std::unique_ptr<MatchBatch> b = m->NewBatch();
    b->AddRow(records[i], i + 2);
    m->Add(std::move(b));
  }
}

TEST(RowMatcherTest, AHeldMatcherTakesEveryBatchAndMatchesThemOnceReleased) {
  const Numbered src(20);
  RowMatcher m(src.Tables({4, 9}), Identity(), kTarget, kId, true, true, /*held=*/true);
  AddOneRowBatches(&m, src.records);  // 20 batches outstanding: none blocks
  m.Release();
  const MatchResult r = m.Finish();
  ASSERT_OK(r.status);
  std::vector<uint32_t> want;
  for (uint32_t i = 0; i < 20; ++i) {
    if (i != 4 && i != 9) want.push_back(i);
  }
  EXPECT_EQ(r.dev_rows, want);
  EXPECT_EQ(r.holdout_rows, 2u);
  EXPECT_EQ(r.first_lines, (std::vector<uint64_t>{6, 11}));
}

TEST(RowMatcherTest, AHeldMatcherThatIsStoppedMatchesNothingAndLoadsNothing) {
  const Numbered src(10);
  bool loaded = false;
  auto tables = [&]() {
    loaded = true;
    return src.Tables({3})();
  };
  RowMatcher m(tables, Identity(), kTarget, kId, true, true, /*held=*/true);
  AddOneRowBatches(&m, src.records);
  m.Stop();
  // After the hold, the queue is bounded again: further batches come back unmatched.
  AddOneRowBatches(&m, src.records);
  const MatchResult r = m.Finish();
  ASSERT_OK(r.status);
  EXPECT_TRUE(r.dev_rows.empty());
  EXPECT_EQ(r.holdout_rows, 0u);
  EXPECT_FALSE(loaded);
}

TEST(RowMatcherTest, FinishMatchesWhatAHeldMatcherWasGiven) {
  const Numbered src(8);
  RowMatcher m(src.Tables({7}), Identity(), kTarget, kId, true, true, /*held=*/true);
  AddOneRowBatches(&m, src.records);
  const MatchResult r = m.Finish();
  ASSERT_OK(r.status);
  EXPECT_EQ(r.dev_rows, (std::vector<uint32_t>{0, 1, 2, 3, 4, 5, 6}));
  EXPECT_EQ(r.holdout_rows, 1u);
}

TEST(RowMatcherTest, TablesThatCannotBeLoadedFailTheMatchAndMatchNothing) {
  RowMatcher m([]() -> Result<MatchTables> { return Status::Corruption("blob damaged"); },
               Identity(), kTarget, kId, true, true);
  // Batches are still taken (the reader is not blocked), and come back unmatched.
  for (int i = 0; i < 5; ++i) {
    std::unique_ptr<MatchBatch> b = m.NewBatch();
    b->AddRow("id1,apple,0", 2);
    m.Add(std::move(b));
  }
  const MatchResult r = m.Finish();
  EXPECT_TRUE(r.status.IsCorruption()) << r.status.ToString();
  EXPECT_TRUE(r.dev_rows.empty());
  EXPECT_EQ(r.holdout_rows, 0u);
  EXPECT_EQ(r.other_rows, 0u);
}

}  // namespace
}  // namespace unseen
