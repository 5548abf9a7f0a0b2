// ScanSource: one streaming pass over a CSV that learns what `init`
// registers: the file's SHA-256 and size, column types and roles, the task,
// a row digest (and content digest) per row, and their Merkle root.
// Memory grows with the row count (16 bytes a row per digest list), never
// with the file size. Thread-compatible; uses a second thread internally.
#ifndef UNSEEN_HARNESS_DATA_SOURCE_SCAN_H_
#define UNSEEN_HARNESS_DATA_SOURCE_SCAN_H_

#include <functional>
#include <optional>
#include <string>
#include <vector>

#include "harness/data/csv.h"
#include "harness/data/source.h"
#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct ScanOptions {
  CsvOptions csv;
  SourceRoles roles;
  // The task; nullopt infers it: a target whose values are all integers
  // with at most kMaxAutoClasses distinct values, or any text, makes a
  // classification task; other numeric targets make a regression task.
  std::optional<TaskKind> task;
  // Called now and then with the fraction of the file read; may be empty.
  std::function<void(double)> progress;
};

inline constexpr size_t kMaxAutoClasses = 20;
// More distinct labels than this is refused for classification.
inline constexpr size_t kMaxClasses = 65536;

struct SourceScan {
  SourceInfo info;
  std::vector<RowDigest> row_digests;      // one per row, all columns
  std::vector<RowDigest> content_digests;  // one per row without the id; empty when there is no id
};

// Reads `path`. InvalidArgument ("FILE:LINE:COL: ...") for malformed CSV, a
// role naming no column (or two roles on one column), a missing target, id,
// group or time value, a duplicate id, a non-numeric target in a regression
// task, or too many classes.
Result<SourceScan> ScanSource(const std::string& path, const ScanOptions& options);

// The canonical spelling of a label: a number by its shortest round-trip
// form ("1", "2.5"), text as is.
std::string CanonicalLabel(std::string_view cell);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_SOURCE_SCAN_H_
