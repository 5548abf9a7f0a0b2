// Row digests: SHA-256 of a row's canonical bytes, truncated to 16 bytes.
//
// Canonical form, format 1 (docs/row-digests.md; written to disk, never
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

#include <string>
#include <string_view>
#include <vector>

#include "storage/digest.h"

namespace unseen {

inline constexpr int kRowDigestFormat = 1;

// What a cell is, by its text alone.
enum class CellKind { kMissing, kNumber, kText };

// Classifies a cell; stores the value in *number for kNumber.
CellKind ClassifyCell(std::string_view cell, double* number);

// Appends one cell's canonical bytes to *out.
void AppendCanonicalCell(std::string_view cell, std::string* out);
// The same for a cell already classified (`number` is read for kNumber only).
void AppendClassifiedCell(CellKind kind, double number, std::string_view cell, std::string* out);

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
  Sha256 sha_;
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_ROW_DIGEST_H_
