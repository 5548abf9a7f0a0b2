#include "storage/seal_crypto.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <algorithm>
#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

std::string Unhex(const std::string& hex) { return *FromHex(hex); }
std::string Hex(const std::string& bytes) { return ToHex(bytes.data(), bytes.size()); }

Key KeyFromHex(const std::string& hex) {
  Key k{};
  std::string b = Unhex(hex);
  std::copy(b.begin(), b.end(), k.begin());
  return k;
}

// RFC 7914 section 12 vectors, recomputed with Python hashlib.scrypt
// (docs/references.md, scrypt).
TEST(ScryptTest, Rfc7914EmptyPassphraseAndSalt) {
  // OpenSSL 3.0 accepts the empty salt of this vector.
  auto dk = Scrypt("", "", {16, 1, 1}, 64);
  ASSERT_OK(dk);
  EXPECT_EQ(Hex(*dk),
            "77d6576238657b203b19ca42c18a0497f16b4844e3074ae8dfdffa3fede21442"
            "fcd0069ded0948f8326a753a0fc81f17e8d3e0fb2e0d3628cf35e20c38d18906");
}

TEST(ScryptTest, Rfc7914PasswordNaCl) {
  auto dk = Scrypt("password", "NaCl", {1024, 8, 16}, 64);
  ASSERT_OK(dk);
  EXPECT_EQ(Hex(*dk),
            "fdbabe1c9d3472007856e7190d01e9fe7c6ad7cbc8237830e77376634b373162"
            "2eaf30d92e22a3886ff109279d9830dac727afb94a83ee6d8360cbdfa2cc0640");
}

TEST(ScryptTest, Rfc7914PleaseLetMeInNeeds16MiB) {
  auto dk = Scrypt("pleaseletmein", "SodiumChloride", {16384, 8, 1}, 64);
  ASSERT_OK(dk);
  EXPECT_EQ(Hex(*dk),
            "7023bdcb3afd7348461c06cd81fd38ebfda8fbba904f8e3ea9b543f6545da1f2"
            "d5432955613f0fcf62d49705242a9af9e61e85dc0d651e40dfcf017b45575887");
}

TEST(ScryptTest, DefaultParamsNeedMoreThanOpensslsDefaultCeiling) {
  // N=32768, r=8 needs 32 MiB plus a little: above OpenSSL's 32 MiB default.
  auto dk = Scrypt("pw", "salt", ScryptParams{}, 32);
  ASSERT_OK(dk);
  EXPECT_EQ(dk->size(), 32u);
}

TEST(ScryptTest, BadParametersAreInvalidArgument) {
  EXPECT_TRUE(Scrypt("p", "s", {1000, 8, 1}, 32).status().IsInvalidArgument());  // not 2^k
  EXPECT_TRUE(Scrypt("p", "s", {1, 8, 1}, 32).status().IsInvalidArgument());
  EXPECT_TRUE(Scrypt("p", "s", {1024, 0, 1}, 32).status().IsInvalidArgument());
  EXPECT_TRUE(Scrypt("p", "s", {1024, 8, 0}, 32).status().IsInvalidArgument());
  EXPECT_TRUE(Scrypt("p", "s", {1024, 8, 1}, 0).status().IsInvalidArgument());
  EXPECT_TRUE(Scrypt("p", "s", {1 << 16, 1, 1}, 32).status().IsInvalidArgument());  // N >= 2^16r
  auto huge = Scrypt("p", "s", {uint64_t{1} << 24, 8, 1}, 32);                      // 2 GiB
  EXPECT_TRUE(huge.status().IsInvalidArgument());
  EXPECT_NE(huge.status().message().find("MiB"), std::string::npos);
}

TEST(KeyFromPassphraseTest, IsTheFirst32BytesOfScrypt) {
  // Computed with Python 3.11 hashlib.scrypt(n=1024, r=8, p=1, dklen=32).
  auto key = KeyFromPassphrase("correct horse", "0123456789abcdef", {1024, 8, 1});
  ASSERT_OK(key);
  EXPECT_EQ(ToHex(*key), "ea0dee985fae56b26c39b69366121b6d3960aef38415c088b5dc128ed3c5ebb3");
  EXPECT_TRUE(KeyFromPassphrase("", "salt", {1024, 8, 1}).status().IsInvalidArgument());
}

struct GcmCase {
  const char* name;
  std::string key, iv, aad, plaintext, ciphertext, tag;
};

