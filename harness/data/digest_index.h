// DigestIndex: finds the rows whose row digest equals a given one, in a list of row digests
// held elsewhere (16 bytes a row, back to back, as the ledger stores them).
//
// Open addressing with linear probing over 8-byte slots (32 bits of the digest as a tag and the
// row number), at most half full: a lookup usually reads one cache line of the table, and the
// digest list only when the tag matches. Digests are uniformly distributed, so their first bytes
// serve as the hash. Memory: 8 bytes times the next power of two at least twice the row count.
// The digest list must outlive the index and not change. Thread-compatible; the const methods
// may run concurrently.
#ifndef UNSEEN_HARNESS_DATA_DIGEST_INDEX_H_
#define UNSEEN_HARNESS_DATA_DIGEST_INDEX_H_

#include <cstdint>
#include <cstring>
#include <string_view>
#include <vector>

#include "storage/digest.h"

namespace unseen {

class DigestIndex {
 public:
  // Indexes the digests of `rows` (row numbers into `digests`, each below its size / 16), or of
  // every row when `rows` is null. A row number must be below 2^32 - 1.
  explicit DigestIndex(std::string_view digests, const std::vector<uint32_t>* rows = nullptr);

  // Calls fn(row) for each indexed row whose digest is `d`, in no particular order, until fn
  // returns false.
  template <class Fn>
  void ForEachMatch(const RowDigest& d, Fn&& fn) const {
    const uint32_t tag = Tag(d);
    for (size_t i = Home(d);; i = (i + 1) & mask_) {
      const Slot s = slots_[i];
      if (s.row == kEmpty) return;
      if (s.tag == tag && std::memcmp(digests_.data() + size_t{s.row} * 16, d.data(), 16) == 0) {
        if (!fn(s.row)) return;
      }
    }
  }

  // Whether some indexed row has digest `d`.
  bool Contains(const RowDigest& d) const {
    bool found = false;
    ForEachMatch(d, [&](uint32_t) { return !(found = true); });
    return found;
  }

  // Asks the CPU to fetch the slot `d` would start at: call it a few lookups ahead.
  void Prefetch(const RowDigest& d) const { __builtin_prefetch(&slots_[Home(d)]); }

  // The digest of `row` in the list.
  RowDigest At(uint32_t row) const {
    RowDigest d;
    std::memcpy(d.data(), digests_.data() + size_t{row} * 16, 16);
    return d;
  }

 private:
  struct Slot {
    uint32_t tag;
    uint32_t row;
  };
  static constexpr uint32_t kEmpty = 0xFFFFFFFF;

  size_t Home(const RowDigest& d) const {
    uint64_t h;
    std::memcpy(&h, d.data(), sizeof h);
    return static_cast<size_t>(h) & mask_;
  }
  static uint32_t Tag(const RowDigest& d) {
    uint32_t t;
    std::memcpy(&t, d.data() + 8, sizeof t);
    return t;
  }
  void Insert(uint32_t row);

  std::string_view digests_;
  size_t mask_ = 0;
  std::vector<Slot> slots_;
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_DIGEST_INDEX_H_
