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

void ClassifiedRow::Classify(const std::vector<std::string_view>& fields) {
  kinds.resize(fields.size());
  numbers.resize(fields.size());
  for (size_t c = 0; c < fields.size(); ++c) kinds[c] = ClassifyCell(fields[c], &numbers[c]);
}

template <class Classify>
RowDigest RowDigester::Encode(const std::vector<std::string_view>& fields, Classify&& classify) {
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
    const CellKind kind = classify(c, &v);
    w = EncodeClassifiedCell(kind, v, fields[c], w);
  }
  return TruncateToRowDigest(Sha256Of(begin, static_cast<size_t>(w - begin)));
}

RowDigest RowDigester::Digest(const std::vector<std::string_view>& fields) {
  return Encode(fields, [&](size_t c, double* v) { return ClassifyCell(fields[c], v); });
}

RowDigest RowDigester::Digest(const ClassifiedRow& row, const std::vector<std::string_view>& fields) {
  return Encode(fields, [&](size_t c, double* v) {
    *v = row.numbers[c];
    return row.kinds[c];
  });
}

}  // namespace unseen