// McGrew & Viega, "The Galois/Counter Mode of Operation (GCM)", Appendix B,
// AES-256 Test Cases 13-16, recomputed with Python cryptography 38.0.4 AESGCM
// (docs/references.md, AES-256-GCM).
std::vector<GcmCase> GcmSpecCases() {
  const std::string k16 = "feffe9928665731c6d6a8f9467308308feffe9928665731c6d6a8f9467308308";
  const std::string p16 =
      "d9313225f88406e5a55909c5aff5269a86a7a9531534f7da2e4c303d8a318a72"
      "1c3c0c95956809532fcf0e2449a6b525b16aedf5aa0de657ba637b39";
  const std::string c16 =
      "522dc1f099567d07f47f37a32a84427d643a8cdcbfe5c0c97598a2bd2555d1aa"
      "8cb08e48590dbb3da7b08b1056828838c5f61e6393ba7a0abcc9f662";
  return {
      {"TC13", std::string(64, '0'), std::string(24, '0'), "", "", "",
       "530f8afbc74536b9a963b4f1c4cb738b"},
      {"TC14", std::string(64, '0'), std::string(24, '0'), "", std::string(32, '0'),
       "cea7403d4d606b6e074ec5d3baf39d18", "d0d1c8a799996bf0265b98b5d48ab919"},
      {"TC15", k16, "cafebabefacedbaddecaf888", "", p16 + "1aafd255", c16 + "898015ad",
       "b094dac5d93471bdec1a502270e3cc6c"},
      {"TC16", k16, "cafebabefacedbaddecaf888", "feedfacedeadbeeffeedfacedeadbeefabaddad2", p16,
       c16, "76fc6ece0f4e1768cddf8853bb2d551b"},
  };
}

TEST(AesGcmTest, SpecTestCases13To16EncryptAndDecrypt) {
  for (const GcmCase& c : GcmSpecCases()) {
    SCOPED_TRACE(c.name);
    Key key = KeyFromHex(c.key);
    std::string tag;
    auto ct = AesGcmEncrypt(key, Unhex(c.iv), Unhex(c.aad), Unhex(c.plaintext), &tag);
    ASSERT_OK(ct);
    EXPECT_EQ(Hex(*ct), c.ciphertext);
    EXPECT_EQ(Hex(tag), c.tag);
    auto pt = AesGcmDecrypt(key, Unhex(c.iv), Unhex(c.aad), Unhex(c.ciphertext), Unhex(c.tag));
    ASSERT_OK(pt);
    EXPECT_EQ(Hex(*pt), c.plaintext);
  }
}

class AesGcmTamperTest : public ::testing::Test {
 protected:
  void SetUp() override {
    c_ = GcmSpecCases()[3];  // TC16: has AAD and a partial final block
    key_ = KeyFromHex(c_.key);
    iv_ = Unhex(c_.iv);
    aad_ = Unhex(c_.aad);
    ct_ = Unhex(c_.ciphertext);
    tag_ = Unhex(c_.tag);
  }
  GcmCase c_;
  Key key_;
  std::string iv_, aad_, ct_, tag_;
};

TEST_F(AesGcmTamperTest, WrongKeyIsWrongKey) {
  Key other = key_;
  other[31] ^= 1;
  EXPECT_TRUE(AesGcmDecrypt(other, iv_, aad_, ct_, tag_).status().IsWrongKey());
}

TEST_F(AesGcmTamperTest, FlippedCiphertextBitIsWrongKey) {
  for (size_t i : {size_t{0}, ct_.size() / 2, ct_.size() - 1}) {
    std::string bad = ct_;
    bad[i] ^= 0x10;
    EXPECT_TRUE(AesGcmDecrypt(key_, iv_, aad_, bad, tag_).status().IsWrongKey()) << i;
  }
}

TEST_F(AesGcmTamperTest, AlteredTagAadOrIvIsWrongKey) {
  std::string tag = tag_;
  tag[0] ^= 1;
  EXPECT_TRUE(AesGcmDecrypt(key_, iv_, aad_, ct_, tag).status().IsWrongKey());
  std::string aad = aad_;
  aad.back() ^= 1;
  EXPECT_TRUE(AesGcmDecrypt(key_, iv_, aad, ct_, tag_).status().IsWrongKey());
  EXPECT_TRUE(AesGcmDecrypt(key_, iv_, "", ct_, tag_).status().IsWrongKey());
  std::string iv = iv_;
  iv[11] ^= 1;
  EXPECT_TRUE(AesGcmDecrypt(key_, iv, aad_, ct_, tag_).status().IsWrongKey());
}

