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
  uint64_t missing = 0;  // cells that are empty, NA or NaN
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

struct SourceInfo {
  std::string path;          // as given to init
  Digest256 file_sha256{};
  uint64_t file_size = 0;
  char delimiter = ',';
  uint64_t rows = 0;
  std::vector<ColumnInfo> columns;
  TaskKind task = TaskKind::kClassification;
  TargetSummary target;
  int row_digest_format = 1;
  Digest256 merkle_root{};   // RFC 6962 root over the row digests, in row order

  // Column index of a role, if the source has one.
  std::optional<size_t> ColumnOf(ColumnRole role) const;
  std::optional<size_t> ColumnNamed(const std::string& name) const;
};

// The `source` entry's fields (a JSON object text), without blob references.
std::string SourceToJson(const SourceInfo& s);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_SOURCE_H_
