// RowSet: a set of row numbers (uint32) held as a Roaring bitmap. Partitions
// (dev, holdout, folds) are RowSets; the ledger stores them by ContentDigest.
//
// Thread-compatible: const methods may run concurrently; a mutating call
// needs exclusive access.
#ifndef UNSEEN_STORAGE_ROW_SET_H_
#define UNSEEN_STORAGE_ROW_SET_H_

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

// Copyable (a deep copy) and movable; a moved-from RowSet is empty.
class RowSet {
 public:
  // The empty set.
  RowSet();
  ~RowSet();
  RowSet(const RowSet& other);
  RowSet& operator=(const RowSet& other);
  RowSet(RowSet&& other) noexcept;
  RowSet& operator=(RowSet&& other) noexcept;

  // The set of `rows`. Fastest when they ascend; any order is accepted and
  // duplicates collapse.
  static RowSet FromSorted(const std::vector<uint32_t>& rows);
  // The rows lo, lo+1, ..., hi-1; empty when lo >= hi.
  static RowSet Range(uint32_t lo, uint32_t hi);

  void Add(uint32_t row);
  bool Contains(uint32_t row) const;
  uint64_t Cardinality() const;
  bool Empty() const;

  // The rows in ascending order.
  std::vector<uint32_t> ToVector() const;
  // Calls fn(row) for each row in ascending order. `fn` must not modify this set.
  void ForEach(const std::function<void(uint32_t)>& fn) const;

  RowSet And(const RowSet& other) const;     // intersection
  RowSet Or(const RowSet& other) const;      // union
  RowSet AndNot(const RowSet& other) const;  // rows of *this not in other
  bool Intersects(const RowSet& other) const;
  bool operator==(const RowSet& other) const;
  bool operator!=(const RowSet& other) const { return !(*this == other); }

  // The portable Roaring format (RoaringFormatSpec) in one canonical form:
  // for each 16-bit chunk, a run container when it is no larger than the
  // array (up to 4096 rows) or smaller than the bitset (more rows), else the
  // array or bitset. The bytes depend only on the set, never on how it was
  // built, so equal sets have equal bytes and equal digests.
  std::string Serialize() const;

  // Reads any valid portable Roaring bitmap (canonical or not). Corruption if
  // the bytes are not exactly one well-formed bitmap: bad cookie, lengths or
  // offsets, keys or values out of order, overlapping runs, cardinalities
  // that disagree with the contents, or trailing bytes.
  static Result<RowSet> Deserialize(std::string_view bytes);

  // SHA-256 of Serialize().
  Digest256 ContentDigest() const;

 private:
  struct Impl;
  explicit RowSet(std::unique_ptr<Impl> impl);
  // *impl_, or a shared empty set when impl_ is null (moved from).
  const Impl& rep() const;
  std::unique_ptr<Impl> impl_;
};

}  // namespace unseen

#endif  // UNSEEN_STORAGE_ROW_SET_H_
