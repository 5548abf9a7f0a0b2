// Keys and the primitives that seal the holdout: random bytes, key files,
// scrypt, AES-256-GCM and the key check value.
//
// A Key is 32 bytes from a key file or from a passphrase via scrypt; it is
// never stored. All functions are thread-safe.
#ifndef UNSEEN_STORAGE_SEAL_CRYPTO_H_
#define UNSEEN_STORAGE_SEAL_CRYPTO_H_

#include <array>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

using Key = std::array<uint8_t, 32>;

constexpr size_t kGcmIvSize = 12;   // bytes; the only IV size accepted
constexpr size_t kGcmTagSize = 16;  // bytes

// `n` bytes from OpenSSL's CSPRNG. IOError if it cannot be seeded.
Result<std::string> RandomBytes(size_t n);

// Creates a key file holding 32 random bytes, mode 0600 (set explicitly, so
// the umask cannot loosen it), flushed with fsync before returning.
// AlreadyExists if `path` exists (never overwrites, never follows a link there);
// IOError naming the path otherwise. A failed write removes the partial file.
Status WriteKeyFile(const std::string& path);

// Reads a key file. NotFound if it is missing; InvalidArgument naming the
// path and the size found unless it is a regular file of exactly 32 bytes;
// IOError if it cannot be read.
Result<Key> ReadKeyFile(const std::string& path);

// scrypt cost parameters (RFC 7914). Memory use is about 128 * r * (n + p)
// bytes. These values are written to the ledger next to the salt.
struct ScryptParams {
  // CPU/memory cost; a power of two greater than 1.
  // Default: 32768 (with r = 8, about 32 MiB and a fraction of a second).
  uint64_t n = 1 << 15;
  // Block size. Default: 8.
  uint32_t r = 8;
  // Parallelisation. Default: 1.
  uint32_t p = 1;
};

// Memory ceiling for Scrypt, in bytes: parameters that need more are refused.
constexpr uint64_t kMaxScryptMemory = uint64_t{1} << 30;

// scrypt(passphrase, salt, N, r, p, dk_len) per RFC 7914. Empty passphrase and
// salt are accepted (RFC 7914 has such a vector). InvalidArgument if n is not
// a power of two above 1, r or p is 0, dk_len is 0, or the memory needed
// exceeds kMaxScryptMemory; Internal if OpenSSL fails otherwise.
Result<std::string> Scrypt(std::string_view passphrase, std::string_view salt,
                           const ScryptParams& params, size_t dk_len);

// A 32-byte key from a passphrase: Scrypt(passphrase, salt, params, 32).
// `salt` should be 16 bytes from RandomBytes, stored beside the params.
// InvalidArgument if the passphrase is empty, and as Scrypt otherwise.
Result<Key> KeyFromPassphrase(std::string_view passphrase, std::string_view salt,
                              const ScryptParams& params);

// AES-256-GCM with a 12-byte IV and a 16-byte tag. Returns the ciphertext
// (as long as the plaintext) and stores the tag in *tag. The IV must never be
// reused with the same key. InvalidArgument if iv is not 12 bytes.
// REQUIRES: tag != nullptr.
Result<std::string> AesGcmEncrypt(const Key& key, std::string_view iv, std::string_view aad,
                                  std::string_view plaintext, std::string* tag);

// Inverse of AesGcmEncrypt. WrongKey when authentication fails, which means
// a wrong key or altered iv, aad, ciphertext or tag (KeyCheck tells these
// apart); InvalidArgument if iv is not 12 bytes or tag is not 16 bytes.
Result<std::string> AesGcmDecrypt(const Key& key, std::string_view iv, std::string_view aad,
                                  std::string_view ciphertext, std::string_view tag);

// HMAC-SHA256(key, "unseen key check v1" || context): stored so that a wrong
// key can be told from a damaged blob, without revealing the key. The label
// is its 19 ASCII bytes, with no terminator or length prefix.
Digest256 KeyCheck(const Key& key, std::string_view context);

}  // namespace unseen

#endif  // UNSEEN_STORAGE_SEAL_CRYPTO_H_
