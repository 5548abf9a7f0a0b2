#include "storage/merkle.h"

#include <cstring>

namespace unseen {
namespace {

constexpr uint8_t kLeafPrefix = 0x00;  // RFC 6962 domain separation
constexpr uint8_t kNodePrefix = 0x01;

// Messages are built on the stack and hashed in one call: rows number in the
// millions and each needs a leaf hash and, on average, one node hash.
Digest256 NodeHash(const Digest256& left, const Digest256& right) {
  uint8_t m[65];
  m[0] = kNodePrefix;
  std::memcpy(m + 1, left.data(), 32);
  std::memcpy(m + 33, right.data(), 32);
  return Sha256Of(m, sizeof m);
}

// *a = node(l0, r0) and *b = node(l1, r1), computed together.
void NodeHashTwo(const Digest256& l0, const Digest256& r0, const Digest256& l1, const Digest256& r1,
                 Digest256* a, Digest256* b) {
  uint8_t m0[65], m1[65];
  m0[0] = m1[0] = kNodePrefix;
  std::memcpy(m0 + 1, l0.data(), 32);
  std::memcpy(m0 + 33, r0.data(), 32);
  std::memcpy(m1 + 1, l1.data(), 32);
  std::memcpy(m1 + 33, r1.data(), 32);
  Sha256OfTwo({reinterpret_cast<const char*>(m0), 65}, {reinterpret_cast<const char*>(m1), 65}, a,
              b);
}

Digest256 LeafHash(const void* data, size_t n) {
  if (n < 64) {
    uint8_t m[64];
    m[0] = kLeafPrefix;
    std::memcpy(m + 1, data, n);
    return Sha256Of(m, n + 1);
  }
  Sha256 h;
  h.Update(&kLeafPrefix, 1);
  h.Update(data, n);
  return h.Finish();
}

// The largest subtree AddLeaves() hashes level by level: 2^13 leaves.
constexpr int kMaxBatchHeight = 13;

// MTH(leaves[begin, end)), straight from the RFC's recursion.
Digest256 RecursiveRoot(const std::vector<std::string>& leaves, size_t begin, size_t end) {
  size_t n = end - begin;
  if (n == 1) return LeafHash(leaves[begin].data(), leaves[begin].size());
  size_t k = 1;
  while (k * 2 < n) k *= 2;  // the largest power of two smaller than n
  Digest256 left = RecursiveRoot(leaves, begin, begin + k);
  Digest256 right = RecursiveRoot(leaves, begin + k, end);
  return NodeHash(left, right);
}

}  // namespace

void MerkleBuilder::AddLeaf(const void* data, size_t n) { PushSubtree(LeafHash(data, n), 0); }

void MerkleBuilder::PushSubtree(const Digest256& root, int height) {
  stack_.push_back(root);
  // Adding a subtree carries like a binary increment: each trailing one bit of
  // the old size (counted in subtrees of this height) is a subtree of equal
  // size to the left, which merges.
  for (uint64_t s = size_ >> height; s & 1; s >>= 1) {
    Digest256 right = stack_.back();
    stack_.pop_back();
    stack_.back() = NodeHash(stack_.back(), right);
  }
  size_ += uint64_t{1} << height;
}

void MerkleBuilder::AddLeaves(const void* data, size_t leaf_size, size_t count) {
  const auto* p = static_cast<const uint8_t*>(data);
  while (count > 0) {
    // The largest perfect subtree that starts here: aligned to size_ and no
    // more leaves than are left.
    int height = 0;
    while (height < kMaxBatchHeight && leaf_size < 64 && (size_ >> height & 1) == 0 &&
           (size_t{2} << height) <= count) {
      ++height;
    }
    if (height == 0) {
      AddLeaf(p, leaf_size);
      p += leaf_size;
      --count;
      continue;
    }
    const size_t n = size_t{1} << height;
    level_.resize(n);
    uint8_t m0[64], m1[64];
    m0[0] = m1[0] = kLeafPrefix;
    for (size_t i = 0; i < n; i += 2, p += 2 * leaf_size) {
      std::memcpy(m0 + 1, p, leaf_size);
      std::memcpy(m1 + 1, p + leaf_size, leaf_size);
      Sha256OfTwo({reinterpret_cast<const char*>(m0), leaf_size + 1},
                  {reinterpret_cast<const char*>(m1), leaf_size + 1}, &level_[i], &level_[i + 1]);
    }
    for (size_t width = n / 2; width >= 1; width /= 2) {
      if (width == 1) {
        level_[0] = NodeHash(level_[0], level_[1]);
        break;
      }
      // Node j of the next level is node(level[2j], level[2j+1]); j and j+1 are
      // computed together and written only after both are read.
      for (size_t j = 0; j < width; j += 2) {
        Digest256 a, b;
        NodeHashTwo(level_[2 * j], level_[2 * j + 1], level_[2 * j + 2], level_[2 * j + 3], &a, &b);
        level_[j] = a;
        level_[j + 1] = b;
      }
    }
    PushSubtree(level_[0], height);
    count -= n;
  }
}

Digest256 MerkleBuilder::Root() const {
  if (stack_.empty()) return Sha256Of("", 0);  // SHA-256 of the empty string
  // The RFC splits at the largest power of two, which is the leftmost perfect
  // subtree; so the root folds the stack right to left.
  Digest256 acc = stack_.back();
  for (size_t i = stack_.size() - 1; i-- > 0;) acc = NodeHash(stack_[i], acc);
  return acc;
}

Digest256 MerkleRoot(const std::vector<std::string>& leaves) {
  if (leaves.empty()) return Sha256Of("", 0);
  return RecursiveRoot(leaves, 0, leaves.size());
}

}  // namespace unseen
