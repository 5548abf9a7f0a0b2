#include "storage/row_set.h"

#include <gtest/gtest.h>
#include <roaring/roaring.h>

#include <algorithm>
#include <random>
#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

void PutU16(std::string* s, uint32_t v) {
  s->push_back(static_cast<char>(v & 0xff));
  s->push_back(static_cast<char>(v >> 8));
}
void PutU32(std::string* s, uint32_t v) {
  PutU16(s, v & 0xffff);
  PutU16(s, v >> 16);
}

std::vector<uint32_t> RandomRows(std::mt19937* rng, size_t n, uint32_t max) {
  std::vector<uint32_t> v(n);
  for (uint32_t& x : v) x = (*rng)() % max;
  std::sort(v.begin(), v.end());
  v.erase(std::unique(v.begin(), v.end()), v.end());
  return v;
}

// CRoaring's own portable bytes for `rows`, built from array and bitset
// containers and then run-optimised: the reference the canonical form follows.
std::string CRoaringBytes(const std::vector<uint32_t>& rows) {
  roaring_bitmap_t* b = roaring_bitmap_create();
  roaring_bitmap_add_many(b, rows.size(), rows.data());
  roaring_bitmap_run_optimize(b);
  std::string out(roaring_bitmap_portable_size_in_bytes(b), '\0');
  roaring_bitmap_portable_serialize(b, &out[0]);
  roaring_bitmap_free(b);
  return out;
}

TEST(RowSetTest, SetAlgebraOnConcreteSets) {
  RowSet a = RowSet::FromSorted({1, 2, 3, 100, 70000, 70001});
  RowSet b = RowSet::FromSorted({2, 3, 4, 70001, 1u << 31});
  EXPECT_EQ(a.And(b).ToVector(), (std::vector<uint32_t>{2, 3, 70001}));
  EXPECT_EQ(a.Or(b).ToVector(), (std::vector<uint32_t>{1, 2, 3, 4, 100, 70000, 70001, 1u << 31}));
  EXPECT_EQ(a.AndNot(b).ToVector(), (std::vector<uint32_t>{1, 100, 70000}));
  EXPECT_EQ(b.AndNot(a).ToVector(), (std::vector<uint32_t>{4, 1u << 31}));
  EXPECT_TRUE(a.Intersects(b));
  EXPECT_FALSE(a.AndNot(b).Intersects(b));
  EXPECT_EQ(a.Cardinality(), 6u);
  EXPECT_TRUE(a.Contains(70000));
  EXPECT_FALSE(a.Contains(70002));
  EXPECT_TRUE(a.And(RowSet()).Empty());
  EXPECT_FALSE(a.Empty());
  EXPECT_EQ(a.Or(b).AndNot(b), a.AndNot(b));
}

TEST(RowSetTest, RangeIsHalfOpen) {
  EXPECT_EQ(RowSet::Range(10, 13).ToVector(), (std::vector<uint32_t>{10, 11, 12}));
  EXPECT_TRUE(RowSet::Range(5, 5).Empty());
  EXPECT_TRUE(RowSet::Range(9, 5).Empty());
  RowSet top = RowSet::Range(0xfffffff0u, 0xffffffffu);
  EXPECT_EQ(top.Cardinality(), 15u);
  EXPECT_TRUE(top.Contains(0xfffffffeu));
  EXPECT_FALSE(top.Contains(0xffffffffu));
}

TEST(RowSetTest, ForEachAndToVectorAscend) {
  RowSet s;
  for (uint32_t r : {900000u, 5u, 70000u, 5u, 1u}) s.Add(r);
  std::vector<uint32_t> seen;
  s.ForEach([&](uint32_t r) { seen.push_back(r); });
  EXPECT_EQ(seen, (std::vector<uint32_t>{1, 5, 70000, 900000}));
  EXPECT_EQ(s.ToVector(), seen);
}

TEST(RowSetTest, CopyIsDeepAndMovedFromIsEmpty) {
  RowSet a = RowSet::Range(0, 10);
  RowSet copy = a;
  copy.Add(99);
  EXPECT_FALSE(a.Contains(99));
  EXPECT_EQ(copy.Cardinality(), 11u);
  RowSet moved = std::move(copy);
  EXPECT_EQ(moved.Cardinality(), 11u);
  EXPECT_TRUE(copy.Empty());  // NOLINT: moved-from is specified as empty
  EXPECT_EQ(copy.Serialize(), RowSet().Serialize());
  copy.Add(3);
  EXPECT_EQ(copy.ToVector(), std::vector<uint32_t>{3});
  a = moved;
  EXPECT_EQ(a, moved);
}

