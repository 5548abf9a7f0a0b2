#include "storage/seal_crypto.h"

#include <errno.h>
#include <fcntl.h>
#include <openssl/core_names.h>
#include <openssl/crypto.h>
#include <openssl/err.h>
#include <openssl/evp.h>
#include <openssl/hmac.h>
#include <openssl/kdf.h>
#include <openssl/params.h>
#include <openssl/rand.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <climits>
#include <cstdlib>
#include <memory>

namespace unseen {
namespace {

constexpr size_t kKeySize = 32;
constexpr char kKeyCheckLabel[] = "unseen key check v1";
// EVP update calls take an int length; longer inputs go in pieces this big.
constexpr size_t kMaxEvpChunk = size_t{1} << 30;

// The queued OpenSSL errors as one line (and clears the queue).
std::string OpensslErrors() {
  std::string out;
  char buf[256];
  for (unsigned long e = ERR_get_error(); e != 0; e = ERR_get_error()) {
    ERR_error_string_n(e, buf, sizeof(buf));
    if (!out.empty()) out += "; ";
    out += buf;
  }
  return out.empty() ? "no OpenSSL error queued" : out;
}

struct CipherCtxFree {
  void operator()(EVP_CIPHER_CTX* c) const { EVP_CIPHER_CTX_free(c); }
};
using CipherCtx = std::unique_ptr<EVP_CIPHER_CTX, CipherCtxFree>;

struct KdfCtxFree {
  void operator()(EVP_KDF_CTX* c) const { EVP_KDF_CTX_free(c); }
};

const EVP_CIPHER* Aes256Gcm() {
  static const EVP_CIPHER* c = EVP_CIPHER_fetch(nullptr, "AES-256-GCM", nullptr);
  return c;
}

// write() all of `data`, retrying short writes and EINTR.
bool WriteAll(int fd, const uint8_t* data, size_t n) {
  while (n > 0) {
    ssize_t w = write(fd, data, n);
    if (w < 0 && errno == EINTR) continue;
    if (w <= 0) return false;
    data += w;
    n -= static_cast<size_t>(w);
  }
  return true;
}

// Runs EVP_{En,De}cryptUpdate over `in` in int-sized pieces, appending to *out.
bool CipherUpdate(EVP_CIPHER_CTX* ctx, std::string_view in, std::string* out) {
  size_t base = out->size();
  out->resize(base + in.size());
  auto* dst = reinterpret_cast<unsigned char*>(&(*out)[0]) + base;
  for (size_t off = 0; off < in.size();) {
    size_t len = std::min(in.size() - off, kMaxEvpChunk);
    int outl = 0;
    if (EVP_CipherUpdate(ctx, dst + off, &outl,
                         reinterpret_cast<const unsigned char*>(in.data()) + off,
                         static_cast<int>(len)) != 1 ||
        static_cast<size_t>(outl) != len) {
      return false;
    }
    off += len;
  }
  return true;
}

// Sets up an AES-256-GCM context for encryption (enc = 1) or decryption
// (enc = 0) and feeds it the AAD.
Result<CipherCtx> StartGcm(const Key& key, std::string_view iv, std::string_view aad, int enc) {
  if (iv.size() != kGcmIvSize) {
    return Status::InvalidArgument("AES-GCM IV must be 12 bytes; got " + std::to_string(iv.size()));
  }
  CipherCtx ctx(EVP_CIPHER_CTX_new());
  if (!ctx || Aes256Gcm() == nullptr ||
      EVP_CipherInit_ex2(ctx.get(), Aes256Gcm(), key.data(),
                         reinterpret_cast<const unsigned char*>(iv.data()), enc, nullptr) != 1) {
    return Status::Internal("AES-256-GCM setup failed: " + OpensslErrors());
  }
  for (size_t off = 0; off < aad.size();) {
    size_t len = std::min(aad.size() - off, kMaxEvpChunk);
    int outl = 0;
    if (EVP_CipherUpdate(ctx.get(), nullptr, &outl,
                         reinterpret_cast<const unsigned char*>(aad.data()) + off,
                         static_cast<int>(len)) != 1) {
      return Status::Internal("AES-256-GCM AAD failed: " + OpensslErrors());
    }
    off += len;
  }
  return ctx;
}

Status CheckScryptParams(const ScryptParams& params, size_t dk_len, uint64_t* memory) {
  if (params.n < 2 || (params.n & (params.n - 1)) != 0) {
    return Status::InvalidArgument("scrypt N must be a power of two greater than 1; got " +
                                   std::to_string(params.n));
  }
  if (params.r == 0 || params.p == 0) {
    return Status::InvalidArgument("scrypt r and p must be at least 1; got r=" +
                                   std::to_string(params.r) + " p=" + std::to_string(params.p));
  }
  if (params.r < 4 && params.n >= (uint64_t{1} << (16 * params.r))) {
    // RFC 7914 section 2 requires N < 2^(128 * r / 8).
    return Status::InvalidArgument("scrypt N must be below 2^(16 r); got N=" +
                                   std::to_string(params.n) + " r=" + std::to_string(params.r));
  }
  if (dk_len == 0) return Status::InvalidArgument("scrypt output length must be at least 1");
  // OpenSSL's accounting: B is 128*r*p bytes, V is 128*r*(N+2) bytes.
  const uint64_t kLimitBlocks = kMaxScryptMemory / 128;
  uint64_t blocks_per_r = params.n + 2 + params.p;  // cannot overflow: n < 2^64 / 2
  if (params.n > kLimitBlocks || blocks_per_r > kLimitBlocks / params.r) {
    return Status::InvalidArgument("scrypt parameters N=" + std::to_string(params.n) +
                                   " r=" + std::to_string(params.r) +
                                   " p=" + std::to_string(params.p) + " need more than " +
                                   std::to_string(kMaxScryptMemory >> 20) + " MiB");
  }
  *memory = 128 * params.r * blocks_per_r;
  return Status::OK();
}

}  // namespace

Result<std::string> RandomBytes(size_t n) {
  std::string out(n, '\0');
  for (size_t off = 0; off < n;) {
    size_t len = std::min(n - off, kMaxEvpChunk);
    if (RAND_bytes(reinterpret_cast<unsigned char*>(&out[off]), static_cast<int>(len)) != 1) {
      return Status::IOError("the random number generator failed: " + OpensslErrors());
    }
    off += len;
  }
  return out;
}

Status WriteKeyFile(const std::string& path) {
  Key key;
  if (RAND_bytes(key.data(), static_cast<int>(key.size())) != 1) {
    return Status::IOError("the random number generator failed: " + OpensslErrors());
  }
  // O_EXCL makes creation atomic and refuses an existing file or symlink.
  int fd = open(path.c_str(), O_WRONLY | O_CREAT | O_EXCL | O_CLOEXEC, 0600);
  if (fd < 0) {
    int err = errno;
    OPENSSL_cleanse(key.data(), key.size());
    if (err == EEXIST)
      return Status::AlreadyExists(path + ": file exists; refusing to overwrite a key");
    return Status::IOError(path + ": cannot create key file: " + strerror(err));
  }
  std::string failed;
  // fchmod because the umask may have cleared owner bits of the 0600 asked for.
  if (fchmod(fd, 0600) != 0) {
    failed = "fchmod";
  } else if (!WriteAll(fd, key.data(), key.size())) {
    failed = "write";
  } else if (fsync(fd) != 0) {
    failed = "fsync";
  }
  int err = errno;
  OPENSSL_cleanse(key.data(), key.size());
  if (close(fd) != 0 && failed.empty()) {
    failed = "close";
    err = errno;
  }
  if (!failed.empty()) {
    unlink(path.c_str());
    return Status::IOError(path + ": " + failed + " failed: " + strerror(err));
  }
  return Status::OK();
}

Result<Key> ReadKeyFile(const std::string& path) {
  int fd = open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) {
    int err = errno;
    if (err == ENOENT) return Status::NotFound(path + ": no such key file");
    return Status::IOError(path + ": cannot open key file: " + strerror(err));
  }
  struct stat st;
  if (fstat(fd, &st) != 0) {
    int err = errno;
    close(fd);
    return Status::IOError(path + ": cannot stat key file: " + strerror(err));
  }
  if (!S_ISREG(st.st_mode) || st.st_size != static_cast<off_t>(kKeySize)) {
    close(fd);
    if (!S_ISREG(st.st_mode))
      return Status::InvalidArgument(path + ": a key file must be a regular file");
    return Status::InvalidArgument(path + ": a key file holds exactly 32 bytes; found " +
                                   std::to_string(st.st_size));
  }
  Key key;
  size_t got = 0;
  while (got < key.size()) {
    ssize_t r = read(fd, key.data() + got, key.size() - got);
    if (r < 0 && errno == EINTR) continue;
    if (r <= 0) break;
    got += static_cast<size_t>(r);
  }
  int err = errno;
  close(fd);
  if (got != key.size()) {
    OPENSSL_cleanse(key.data(), key.size());
    return Status::IOError(path + ": short read of key file (" + std::to_string(got) +
                           " of 32 bytes): " + strerror(err));
  }
  return key;
}

