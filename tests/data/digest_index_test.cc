#include "harness/data/digest_index.h"

#include <gtest/gtest.h>

#include <algorithm>
#include <map>
#include <random>
#include <string>
#include <vector>

namespace unseen {
namespace {

RowDigest RandomDigest(std::mt19937_64& rng) {
  RowDigest d;
  for (auto& b : d) b = static_cast<uint8_t>(rng());
  return d;
}

std::string Pack(const std::vector<RowDigest>& v) {
  std::string s;
  for (const RowDigest& d : v) s.append(reinterpret_cast<const char*>(d.data()), d.size());
  return s;
}

std::vector<uint32_t> Matches(const DigestIndex& index, const RowDigest& d) {
  std::vector<uint32_t> rows;
  index.ForEachMatch(d, [&](uint32_t r) {
    rows.push_back(r);
    return true;
  });
  std::sort(rows.begin(), rows.end());
  return rows;
}

TEST(DigestIndexTest, FindsEveryRowWithTheDigestDuplicatesIncluded) {
  std::mt19937_64 rng(16);
  std::vector<RowDigest> digests;
  for (int i = 0; i < 5000; ++i) {
    // Every tenth row repeats an earlier one; some share a first half (same slot and tag start).
    if (i > 0 && i % 10 == 0) {
      digests.push_back(digests[rng() % digests.size()]);
    } else if (i > 0 && i % 17 == 0) {
      RowDigest d = digests[rng() % digests.size()];
      d[15] ^= 1;
      digests.push_back(d);
    } else {
      digests.push_back(RandomDigest(rng));
    }
  }
  const std::string packed = Pack(digests);
  const DigestIndex index(packed);
  std::map<RowDigest, std::vector<uint32_t>> want;
  for (uint32_t r = 0; r < digests.size(); ++r) want[digests[r]].push_back(r);
  for (const auto& [d, rows] : want) {
    ASSERT_EQ(Matches(index, d), rows);
    EXPECT_TRUE(index.Contains(d));
  }
  for (int i = 0; i < 1000; ++i) EXPECT_FALSE(index.Contains(RandomDigest(rng)));
}

TEST(DigestIndexTest, IndexesOnlyTheGivenRows) {
  std::mt19937_64 rng(3);
  std::vector<RowDigest> digests;
  for (int i = 0; i < 300; ++i) digests.push_back(RandomDigest(rng));
  const std::string packed = Pack(digests);
  const std::vector<uint32_t> rows = {1, 5, 7, 299};
  const DigestIndex index(packed, &rows);
  for (uint32_t r = 0; r < digests.size(); ++r) {
    const bool indexed = std::find(rows.begin(), rows.end(), r) != rows.end();
    EXPECT_EQ(index.Contains(digests[r]), indexed) << r;
  }
  EXPECT_EQ(index.At(7), digests[7]);
}

TEST(DigestIndexTest, StopsWhenTheCallbackSaysSo) {
  RowDigest d{};
  d[3] = 9;
  const std::string packed = Pack({d, d, d});
  const DigestIndex index(packed);
  int calls = 0;
  index.ForEachMatch(d, [&](uint32_t) { return ++calls < 2; });
  EXPECT_EQ(calls, 2);
  const DigestIndex empty("");
  EXPECT_FALSE(empty.Contains(d));
}

}  // namespace
}  // namespace unseen
