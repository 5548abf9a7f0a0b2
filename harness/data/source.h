// A registered source: the facts `init` learns about a CSV file, and their
// JSON form (the ledger's `source` entry keeps it; harness/ledger/entries.h
// reads it back).
// Plain values; thread-compatible.
#ifndef UNSEEN_HARNESS_DATA_SOURCE_H_
#define UNSEEN_HARNESS_DATA_SOURCE_H_

#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

// Written to the ledger by name ("numeric", "categorical"); append only.
enum class ColumnType { kNumeric, kCategorical };
// Written to the ledger by name ("feature", "target", "id", "group", "time").
enum class ColumnRole { kFeature, kTarget, kId, kGroup, kTime };
// Written to the ledger by name ("classification", "regression").
enum class TaskKind { kClassification, kRegression };

const char* ColumnTypeName(ColumnType t);
const char* ColumnRoleName(ColumnRole r);
const char* TaskKindName(TaskKind t);
// The inverses of the names above. Unknown names read as categorical and
// feature, as ledgers have always been read.
ColumnType ColumnTypeFromName(std::string_view name);
ColumnRole ColumnRoleFromName(std::string_view name);
Result<TaskKind> ParseTaskKind(std::string_view name);

struct ColumnInfo {
  std::string name;
  ColumnType type = ColumnType::kCategorical;
  ColumnRole role = ColumnRole::kFeature;
  uint64_t missing = 0;  // cells that are empty, NA or NaN (see SourceInfo::target)
};

// The column names given to `init` for each role; empty means none.
struct SourceRoles {
  std::string target;
  std::string id;
  std::string group;
  std::string time;
};

struct TargetSummary {
  // Classification: label -> row count, labels in their canonical spelling
  // (a number by its shortest round-trip form, text as is).
  std::map<std::string, uint64_t> classes;
  // Regression: the range and mean of the target.
  double min = 0, max = 0, mean = 0;
};

// Figures over a set of rows of a source: how many, the missing cells of each column, and the
// target's summary. Published for the development rows (the seal entry); the same figures over
// every row are sealed with the holdout (docs/row-digests.md, "Published figures").
struct RowsSummary {
  uint64_t rows = 0;
  std::vector<uint64_t> missing;  // per source column, in column order
  TaskKind task = TaskKind::kClassification;
  TargetSummary target;
};

// The summary's JSON form (an object text): {"rows", "missing": [per column], "target":
// {"classes": {label: count}} or {"min", "max", "mean"}}. The inverse is RowsSummaryFromJson.
std::string RowsSummaryToJson(const RowsSummary& s);
// InvalidArgument naming the field when `text` is not that form, or (unless `columns` is 0)
// its missing counts are not `columns` long.
Result<RowsSummary> RowsSummaryFromJson(std::string_view text, size_t columns);

struct SourceInfo {
  std::string path;          // as given to init
  Digest256 file_sha256{};
  uint64_t file_size = 0;
  char delimiter = ',';
  uint64_t rows = 0;
  std::vector<ColumnInfo> columns;
  TaskKind task = TaskKind::kClassification;
  // Not in the `source` entry (format 2): figures over rows are published only once the
  // holdout is sealed, and then over the development rows (LedgerState fills them in from the
  // seal entry; ColumnInfo::missing likewise). Empty before the seal.
  TargetSummary target;
  int row_digest_format = 2;
  Digest256 merkle_root{};   // RFC 6962 root over the row digests, in row order

  // Column index of a role, if the source has one.
  std::optional<size_t> ColumnOf(ColumnRole role) const;
  std::optional<size_t> ColumnNamed(const std::string& name) const;
};

// The `source` entry's fields (a JSON object text): the file, its columns (name, type, role),
// row count, task, digest format and Merkle root. No per-row or label figure: neither the
// target summary nor the missing counts.
std::string SourceToJson(const SourceInfo& s);

// The summary of every row of a scanned source (its columns' missing counts and its target).
RowsSummary SummaryOfSource(const SourceInfo& s);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_SOURCE_H_
