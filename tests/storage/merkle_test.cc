#include "storage/merkle.h"

#include <gtest/gtest.h>

#include <random>
#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

std::string Unhex(const std::string& hex) { return *FromHex(hex); }

TEST(MerkleTest, EmptyTreeIsHashOfEmptyString) {
  // RFC 6962 section 2.1: MTH({}) = SHA-256().
  const std::string kEmpty = "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855";
  EXPECT_EQ(ToHex(MerkleRoot({})), kEmpty);
  EXPECT_EQ(ToHex(MerkleBuilder().Root()), kEmpty);
  EXPECT_EQ(MerkleBuilder().size(), 0u);
}

TEST(MerkleTest, Rfc6962ReferenceRoots) {
  // Leaf inputs and roots of the RFC 6962 reference vectors
  // (transparency-dev/merkle testonly/constants.go; docs/references.md, RFC 6962 Merkle tree).
  const std::vector<std::string> kLeafHex = {"",
                                             "00",
                                             "10",
                                             "2021",
                                             "3031",
                                             "40414243",
                                             "5051525354555657",
                                             "606162636465666768696a6b6c6d6e6f"};
  const std::vector<std::string> kRoots = {
      "6e340b9cffb37a989ca544e6bb780a2c78901d3fb33738768511a30617afa01d",
      "fac54203e7cc696cf0dfcb42c92a1d9dbaf70ad9e621f4bd8d98662f00e3c125",
      "aeb6bcfe274b70a14fb067a5e5578264db0fa9b51af5e0ba159158f329e06e77",
      "d37ee418976dd95753c1c73862b9398fa2a2cf9b4ff0fdfe8b30cd95209614b7",
      "4e3bbb1f7b478dcfe71fb631631519a3bca12c9aefca1612bfce4c13a86264d4",
      "76e67dadbcdf1e10e1b74ddc608abd2f98dfb16fbce75277b5232a127f2087ef",
      "ddb89be403809e325750d3d263cd78929c2942b7942a34b77e122c9594a74c8c",
      "5dc9da79a70659a9ad559cb701ded9a2ab9d823aad2f4960cfe370eff4604328",
  };
  MerkleBuilder b;
  std::vector<std::string> leaves;
  for (size_t i = 0; i < kLeafHex.size(); ++i) {
    leaves.push_back(Unhex(kLeafHex[i]));
    b.AddLeaf(leaves.back());
    EXPECT_EQ(ToHex(b.Root()), kRoots[i]) << "streaming, size " << i + 1;
    EXPECT_EQ(ToHex(MerkleRoot(leaves)), kRoots[i]) << "recursive, size " << i + 1;
    EXPECT_EQ(b.size(), i + 1);
  }
}

TEST(MerkleTest, AsciiLeaves) {
  // Computed with Python hashlib and a separate tree-hash implementation
  // (docs/references.md, RFC 6962 Merkle tree).
  EXPECT_EQ(ToHex(MerkleRoot({"0", "1", "2"})),
            "725d5230db68f557470dc35f1d8865813acd7ebb07ad152774141decbae71327");
  EXPECT_EQ(ToHex(MerkleRoot({"1"})),
            "2215e8ac4e2b871c2a48189e79738c956c081e23ac2f2415bf77da199dfd920c");
}

TEST(MerkleTest, StreamingEqualsRecursiveForEverySizeUpTo70) {
  std::mt19937 rng(6962);
  std::vector<std::string> leaves;
  MerkleBuilder b;
  for (size_t n = 0; n <= 70; ++n) {
    ASSERT_EQ(b.Root(), MerkleRoot(leaves)) << "n = " << n;
    std::string leaf(rng() % 40, '\0');
    for (char& c : leaf) c = static_cast<char>(rng());
    leaves.push_back(leaf);
    b.AddLeaf(leaf.data(), leaf.size());
  }
}

TEST(MerkleTest, AddLeavesEqualsAddLeafForAnyStartAndCount) {
  std::mt19937 rng(13);
  // Counts around the batch sizes (powers of two up to 8192 and past it) and
  // starts that are aligned to powers of two or not.
  for (size_t start : {0, 1, 3, 8, 100, 4096}) {
    for (size_t count : {0, 1, 2, 5, 64, 127, 8192, 8193, 20000}) {
      std::string leaves(16 * (start + count), '\0');
      for (char& c : leaves) c = static_cast<char>(rng());
      MerkleBuilder one, batch;
      for (size_t i = 0; i < start + count; ++i) one.AddLeaf(leaves.data() + 16 * i, 16);
      for (size_t i = 0; i < start; ++i) batch.AddLeaf(leaves.data() + 16 * i, 16);
      batch.AddLeaves(leaves.data() + 16 * start, 16, count);
      ASSERT_EQ(batch.size(), start + count);
      ASSERT_EQ(ToHex(batch.Root()), ToHex(one.Root())) << start << " + " << count;
    }
  }
}

TEST(MerkleTest, AddSubtreeEqualsAddingItsLeaves) {
  std::mt19937 rng(8);
  std::string leaves(16 * 40, '\0');
  for (char& c : leaves) c = static_cast<char>(rng());
  MerkleBuilder one, parts;
  for (size_t i = 0; i < 40; ++i) one.AddLeaf(leaves.data() + 16 * i, 16);
  // 8 leaves, a subtree of 8, one of 16, then 8 leaves one by one.
  parts.AddLeaves(leaves.data(), 16, 8);
  for (size_t at : {8, 16}) {
    const size_t n = at == 8 ? 8 : 16;
    MerkleBuilder sub;
    sub.AddLeaves(leaves.data() + 16 * at, 16, n);
    parts.AddSubtree(sub.Root(), at == 8 ? 3 : 4);
  }
  parts.AddLeaves(leaves.data() + 16 * 32, 16, 8);
  EXPECT_EQ(parts.size(), 40u);
  EXPECT_EQ(ToHex(parts.Root()), ToHex(one.Root()));
}

TEST(MerkleTest, AddLeavesWithLongLeavesFallsBackToOneAtATime) {
  std::vector<std::string> leaves;
  std::string packed;
  for (int i = 0; i < 9; ++i) {
    leaves.push_back(std::string(100, static_cast<char>('a' + i)));
    packed += leaves.back();
  }
  MerkleBuilder b;
  b.AddLeaves(packed.data(), 100, leaves.size());
  EXPECT_EQ(b.Root(), MerkleRoot(leaves));
}

TEST(MerkleTest, LeafAndNodeHashesAreDomainSeparated) {
  // A two-leaf tree's root is SHA-256(0x01 || h0 || h1); a single leaf whose
  // bytes are h0 || h1 must hash differently (prefix 0x00).
  std::vector<std::string> two = {"a", "b"};
  std::string h0 = std::string(1, '\0') + "a";
  std::string h1 = std::string(1, '\0') + "b";
  Digest256 d0 = Sha256Of(h0), d1 = Sha256Of(h1);
  std::string concat(reinterpret_cast<const char*>(d0.data()), 32);
  concat.append(reinterpret_cast<const char*>(d1.data()), 32);
  EXPECT_EQ(MerkleRoot(two), Sha256Of(std::string(1, '\x01') + concat));
  EXPECT_NE(MerkleRoot({concat}), MerkleRoot(two));
}

}  // namespace
}  // namespace unseen