Result<std::string> Scrypt(std::string_view passphrase, std::string_view salt,
                           const ScryptParams& params, size_t dk_len) {
  uint64_t memory = 0;
  UNSEEN_RETURN_IF_ERROR(CheckScryptParams(params, dk_len, &memory));
  EVP_KDF* kdf = EVP_KDF_fetch(nullptr, "SCRYPT", nullptr);
  if (kdf == nullptr) return Status::Internal("scrypt is unavailable: " + OpensslErrors());
  std::unique_ptr<EVP_KDF_CTX, KdfCtxFree> ctx(EVP_KDF_CTX_new(kdf));
  EVP_KDF_free(kdf);  // the context holds its own reference
  if (!ctx) return Status::Internal("scrypt context: " + OpensslErrors());

  uint64_t n = params.n;
  uint32_t r = params.r;
  uint32_t p = params.p;
  uint64_t maxmem = memory + (1 << 16);  // OpenSSL's default ceiling is 32 MiB; raise it
  // OpenSSL takes an empty octet string as an empty salt, but wants a non-null pointer.
  static const char kEmpty[1] = {0};
  OSSL_PARAM ossl_params[] = {
      OSSL_PARAM_construct_octet_string(
          OSSL_KDF_PARAM_PASSWORD,
          const_cast<char*>(passphrase.empty() ? kEmpty : passphrase.data()), passphrase.size()),
      OSSL_PARAM_construct_octet_string(
          OSSL_KDF_PARAM_SALT, const_cast<char*>(salt.empty() ? kEmpty : salt.data()), salt.size()),
      OSSL_PARAM_construct_uint64(OSSL_KDF_PARAM_SCRYPT_N, &n),
      OSSL_PARAM_construct_uint32(OSSL_KDF_PARAM_SCRYPT_R, &r),
      OSSL_PARAM_construct_uint32(OSSL_KDF_PARAM_SCRYPT_P, &p),
      OSSL_PARAM_construct_uint64(OSSL_KDF_PARAM_SCRYPT_MAXMEM, &maxmem),
      OSSL_PARAM_construct_end(),
  };
  std::string out(dk_len, '\0');
  if (EVP_KDF_derive(ctx.get(), reinterpret_cast<unsigned char*>(&out[0]), dk_len, ossl_params) !=
      1) {
    return Status::Internal("scrypt failed: " + OpensslErrors());
  }
  return out;
}

