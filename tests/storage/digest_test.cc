#include "storage/digest.h"

#include <gtest/gtest.h>
#include <openssl/evp.h>
#include <sys/stat.h>

#include <random>
#include <string>

#include "storage/sha256_compress.h"
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

// OpenSSL's SHA-256: the independent implementation ours is compared with.
Digest256 OpensslSha256(std::string_view m) {
  Digest256 d;
  unsigned int len = 0;
  EXPECT_EQ(EVP_Digest(m.data(), m.size(), d.data(), &len, EVP_sha256(), nullptr), 1);
  return d;
}

std::string RandomBytes(std::mt19937_64& rng, size_t n) {
  std::string s(n, '\0');
  for (char& c : s) c = static_cast<char>(rng());
  return s;
}

// Runs `body` once with the automatic choice of implementation and once with
// the portable one forced.
template <class Body>
void ForEachImplementation(Body body) {
  SCOPED_TRACE("automatic implementation");
  body();
  internal::ForcePortableSha256ForTesting(true);
  {
    SCOPED_TRACE("portable implementation");
    body();
  }
  internal::ForcePortableSha256ForTesting(false);
}

TEST(Sha256Test, AgreesWithOpensslForEveryLengthUpTo300) {
  ForEachImplementation([] {
    std::mt19937_64 rng(180);
    for (size_t n = 0; n <= 300; ++n) {
      const std::string m = RandomBytes(rng, n);
      const Digest256 want = OpensslSha256(m);
      ASSERT_EQ(Sha256Of(m), want) << "length " << n;
      Sha256 h;
      for (size_t off = 0; off < n; off += 1 + off % 70) {
        h.Update(std::string_view(m).substr(off, 1 + off % 70));
      }
      ASSERT_EQ(h.Finish(), want) << "length " << n << " in pieces";
    }
  });
}

TEST(Sha256Test, TwoMessagesAtOnceAgreeWithOpenssl) {
  ForEachImplementation([] {
    std::mt19937_64 rng(2);
    for (size_t n = 0; n <= 200; ++n) {
      for (size_t other : {n, n + 1, size_t{0}}) {
        const std::string a = RandomBytes(rng, n), b = RandomBytes(rng, other);
        Digest256 da, db;
        Sha256OfTwo(a, b, &da, &db);
        ASSERT_EQ(da, OpensslSha256(a)) << n << " and " << other;
        ASSERT_EQ(db, OpensslSha256(b)) << n << " and " << other;
      }
    }
  });
}

TEST(Sha256Test, ShaExtensionsAndPortableCompressionAgreeOnManyBlocks) {
  if (!internal::CpuHasShaExtensions()) GTEST_SKIP() << "this CPU has no SHA extensions";
  std::mt19937_64 rng(4);
  const std::string data = RandomBytes(rng, 64 * 1000);
  const auto* p = reinterpret_cast<const uint8_t*>(data.data());
  uint32_t portable[8], ext[8], ext_a[8], ext_b[8];
  for (uint32_t* s : {portable, ext, ext_a, ext_b}) {
    std::copy(internal::kSha256Initial, internal::kSha256Initial + 8, s);
  }
  internal::Sha256CompressPortable(portable, p, 1000);
  internal::Sha256CompressShaExt(ext, p, 1000);
  EXPECT_TRUE(std::equal(portable, portable + 8, ext));
  uint32_t portable_b[8];
  std::copy(internal::kSha256Initial, internal::kSha256Initial + 8, portable_b);
  internal::Sha256CompressPortable(portable_b, p + 64 * 500, 500);
  internal::Sha256Compress2ShaExt(ext_a, p, ext_b, p + 64 * 500, 500);
  uint32_t portable_a[8];
  std::copy(internal::kSha256Initial, internal::kSha256Initial + 8, portable_a);
  internal::Sha256CompressPortable(portable_a, p, 500);
  EXPECT_TRUE(std::equal(portable_a, portable_a + 8, ext_a));
  EXPECT_TRUE(std::equal(portable_b, portable_b + 8, ext_b));
}

TEST(Sha256Test, FipsVectorsWithThePortableImplementation) {
  internal::ForcePortableSha256ForTesting(true);
  // FIPS 180-4 examples, as above.
  EXPECT_EQ(Hex(Sha256Of("abc")),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
  EXPECT_EQ(Hex(Sha256Of("abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq")),
            "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1");
  internal::ForcePortableSha256ForTesting(false);
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
