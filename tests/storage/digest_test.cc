#include "storage/digest.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <random>
#include <string>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

std::string Hex(const Digest256& d) { return ToHex(d); }

TEST(Sha256Test, FipsOneBlockMessageAbc) {
  // FIPS 180-4 example (one-block message "abc").
  EXPECT_EQ(Hex(Sha256Of("abc")),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
}

TEST(Sha256Test, EmptyMessage) {
  // NIST CAVP SHAVS ShortMsg, Len = 0.
  EXPECT_EQ(Hex(Sha256Of("")), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

TEST(Sha256Test, FipsTwoBlockMessage) {
  // FIPS 180-4 example (448-bit two-block message).
  EXPECT_EQ(Hex(Sha256Of("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq")),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
}

TEST(Sha256Test, OneMillionAs) {
  // FIPS 180-2 appendix B.3: one million repetitions of 'a'.
  const std::string kExpected = "cdc76e5c9914fb9281a1c7e284d73e67f1809a48a497200e046d39ccc7112cd0";
  EXPECT_EQ(Hex(Sha256Of(std::string(1000000, 'a'))), kExpected);
  Sha256 h;
  const std::string thousand(1000, 'a');
  for (int i = 0; i < 1000; ++i) h.Update(thousand);
  EXPECT_EQ(Hex(h.Finish()), kExpected);
}

TEST(Sha256Test, IncrementalEqualsOneShotAcrossBlockBoundaries) {
  std::mt19937 rng(20240611);
  std::string msg(300, '\0');
  for (char& c : msg) c = static_cast<char>(rng());
  const Digest256 whole = Sha256Of(msg);
  Sha256 h;
  // Every first-piece length around the 64-byte block edges, then the rest in
  // 13-byte pieces, so pieces straddle block boundaries in every phase.
  for (size_t first = 0; first <= 130; ++first) {
    h.Update(msg.data(), first);
    for (size_t off = first; off < msg.size(); off += 13) {
      h.Update(std::string_view(msg).substr(off, 13));
    }
    ASSERT_EQ(h.Finish(), whole) << "first piece " << first;
  }
}

TEST(Sha256Test, FinishResetsForReuse) {
  Sha256 h;
  h.Update("abc");
  Digest256 a = h.Finish();
  h.Update("abc");
  EXPECT_EQ(h.Finish(), a);
  EXPECT_EQ(Hex(h.Finish()), Hex(Sha256Of("")));  // nothing since the last Finish
}

TEST(Sha256Test, MovedHasherKeepsItsState) {
  Sha256 h;
  h.Update("ab");
  Sha256 moved = std::move(h);
  moved.Update("c");
  EXPECT_EQ(moved.Finish(), Sha256Of("abc"));
}

TEST(HexTest, RoundTripsAndIsLowerCase) {
  const std::string bytes("\x00\x01\xab\xff", 4);
  EXPECT_EQ(ToHex(bytes.data(), bytes.size()), "0001abff");
  auto back = FromHex("0001ABff");
  ASSERT_OK(back);
  EXPECT_EQ(*back, bytes);
  EXPECT_EQ(*FromHex(""), "");
}

TEST(HexTest, BadHexIsInvalidArgumentNamingTheOffset) {
  auto odd = FromHex("abc");
  EXPECT_TRUE(odd.status().IsInvalidArgument());
  EXPECT_NE(odd.status().message().find("odd"), std::string::npos);
  auto bad = FromHex("00g0");
  EXPECT_TRUE(bad.status().IsInvalidArgument());
  EXPECT_NE(bad.status().message().find("offset 2"), std::string::npos) << bad.status().ToString();
}

TEST(HexTest, Digest256FromHexNeedsExactly64Digits) {
  const std::string hex = "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad";
  auto d = Digest256FromHex(hex);
  ASSERT_OK(d);
  EXPECT_EQ(*d, Sha256Of("abc"));
  EXPECT_TRUE(Digest256FromHex(hex.substr(0, 62)).status().IsInvalidArgument());
  EXPECT_TRUE(Digest256FromHex(hex + "00").status().IsInvalidArgument());
  EXPECT_TRUE(Digest256FromHex(std::string(63, '0') + "x").status().IsInvalidArgument());
}

TEST(RowDigestTest, IsTheFirst16Bytes) {
  RowDigest r = TruncateToRowDigest(Sha256Of("abc"));
  EXPECT_EQ(ToHex(r), "ba7816bf8f01cfea414140de5dae2223");
}

TEST(Sha256FileTest, MatchesTheDigestOfTheContent) {
  testing::TempDir dir;
  std::mt19937 rng(7);
  std::string content(3 * (1 << 20) + 17, '\0');  // crosses several 1 MiB reads
  for (char& c : content) c = static_cast<char>(rng());
  testing::WriteFile(dir.File("data.bin"), content);
  auto fd = Sha256File(dir.File("data.bin"));
  ASSERT_OK(fd);
  EXPECT_EQ(fd->sha256, Sha256Of(content));
  EXPECT_EQ(fd->size, content.size());
}

TEST(Sha256FileTest, EmptyFile) {
  testing::TempDir dir;
  testing::WriteFile(dir.File("empty"), "");
  auto fd = Sha256File(dir.File("empty"));
  ASSERT_OK(fd);
  EXPECT_EQ(fd->size, 0u);
  EXPECT_EQ(fd->sha256, Sha256Of(""));
}

TEST(Sha256FileTest, MissingFileIsNotFoundNamingThePath) {
  testing::TempDir dir;
  auto fd = Sha256File(dir.File("absent.csv"));
  EXPECT_TRUE(fd.status().IsNotFound());
  EXPECT_NE(fd.status().message().find(dir.File("absent.csv")), std::string::npos);
}

TEST(Sha256FileTest, DirectoryIsIOErrorNamingThePath) {
  testing::TempDir dir;
  auto fd = Sha256File(dir.path());
  EXPECT_TRUE(fd.status().IsIOError()) << fd.status().ToString();
  EXPECT_NE(fd.status().message().find(dir.path()), std::string::npos);
}

}  // namespace
}  // namespace unseen