Result<Key> KeyFromPassphrase(std::string_view passphrase, std::string_view salt,
                              const ScryptParams& params) {
  if (passphrase.empty()) return Status::InvalidArgument("the passphrase is empty");
  UNSEEN_ASSIGN_OR_RETURN(std::string dk, Scrypt(passphrase, salt, params, kKeySize));
  Key key;
  memcpy(key.data(), dk.data(), key.size());
  OPENSSL_cleanse(&dk[0], dk.size());
  return key;
}

Result<std::string> AesGcmEncrypt(const Key& key, std::string_view iv, std::string_view aad,
                                  std::string_view plaintext, std::string* tag) {
  UNSEEN_ASSIGN_OR_RETURN(CipherCtx ctx, StartGcm(key, iv, aad, /*enc=*/1));
  std::string out;
  int outl = 0;
  unsigned char t[kGcmTagSize];
  if (!CipherUpdate(ctx.get(), plaintext, &out) ||
      EVP_EncryptFinal_ex(ctx.get(), nullptr, &outl) != 1 ||
      EVP_CIPHER_CTX_ctrl(ctx.get(), EVP_CTRL_GCM_GET_TAG, sizeof(t), t) != 1) {
    return Status::Internal("AES-256-GCM encryption failed: " + OpensslErrors());
  }
  tag->assign(reinterpret_cast<const char*>(t), sizeof(t));
  return out;
}

Result<std::string> AesGcmDecrypt(const Key& key, std::string_view iv, std::string_view aad,
                                  std::string_view ciphertext, std::string_view tag) {
  if (tag.size() != kGcmTagSize) {
    return Status::InvalidArgument("AES-GCM tag must be 16 bytes; got " +
                                   std::to_string(tag.size()));
  }
  UNSEEN_ASSIGN_OR_RETURN(CipherCtx ctx, StartGcm(key, iv, aad, /*enc=*/0));
  std::string out;
  if (!CipherUpdate(ctx.get(), ciphertext, &out) ||
      EVP_CIPHER_CTX_ctrl(ctx.get(), EVP_CTRL_GCM_SET_TAG, static_cast<int>(tag.size()),
                          const_cast<char*>(tag.data())) != 1) {
    return Status::Internal("AES-256-GCM decryption failed: " + OpensslErrors());
  }
  int outl = 0;
  if (EVP_DecryptFinal_ex(ctx.get(), nullptr, &outl) != 1) {
    ERR_clear_error();
    OPENSSL_cleanse(&out[0], out.size());
    return Status::WrongKey(
        "AES-GCM authentication failed: wrong key, or the ciphertext, tag or associated data "
        "were altered");
  }
  return out;
}

Digest256 KeyCheck(const Key& key, std::string_view context) {
  std::string msg = kKeyCheckLabel;  // 19 bytes, no terminator
  msg.append(context.data(), context.size());
  Digest256 out;
  unsigned int len = 0;
  if (HMAC(EVP_sha256(), key.data(), static_cast<int>(key.size()),
           reinterpret_cast<const unsigned char*>(msg.data()), msg.size(), out.data(),
           &len) == nullptr ||
      len != out.size()) {
    std::abort();  // HMAC-SHA256 fails only when OpenSSL cannot allocate
  }
  return out;
}

}  // namespace unseen
