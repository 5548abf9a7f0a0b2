// Data brought into the ledger's world: a CSV given to fit, predict or any
// other command is matched row by row against the development rows' digests
// before use; rows that are not development rows are refused when
// development rows are required. With the key, holdout rows (by content or
// feature digest) are recognised and refused as such.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_ADMIT_H_
#define UNSEEN_HARNESS_LEDGER_ADMIT_H_

#include <Eigen/Dense>
#include <string>
#include <vector>

#include "harness/pipeline/frame.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"
#include "storage/row_set.h"
#include "storage/seal_crypto.h"

namespace unseen {

enum class DataPurpose {
  kDevRows,  // every row must be a development row of the source (fit, export)
  kNewRows,  // rows may be new (predict); with the key, none may be a holdout row (eval)
};

struct AdmittedData {
  std::string path;
  Digest256 file_sha256{};
  Frame features;          // the source's feature columns, typed as registered
  Eigen::VectorXd target;  // class index or value; size 0 when the file has no target
  bool labelled = false;
  std::vector<std::string> ids;       // the id column; empty when the file has none (IdOf)
  std::vector<std::string> groups;    // the group column, when the source has one
  std::vector<uint32_t> source_rows;  // kDevRows: the source row of each data row
  RowSet rows_read;                   // kDevRows: the source rows read
  std::vector<uint64_t> lines;        // the file line of each data row

  size_t rows() const { return lines.size(); }
  // Row i's id: its id cell, or its 0-based data row number when the file has no id column.
  std::string IdOf(size_t i) const { return ids.empty() ? std::to_string(i) : ids[i]; }
};

// What a refused file held, for the refusal entry.
struct DataRefusal {
  uint64_t holdout_rows = 0;
  uint64_t not_dev_rows = 0;
  std::vector<uint64_t> first_lines;
};

// Admits `path`: reads it and matches every row against the development rows (and, given
// the key, the holdout) before anything it holds is used.
//
// Without the key (fit, predict, and every command a modeller runs) only the development rows'
// digests are known: kDevRows refuses every row that is not a development row, a holdout row
// among them, without telling which (docs/row-digests.md); kNewRows matches nothing, since no
// answer may say whether a row is a holdout row. With `key` (checked by KeyForSeal; eval's
// attached files), the sealed holdout digests are opened and a row matching a holdout row by
// content or by features is refused as one. Refused (with *refusal filled in) on such rows;
// InvalidArgument for malformed CSV or missing columns.
Result<AdmittedData> AdmitData(const Ledger& ledger, const LedgerState& state,
                               const std::string& path, DataPurpose purpose, DataRefusal* refusal,
                               const Key* key);
// The same without the key.
Result<AdmittedData> AdmitData(const Ledger& ledger, const LedgerState& state,
                               const std::string& path, DataPurpose purpose, DataRefusal* refusal);

// The data rows listed in `rows` (ascending indexes into `data`), every
// per-row field kept in step; rows_read is recomputed from source_rows.
// REQUIRES: data loaded with kDevRows.
AdmittedData SelectRows(const AdmittedData& data, const std::vector<size_t>& rows);

// Class labels of a classification source in index order.
std::vector<std::string> ClassLabels(const SourceInfo& source);

// Appends a `refusal` entry in its own transaction; the refused command
// changes nothing else.
Status RecordRefusal(const std::string& ledger_path, const std::string& actor,
                     const std::string& command, const Status& reason,
                     const std::string& details_json);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_ADMIT_H_
