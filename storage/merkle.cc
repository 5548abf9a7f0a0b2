#include "storage/merkle.h"

namespace unseen {
namespace {

constexpr uint8_t kLeafPrefix = 0x00;  // RFC 6962 domain separation
constexpr uint8_t kNodePrefix = 0x01;

Digest256 NodeHash(Sha256* h, const Digest256& left, const Digest256& right) {
  h->Update(&kNodePrefix, 1);
  h->Update(left.data(), left.size());
  h->Update(right.data(), right.size());
  return h->Finish();
}

Digest256 LeafHash(Sha256* h, const void* data, size_t n) {
  h->Update(&kLeafPrefix, 1);
  h->Update(data, n);
  return h->Finish();
}

// MTH(leaves[begin, end)), straight from the RFC's recursion.
Digest256 RecursiveRoot(Sha256* h, const std::vector<std::string>& leaves, size_t begin,
                        size_t end) {
  size_t n = end - begin;
  if (n == 1) return LeafHash(h, leaves[begin].data(), leaves[begin].size());
  size_t k = 1;
  while (k * 2 < n) k *= 2;  // the largest power of two smaller than n
  Digest256 left = RecursiveRoot(h, leaves, begin, begin + k);
  Digest256 right = RecursiveRoot(h, leaves, begin + k, end);
  return NodeHash(h, left, right);
}

}  // namespace

void MerkleBuilder::AddLeaf(const void* data, size_t n) {
  stack_.push_back(LeafHash(&hasher_, data, n));
  // Adding a leaf carries like a binary increment: each trailing one bit of
  // the old size is a subtree of equal size to the left, which merges.
  for (uint64_t s = size_; s & 1; s >>= 1) {
    Digest256 right = stack_.back();
    stack_.pop_back();
    stack_.back() = NodeHash(&hasher_, stack_.back(), right);
  }
  ++size_;
}

Digest256 MerkleBuilder::Root() const {
  Sha256 h;  // Root() is const; a local hasher keeps the builder untouched
  if (stack_.empty()) return h.Finish();  // SHA-256 of the empty string
  // The RFC splits at the largest power of two, which is the leftmost perfect
  // subtree; so the root folds the stack right to left.
  Digest256 acc = stack_.back();
  for (size_t i = stack_.size() - 1; i-- > 0;) acc = NodeHash(&h, stack_[i], acc);
  return acc;
}

Digest256 MerkleRoot(const std::vector<std::string>& leaves) {
  Sha256 h;
  if (leaves.empty()) return h.Finish();
  return RecursiveRoot(&h, leaves, 0, leaves.size());
}

}  // namespace unseen