TEST(RowSetTest, SerializeRoundTrips) {
  std::mt19937 rng(42);
  std::vector<RowSet> sets = {
      RowSet(),
      RowSet::FromSorted({0}),
      RowSet::FromSorted({0xffffffffu}),
      RowSet::FromSorted(RandomRows(&rng, 1000, 1u << 31)),           // sparse arrays
      RowSet::FromSorted(RandomRows(&rng, 100000, 300000)),           // bitsets
      RowSet::Range(17, 500000).AndNot(RowSet::Range(70000, 70003)),  // runs
      RowSet::Range(0, 3).Or(RowSet::FromSorted(RandomRows(&rng, 50000, 1u << 20))),
  };
  for (size_t i = 0; i < sets.size(); ++i) {
    std::string bytes = sets[i].Serialize();
    auto back = RowSet::Deserialize(bytes);
    ASSERT_OK(back);
    EXPECT_EQ(*back, sets[i]) << i;
    EXPECT_EQ(back->Serialize(), bytes) << i;
    EXPECT_EQ(back->ContentDigest(), Sha256Of(bytes)) << i;
  }
}

TEST(RowSetTest, SameSetBuiltDifferentlyHasIdenticalBytes) {
  std::mt19937 rng(7);
  std::vector<uint32_t> rows = RandomRows(&rng, 20000, 400000);
  // Add runs and the three-row run {5,6,7}, where a run and an array
  // container are the same size (6 bytes) and CRoaring's choice depends on
  // how the container was built.
  for (uint32_t r = 100000; r < 140000; ++r) rows.push_back(r);
  for (uint32_t r : {5u, 6u, 7u, 65536u + 9, 65536u + 10}) rows.push_back(r);
  std::sort(rows.begin(), rows.end());
  rows.erase(std::unique(rows.begin(), rows.end()), rows.end());

  RowSet sorted = RowSet::FromSorted(rows);
  RowSet backwards;
  for (auto it = rows.rbegin(); it != rows.rend(); ++it) backwards.Add(*it);
  std::vector<uint32_t> shuffled = rows;
  std::shuffle(shuffled.begin(), shuffled.end(), rng);
  RowSet from_shuffled = RowSet::FromSorted(shuffled);
  // Built from ranges: the complement of the complement.
  RowSet all = RowSet::Range(0, 500000);
  RowSet via_ranges = all.AndNot(all.AndNot(sorted));

  const std::string bytes = sorted.Serialize();
  EXPECT_EQ(backwards.Serialize(), bytes);
  EXPECT_EQ(from_shuffled.Serialize(), bytes);
  EXPECT_EQ(via_ranges.Serialize(), bytes);
  EXPECT_EQ(via_ranges.ContentDigest(), sorted.ContentDigest());
  EXPECT_EQ(via_ranges, sorted);
}

TEST(RowSetTest, TieBetweenRunAndArrayIsEncodedAsRun) {
  // {5,6,7}: array 6 bytes, run 2 + 4 bytes. A tie takes the run, as
  // CRoaring's run optimisation does for an array container.
  RowSet built = RowSet::Range(5, 8);
  RowSet added = RowSet::FromSorted({5, 6, 7});
  EXPECT_EQ(built.Serialize(), added.Serialize());
  std::string expected;
  PutU32(&expected, 12347);    // cookie: run containers present, 1 container
  expected.push_back('\x01');  // container 0 is a run
  PutU16(&expected, 0);        // key
  PutU16(&expected, 2);        // cardinality - 1
  PutU16(&expected, 1);        // one run
  PutU16(&expected, 5);        // start
  PutU16(&expected, 2);        // length - 1
  const std::string got = added.Serialize();
  EXPECT_EQ(ToHex(got.data(), got.size()), ToHex(expected.data(), expected.size()));
  // Two contiguous rows: array 4 bytes beats run 6 bytes, however built.
  EXPECT_EQ(RowSet::Range(9, 11).Serialize().size(), 20u);
  EXPECT_EQ(RowSet::Range(9, 11).Serialize(), RowSet::FromSorted({9, 10}).Serialize());
}

