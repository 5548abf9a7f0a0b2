#include "harness/data/row_digest.h"

#include <cstring>

#include "harness/data/csv.h"

namespace unseen {

void AppendCanonicalCell(std::string_view cell, std::string* out) {
  double v = 0;
  CellKind kind = ClassifyCell(cell, &v);
  AppendClassifiedCell(kind, v, cell, out);
}

void AppendClassifiedCell(CellKind kind, double v, std::string_view cell, std::string* out) {
  const size_t at = out->size();
  out->resize(at + MaxCanonicalCellSize(cell.size()));
  char* end = EncodeClassifiedCell(kind, v, cell, out->data() + at);
  out->resize(static_cast<size_t>(end - out->data()));
}

RowDigester::RowDigester(std::vector<size_t> skip) : skip_list_(std::move(skip)) {}

RowDigest RowDigester::Digest(const std::vector<std::string_view>& fields) {
  if (skip_.size() != fields.size()) {
    skip_.assign(fields.size(), false);
    for (size_t c : skip_list_) {
      if (c < skip_.size()) skip_[c] = true;
    }
  }
  size_t most = 0;
  for (std::string_view f : fields) most += MaxCanonicalCellSize(f.size());
  if (buffer_.size() < most) buffer_.resize(2 * most);  // grows only: no zero-fill per row
  char* const begin = buffer_.data();
  char* w = begin;
  for (size_t c = 0; c < fields.size(); ++c) {
    if (skip_[c]) continue;
    double v = 0;
    const CellKind kind = ClassifyCell(fields[c], &v);
    w = EncodeClassifiedCell(kind, v, fields[c], w);
  }
  return TruncateToRowDigest(Sha256Of(begin, static_cast<size_t>(w - begin)));
}

}  // namespace unseen
