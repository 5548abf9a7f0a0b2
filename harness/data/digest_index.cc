#include "harness/data/digest_index.h"

namespace unseen {

DigestIndex::DigestIndex(std::string_view digests, const std::vector<uint32_t>* rows)
    : digests_(digests) {
  const size_t n = rows ? rows->size() : digests.size() / 16;
  size_t capacity = 16;
  while (capacity < 2 * n) capacity *= 2;
  mask_ = capacity - 1;
  slots_.assign(capacity, Slot{0, kEmpty});
  // Slots are written in random order: fetch a few ahead, or every insert waits on memory.
  constexpr size_t kAhead = 16;
  auto row_at = [&](size_t i) { return rows ? (*rows)[i] : static_cast<uint32_t>(i); };
  for (size_t i = 0; i < n; ++i) {
    if (i + kAhead < n) Prefetch(At(row_at(i + kAhead)));
    Insert(row_at(i));
  }
}

void DigestIndex::Insert(uint32_t row) {
  const RowDigest d = At(row);
  size_t i = Home(d);
  while (slots_[i].row != kEmpty) i = (i + 1) & mask_;
  slots_[i] = Slot{Tag(d), row};
}

}  // namespace unseen
