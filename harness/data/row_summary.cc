#include "harness/data/row_summary.h"

#include <algorithm>
#include <cmath>

#include "harness/data/row_digest.h"
#include "harness/data/source_scan.h"

namespace unseen {

Result<RowsSummary> SummarizeRows(const CsvFile& csv, const SourceInfo& source,
                                  const std::vector<uint32_t>& rows) {
  RowsSummary s;
  s.task = source.task;
  s.missing.assign(source.columns.size(), 0);
  const size_t target = *source.ColumnOf(ColumnRole::kTarget);
  double lo = INFINITY, hi = -INFINITY, sum = 0;
  Status read = csv.ForEachRecordParsing(rows, [&](const CsvRecord& r) -> Status {
    if (r.fields == nullptr) return Status::OK();
    const std::vector<std::string_view>& f = *r.fields;
    for (size_t c = 0; c < f.size() && c < s.missing.size(); ++c) {
      if (IsMissing(f[c])) ++s.missing[c];
    }
    ++s.rows;
    const std::string_view cell = f[target];
    if (source.task == TaskKind::kClassification) {
      ++s.target.classes[CanonicalLabel(cell)];
      return Status::OK();
    }
    double v = 0;
    if (ClassifyCell(cell, &v) != CellKind::kNumber) {
      return Status::InvalidArgument(csv.Location(csv.FieldOffset(r, target)) + ": target '" +
                                     std::string(cell) +
                                     "' is not a number; a regression task expects numbers");
    }
    lo = std::min(lo, v);
    hi = std::max(hi, v);
    sum += v;
    return Status::OK();
  });
  UNSEEN_RETURN_IF_ERROR(read);
  if (source.task == TaskKind::kRegression && s.rows > 0) {
    s.target.min = lo;
    s.target.max = hi;
    s.target.mean = sum / static_cast<double>(s.rows);
  }
  return s;
}

}  // namespace unseen