TEST(RowSetTest, CanonicalBytesEqualCRoaringsForArrayBuiltBitmaps) {
  // Differential check against CRoaring's serializer on many shapes.
  std::mt19937 rng(2024);
  for (int trial = 0; trial < 300; ++trial) {
    std::vector<uint32_t> rows = RandomRows(&rng, rng() % 6000, 1u << (10 + trial % 20));
    int n_ranges = static_cast<int>(rng() % 4);
    for (int i = 0; i < n_ranges; ++i) {
      uint32_t lo = rng() % (1u << 20), len = 1 + rng() % (trial % 2 ? 6 : 9000);
      for (uint32_t r = lo; r < lo + len; ++r) rows.push_back(r);
    }
    std::sort(rows.begin(), rows.end());
    rows.erase(std::unique(rows.begin(), rows.end()), rows.end());
    ASSERT_EQ(RowSet::FromSorted(rows).Serialize(), CRoaringBytes(rows)) << "trial " << trial;
  }
}

TEST(RowSetTest, DeserializeAcceptsNonCanonicalPortableBytes) {
  // CRoaring keeps a two-row range as a run container (6 bytes, not the
  // array's 4); such bytes are valid and read back to the same set.
  roaring_bitmap_t* b = roaring_bitmap_create();
  roaring_bitmap_add_range(b, 1000, 1002);
  roaring_bitmap_run_optimize(b);
  std::string bytes(roaring_bitmap_portable_size_in_bytes(b), '\0');
  roaring_bitmap_portable_serialize(b, &bytes[0]);
  roaring_bitmap_free(b);
  ASSERT_NE(bytes, RowSet::FromSorted({1000, 1001}).Serialize());
  auto back = RowSet::Deserialize(bytes);
  ASSERT_OK(back);
  EXPECT_EQ(back->ToVector(), (std::vector<uint32_t>{1000, 1001}));
  EXPECT_EQ(back->Serialize(), RowSet::FromSorted({1000, 1001}).Serialize());
}

TEST(RowSetTest, MillionRowRangeSerializesToAFewHundredBytes) {
  RowSet r = RowSet::Range(0, 1000000);
  std::string bytes = r.Serialize();
  // 16 run containers: 4 (cookie) + 2 (run flags) + 16 * (4 header + 4 offset
  // + 2 count + 4 run) = 230 bytes, against 4 MB as raw uint32 rows.
  EXPECT_EQ(bytes.size(), 230u);
  auto back = RowSet::Deserialize(bytes);
  ASSERT_OK(back);
  EXPECT_EQ(back->Cardinality(), 1000000u);
  EXPECT_TRUE(back->Contains(999999));
  EXPECT_FALSE(back->Contains(1000000));
}

TEST(RowSetTest, EmptySetIsEightBytes) {
  std::string expected;
  PutU32(&expected, 12346);
  PutU32(&expected, 0);
  EXPECT_EQ(RowSet().Serialize(), expected);
  EXPECT_TRUE(RowSet::Deserialize(expected)->Empty());
}

TEST(RowSetTest, GarbageBytesAreCorruptionAndPrintNothing) {
  ::testing::internal::CaptureStderr();
  EXPECT_TRUE(RowSet::Deserialize("").status().IsCorruption());
  EXPECT_TRUE(RowSet::Deserialize("garbage!garbage!").status().IsCorruption());
  std::mt19937 rng(99);
  for (int i = 0; i < 200; ++i) {
    std::string junk(rng() % 64, '\0');
    for (char& c : junk) c = static_cast<char>(rng());
    EXPECT_FALSE(RowSet::Deserialize(junk).ok());
  }
  EXPECT_EQ(::testing::internal::GetCapturedStderr(), "");
}

TEST(RowSetTest, TruncatedOrExtendedBytesAreCorruption) {
  std::mt19937 rng(5);
  RowSet s = RowSet::FromSorted(RandomRows(&rng, 300, 200000)).Or(RowSet::Range(300000, 300100));
  const std::string bytes = s.Serialize();
  for (size_t n = 0; n < bytes.size(); ++n) {
    auto r = RowSet::Deserialize(bytes.substr(0, n));
    ASSERT_TRUE(r.status().IsCorruption()) << "length " << n;
  }
  EXPECT_TRUE(RowSet::Deserialize(bytes + '\0').status().IsCorruption());
}

