// Row digests: SHA-256 of a row's canonical bytes, truncated to 16 bytes.
//
// Canonical form, formats 1 and 2 (docs/row-digests.md; written to disk, never
// changes without a new format number): for each included column, in column
// order, one cell:
//   missing (empty, NA, NaN)   0x00
//   number                     0x01, then the IEEE-754 binary64 bits of the
//                              value, big-endian (-0 is written as +0)
//   text                       0x02, then the byte length as u32 big-endian,
//                              then the UTF-8 bytes
// A cell is a number when it parses as one (csv.h ParseNumber), so "1",
// "1.0" and "1e0" agree whatever type the column has. The row digest covers
// every column; the content digest leaves out the id column; the feature
// digest leaves out the id and target columns. Thread-compatible.
#ifndef UNSEEN_HARNESS_DATA_ROW_DIGEST_H_
#define UNSEEN_HARNESS_DATA_ROW_DIGEST_H_

#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>
#include <vector>

#include "harness/data/csv.h"
#include "harness/data/number.h"
#include "storage/digest.h"

namespace unseen {

// Format 2 keeps the canonical bytes of format 1; what changed is where digests are kept
// (docs/row-digests.md).
inline constexpr int kRowDigestFormat = 2;

// What a cell is, by its text alone.
enum class CellKind { kMissing, kNumber, kText };

// Classifies a cell; stores the value in *number for kNumber. Inline: the scan
// calls it for every cell. Short plain decimals are tried first; none of them
// is a missing-value spelling, so the order does not change the answer.
inline CellKind ClassifyCell(std::string_view cell, double* number) {
  if (internal::ParseShortDecimal(cell, number)) return CellKind::kNumber;
  if (IsMissing(cell)) return CellKind::kMissing;
  if (ParseNumber(cell, number)) return CellKind::kNumber;
  return CellKind::kText;
}

// Appends one cell's canonical bytes to *out.
void AppendCanonicalCell(std::string_view cell, std::string* out);
// The same for a cell already classified (`number` is read for kNumber only).
void AppendClassifiedCell(CellKind kind, double number, std::string_view cell, std::string* out);

// The most bytes one cell of `cell_size` text bytes encodes to.
inline constexpr size_t MaxCanonicalCellSize(size_t cell_size) {
  return cell_size + 5 > 9 ? cell_size + 5 : 9;
}
// Writes a classified cell's canonical bytes at `out`, which must have room for
// MaxCanonicalCellSize(cell.size()) bytes; returns the position just past them.
inline char* EncodeClassifiedCell(CellKind kind, double v, std::string_view cell, char* out) {
  switch (kind) {
    case CellKind::kMissing:
      *out = '\x00';
      return out + 1;
    case CellKind::kNumber: {
      if (v == 0) v = 0;  // -0 and +0 denote the same value
      uint64_t bits;
      std::memcpy(&bits, &v, sizeof bits);
      out[0] = '\x01';
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
      bits = __builtin_bswap64(bits);  // big-endian
      std::memcpy(out + 1, &bits, sizeof bits);
#else
      for (int i = 0; i < 8; ++i) out[1 + i] = static_cast<char>(bits >> (56 - 8 * i));
#endif
      return out + 9;
    }
    case CellKind::kText: {
      const uint32_t n = static_cast<uint32_t>(cell.size());
      out[0] = '\x02';
      out[1] = static_cast<char>(n >> 24);
      out[2] = static_cast<char>(n >> 16);
      out[3] = static_cast<char>(n >> 8);
      out[4] = static_cast<char>(n);
      if (n > 0) std::memcpy(out + 5, cell.data(), n);
      return out + 5 + n;
    }
  }
  return out;
}

// Hashes rows; reuses its buffers, so keep one per thread.
class RowDigester {
 public:
  // `skip` lists column indexes left out of the digest (e.g. id, target).
  explicit RowDigester(std::vector<size_t> skip = {});
  RowDigest Digest(const std::vector<std::string_view>& fields);

 private:
  std::vector<bool> skip_;
  std::vector<size_t> skip_list_;
  std::string buffer_;
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_ROW_DIGEST_H_
