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
  // Adds `count` leaves of `leaf_size` bytes each, stored back to back at
  // `data`: the same result as AddLeaf() on each in turn, but perfect
  // subtrees are hashed level by level, two hashes at a time.
  void AddLeaves(const void* data, size_t leaf_size, size_t count);
  // Adds the 2^height leaves of a perfect subtree by its root (a Root() of a
  // builder given just those leaves), as if they had been added one by one.
  // REQUIRES: size() is a multiple of 2^height.
  void AddSubtree(const Digest256& root, int height) { PushSubtree(root, height); }

  // The Merkle Tree Hash of the leaves added so far.
  Digest256 Root() const;
  // How many leaves were added.
  uint64_t size() const { return size_; }

 private:
  // Perfect-subtree roots, leftmost first; their sizes are the set bits of
  // size_, from the highest down.
  // Adds the root of a perfect subtree of 2^height leaves. REQUIRES: size_ is
  // a multiple of 2^height.
  void PushSubtree(const Digest256& root, int height);

  std::vector<Digest256> stack_;
  uint64_t size_ = 0;
  std::vector<Digest256> level_;  // AddLeaves() scratch
};

// The Merkle Tree Hash of `leaves`, computed by the plain recursive
// definition. A reference for MerkleBuilder; it holds every leaf in memory.
Digest256 MerkleRoot(const std::vector<std::string>& leaves);

}  // namespace unseen

#endif  // UNSEEN_STORAGE_MERKLE_H_