TEST_F(AesGcmTamperTest, BadIvOrTagSizeIsInvalidArgument) {
  std::string tag;
  EXPECT_TRUE(AesGcmEncrypt(key_, iv_.substr(0, 8), "", "x", &tag).status().IsInvalidArgument());
  EXPECT_TRUE(AesGcmDecrypt(key_, iv_ + "0000", aad_, ct_, tag_).status().IsInvalidArgument());
  EXPECT_TRUE(AesGcmDecrypt(key_, iv_, aad_, ct_, tag_.substr(0, 12)).status().IsInvalidArgument());
}

TEST(RandomBytesTest, GivesTheLengthAskedAndDiffersEachCall) {
  auto a = RandomBytes(32);
  auto b = RandomBytes(32);
  ASSERT_OK(a);
  ASSERT_OK(b);
  EXPECT_EQ(a->size(), 32u);
  EXPECT_NE(*a, *b);
  EXPECT_EQ(RandomBytes(0)->size(), 0u);
}

TEST(KeyFileTest, WritesMode0600AndReadsBack) {
  testing::TempDir dir;
  const std::string path = dir.File("holdout.key");
  mode_t old = umask(0);  // a permissive umask must not loosen the mode
  Status s = WriteKeyFile(path);
  umask(old);
  ASSERT_OK(s);
  struct stat st;
  ASSERT_EQ(stat(path.c_str(), &st), 0);
  EXPECT_EQ(st.st_mode & 07777, 0600u);
  EXPECT_EQ(st.st_size, 32);
  auto key = ReadKeyFile(path);
  ASSERT_OK(key);
  EXPECT_EQ(std::string(key->begin(), key->end()), testing::ReadFile(path));
}

TEST(KeyFileTest, RestrictiveUmaskStillGives0600) {
  testing::TempDir dir;
  mode_t old = umask(0777);
  Status s = WriteKeyFile(dir.File("k"));
  umask(old);
  ASSERT_OK(s);
  struct stat st;
  ASSERT_EQ(stat(dir.File("k").c_str(), &st), 0);
  EXPECT_EQ(st.st_mode & 07777, 0600u);
}

TEST(KeyFileTest, SecondWriteIsAlreadyExistsAndKeepsTheKey) {
  testing::TempDir dir;
  const std::string path = dir.File("k");
  ASSERT_OK(WriteKeyFile(path));
  const std::string before = testing::ReadFile(path);
  Status again = WriteKeyFile(path);
  EXPECT_TRUE(again.IsAlreadyExists()) << again.ToString();
  EXPECT_NE(again.message().find(path), std::string::npos);
  EXPECT_EQ(testing::ReadFile(path), before);
}

TEST(KeyFileTest, TwoKeyFilesDiffer) {
  testing::TempDir dir;
  ASSERT_OK(WriteKeyFile(dir.File("a")));
  ASSERT_OK(WriteKeyFile(dir.File("b")));
  EXPECT_NE(*ReadKeyFile(dir.File("a")), *ReadKeyFile(dir.File("b")));
}

TEST(KeyFileTest, ThirtyOneBytesIsInvalidArgumentNamingPathAndSize) {
  testing::TempDir dir;
  const std::string path = dir.File("short.key");
  testing::WriteFile(path, std::string(31, 'k'));
  auto key = ReadKeyFile(path);
  EXPECT_TRUE(key.status().IsInvalidArgument());
  EXPECT_NE(key.status().message().find(path), std::string::npos);
  EXPECT_NE(key.status().message().find("found 31"), std::string::npos) << key.status().ToString();
  testing::WriteFile(path, std::string(33, 'k'));
  EXPECT_TRUE(ReadKeyFile(path).status().IsInvalidArgument());
}

TEST(KeyFileTest, MissingIsNotFoundAndDirectoryIsInvalidArgument) {
  testing::TempDir dir;
  EXPECT_TRUE(ReadKeyFile(dir.File("none")).status().IsNotFound());
  EXPECT_TRUE(ReadKeyFile(dir.path()).status().IsInvalidArgument());
}

TEST(KeyCheckTest, IsHmacSha256OfLabelAndContext) {
  Key key;
  for (size_t i = 0; i < key.size(); ++i) key[i] = static_cast<uint8_t>(i);
  // Computed with Python 3.11 hmac.new(bytes(range(32)), msg, hashlib.sha256).
  EXPECT_EQ(ToHex(KeyCheck(key, "ledger-1")),
            "8c7825b266ba86867df349839f081facebec6decea67f336664076747e187640");
  EXPECT_EQ(ToHex(KeyCheck(key, "")),
            "50656bea94121c1eef5bab799daeb65fe99bead83deafcafcf5a1ac02a5877aa");
  Key other = key;
  other[0] ^= 1;
  EXPECT_NE(KeyCheck(other, "ledger-1"), KeyCheck(key, "ledger-1"));
}

}  // namespace
}  // namespace unseen
