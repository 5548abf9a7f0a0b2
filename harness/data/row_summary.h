// SummarizeRows: the figures a ledger publishes about a set of rows of a registered source (row
// count, missing cells per column, the target's classes or range and mean), computed by reading
// only those rows. `seal` publishes them for the development rows. Thread-compatible.
#ifndef UNSEEN_HARNESS_DATA_ROW_SUMMARY_H_
#define UNSEEN_HARNESS_DATA_ROW_SUMMARY_H_

#include <cstdint>
#include <vector>

#include "harness/data/csv.h"
#include "harness/data/source.h"
#include "storage/status.h"

namespace unseen {

// The summary of the records of `csv` whose indices are in `rows` (strictly ascending), by the
// columns and task of `source`: labels in their canonical spelling (CanonicalLabel), the mean
// as the sum in row order divided by the count. REQUIRES: `csv` is the registered source, read
// whole before and checked since (CsvFile::ForEachRecordParsing). InvalidArgument naming the
// cell for a regression target that is not a number.
Result<RowsSummary> SummarizeRows(const CsvFile& csv, const SourceInfo& source,
                                  const std::vector<uint32_t>& rows);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_ROW_SUMMARY_H_
