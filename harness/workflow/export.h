// ExportRows: the `export` command. Writes the development rows (and,
// optionally, K fold files of them) for training outside the tool, and
// records an `export` entry with the row sets written. Holdout rows are
// never written. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_EXPORT_H_
#define UNSEEN_HARNESS_WORKFLOW_EXPORT_H_

#include <string>
#include <vector>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

// The column added when the source has no id column: the source row number.
inline constexpr const char* kRowColumn = "unseen_row";

struct ExportRequest {
  std::string ledger_path, out_path, actor;
  std::string data_path;  // empty: the source file registered at init
  int folds = 0;          // 0: no fold files
  std::string out_dir;    // where fold_1.csv ... fold_K.csv go
  uint64_t seed = 0;
};

struct ExportedFile {
  std::string path;
  Digest256 sha256{};
  uint64_t rows = 0;
  Digest256 row_set{};
};

struct ExportReport {
  ExportedFile all;
  std::vector<ExportedFile> folds;
  Digest256 head{};
};

// InvalidArgument for a data file whose digest differs from the source's,
// bad fold options, or an unwritable path; FailedPrecondition before seal.
Result<ExportReport> ExportRows(const ExportRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_EXPORT_H_
