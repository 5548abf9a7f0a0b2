#include "harness/data/row_digest.h"

#include <cstring>

#include "harness/data/csv.h"

namespace unseen {

CellKind ClassifyCell(std::string_view cell, double* number) {
  if (IsMissing(cell)) return CellKind::kMissing;
  if (ParseNumber(cell, number)) return CellKind::kNumber;
  return CellKind::kText;
}

void AppendCanonicalCell(std::string_view cell, std::string* out) {
  double v = 0;
  CellKind kind = ClassifyCell(cell, &v);
  AppendClassifiedCell(kind, v, cell, out);
}

void AppendClassifiedCell(CellKind kind, double v, std::string_view cell, std::string* out) {
  switch (kind) {
    case CellKind::kMissing:
      out->push_back('\x00');
      return;
    case CellKind::kNumber: {
      if (v == 0) v = 0;  // -0 and +0 denote the same value
      uint64_t bits;
      std::memcpy(&bits, &v, sizeof bits);
      char be[9];
      be[0] = '\x01';
      for (int i = 0; i < 8; ++i) be[1 + i] = static_cast<char>(bits >> (56 - 8 * i));
      out->append(be, sizeof be);
      return;
    }
    case CellKind::kText: {
      uint32_t n = static_cast<uint32_t>(cell.size());
      char head[5] = {'\x02', static_cast<char>(n >> 24), static_cast<char>(n >> 16),
                      static_cast<char>(n >> 8), static_cast<char>(n)};
      out->append(head, sizeof head);
      out->append(cell.data(), cell.size());
      return;
    }
  }
}

RowDigester::RowDigester(std::vector<size_t> skip) : skip_list_(std::move(skip)) {}

RowDigest RowDigester::Digest(const std::vector<std::string_view>& fields) {
  if (skip_.size() != fields.size()) {
    skip_.assign(fields.size(), false);
    for (size_t c : skip_list_) {
      if (c < skip_.size()) skip_[c] = true;
    }
  }
  buffer_.clear();
  for (size_t c = 0; c < fields.size(); ++c) {
    if (!skip_[c]) AppendCanonicalCell(fields[c], &buffer_);
  }
  sha_.Update(buffer_);
  return TruncateToRowDigest(sha_.Finish());
}

}  // namespace unseen