TEST(RowSetTest, MutatedBytesAreRejectedOrReadAsAValidSet) {
  // Flips random bytes of valid encodings (arrays, runs, a bitset): each
  // result is either Corruption or a set that re-encodes and reads back equal.
  std::mt19937 rng(1234);
  const std::vector<std::string> seeds = {
      RowSet::FromSorted(RandomRows(&rng, 50, 1u << 20)).Serialize(),
      RowSet::Range(10, 70000).Or(RowSet::FromSorted({200000, 200002})).Serialize(),
      RowSet::FromSorted(RandomRows(&rng, 5000, 65536)).Serialize(),
  };
  int accepted = 0;
  for (int trial = 0; trial < 3000; ++trial) {
    std::string bytes = seeds[trial % seeds.size()];
    for (int flips = 1 + static_cast<int>(rng() % 3); flips > 0; --flips) {
      bytes[rng() % bytes.size()] ^= static_cast<char>(1 + rng() % 255);
    }
    auto r = RowSet::Deserialize(bytes);
    if (!r.ok()) {
      ASSERT_TRUE(r.status().IsCorruption()) << r.status().ToString();
      continue;
    }
    ++accepted;
    auto again = RowSet::Deserialize(r->Serialize());
    ASSERT_OK(again);
    ASSERT_EQ(*again, *r);
    ASSERT_EQ(again->Cardinality(), r->ToVector().size());
  }
  // Flips inside array values or bitset words can still be valid sets.
  EXPECT_GT(accepted, 0);
}

// Builds portable bytes with one container and no offsets (run cookie).
std::string OneRunContainer(uint32_t card, const std::vector<std::pair<uint32_t, uint32_t>>& runs) {
  std::string s;
  PutU32(&s, 12347);    // run cookie, one container
  s.push_back('\x01');  // container 0 is a run container
  PutU16(&s, 0);
  PutU16(&s, card - 1);
  PutU16(&s, static_cast<uint32_t>(runs.size()));
  for (auto [start, len_minus_1] : runs) {
    PutU16(&s, start);
    PutU16(&s, len_minus_1);
  }
  return s;
}

TEST(RowSetTest, InconsistentContainersAreCorruption) {
  EXPECT_OK(RowSet::Deserialize(OneRunContainer(5, {{10, 1}, {20, 2}})));
  // Overlapping runs, runs out of order, a run past 65535, wrong cardinality.
  EXPECT_TRUE(RowSet::Deserialize(OneRunContainer(6, {{10, 5}, {12, 0}})).status().IsCorruption());
  EXPECT_TRUE(RowSet::Deserialize(OneRunContainer(2, {{20, 0}, {10, 0}})).status().IsCorruption());
  EXPECT_TRUE(RowSet::Deserialize(OneRunContainer(2, {{65535, 1}})).status().IsCorruption());
  EXPECT_TRUE(RowSet::Deserialize(OneRunContainer(9, {{10, 1}})).status().IsCorruption());

  // An array container whose values are not ascending.
  std::string arr;
  PutU32(&arr, 12346);
  PutU32(&arr, 1);
  PutU16(&arr, 0);
  PutU16(&arr, 1);
  PutU32(&arr, 16);
  PutU16(&arr, 9);
  PutU16(&arr, 3);
  auto r = RowSet::Deserialize(arr);
  EXPECT_TRUE(r.status().IsCorruption());
  EXPECT_NE(r.status().message().find("ascending"), std::string::npos) << r.status().ToString();

  // Keys out of order, and a wrong offset.
  std::string two = RowSet::FromSorted({1, 70000}).Serialize();
  std::string swapped = two;
  std::swap(swapped[8], swapped[12]);  // the two keys (0 and 1)
  EXPECT_TRUE(RowSet::Deserialize(swapped).status().IsCorruption());
  std::string bad_offset = two;
  bad_offset[16] ^= 1;
  EXPECT_TRUE(RowSet::Deserialize(bad_offset).status().IsCorruption());

  // A bitset whose population disagrees with its header.
  std::mt19937 rng(3);
  std::string dense = RowSet::FromSorted(RandomRows(&rng, 6000, 65536)).Serialize();
  ASSERT_EQ(dense.size(), 16u + 8192u);  // no-run cookie, one bitset container
  EXPECT_OK(RowSet::Deserialize(dense));
  dense[16 + 100] ^= 0x04;
  EXPECT_TRUE(RowSet::Deserialize(dense).status().IsCorruption());
}

}  // namespace
}  // namespace unseen
