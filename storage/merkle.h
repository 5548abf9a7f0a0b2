// Merkle Tree Hash of RFC 6962 section 2.1 over an ordered list of leaves.
//
// Leaf hash = SHA-256(0x00 || data), node hash = SHA-256(0x01 || left ||
// right), split at the largest power of two smaller than n; the empty tree is
// SHA-256(""). Thread-compatible.
#ifndef UNSEEN_STORAGE_MERKLE_H_
#define UNSEEN_STORAGE_MERKLE_H_

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "storage/digest.h"

namespace unseen {

// Computes the root of a list of leaves fed one at a time, keeping only
// O(log n) state: the roots of the perfect subtrees the leaves so far form
// (one per set bit of size()). Root() may be called at any time and does not
// change the builder. Movable, not copyable.
//
// Example:
//   MerkleBuilder b;
//   for (const std::string& row : rows) b.AddLeaf(row);
//   Digest256 root = b.Root();
class MerkleBuilder {
 public:
  MerkleBuilder() = default;

  void AddLeaf(const void* data, size_t n);
  void AddLeaf(std::string_view data) { AddLeaf(data.data(), data.size()); }

  // The Merkle Tree Hash of the leaves added so far.
  Digest256 Root() const;
  // How many leaves were added.
  uint64_t size() const { return size_; }

 private:
  // Perfect-subtree roots, leftmost first; their sizes are the set bits of
  // size_, from the highest down.
  std::vector<Digest256> stack_;
  uint64_t size_ = 0;
  Sha256 hasher_;  // reused for every leaf and node
};

// The Merkle Tree Hash of `leaves`, computed by the plain recursive
// definition. A reference for MerkleBuilder; it holds every leaf in memory.
Digest256 MerkleRoot(const std::vector<std::string>& leaves);

}  // namespace unseen

#endif  // UNSEEN_STORAGE_MERKLE_H_
