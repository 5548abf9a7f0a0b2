// SHA-256 digests (one-shot, incremental, of whole files) and hex text.
//
// A Digest256 names content; a RowDigest (the first 16 bytes of a SHA-256)
// names one row. The hashing is our own FIPS 180-4 implementation
// (storage/sha256_compress.h), using the CPU's SHA extensions when it has
// them; tests check it against the FIPS examples and against OpenSSL. A Sha256
// object is thread-compatible; the free functions are thread-safe.
#ifndef UNSEEN_STORAGE_DIGEST_H_
#define UNSEEN_STORAGE_DIGEST_H_

#include <array>
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>

#include "storage/status.h"

namespace unseen {

using Digest256 = std::array<uint8_t, 32>;
using RowDigest = std::array<uint8_t, 16>;  // the first 16 bytes of a SHA-256

// Lower-case hex of `n` bytes at `data`.
std::string ToHex(const void* data, size_t n);
template <size_t N>
std::string ToHex(const std::array<uint8_t, N>& a) {
  return ToHex(a.data(), N);
}

// Bytes from hex text (either case, no separators). InvalidArgument naming the
// offset of the first bad character, or the length when it is odd.
Result<std::string> FromHex(std::string_view hex);

// A digest from exactly 64 hex digits; InvalidArgument otherwise.
Result<Digest256> Digest256FromHex(std::string_view hex);

// The row digest of a full SHA-256: its first 16 bytes.
RowDigest TruncateToRowDigest(const Digest256& d);

// Incremental SHA-256. Finish() returns the digest of everything passed to
// Update() since construction or the previous Finish(), and resets the object
// for reuse. It holds no heap memory, so one object can hash millions of small
// messages without allocating. Non-copyable (a copied half-finished digest is
// almost always a bug); movable.
class Sha256 {
 public:
  Sha256();
  Sha256(const Sha256&) = delete;
  Sha256& operator=(const Sha256&) = delete;
  Sha256(Sha256&&) noexcept = default;
  Sha256& operator=(Sha256&&) noexcept = default;

  void Update(const void* data, size_t n);
  void Update(std::string_view s) { Update(s.data(), s.size()); }
  Digest256 Finish();

 private:
  uint32_t state_[8];
  uint8_t buffer_[64];
  size_t buffered_ = 0;  // bytes in buffer_, always < 64
  uint64_t length_ = 0;  // bytes hashed since the last reset
};

// SHA-256 of `data` (or of the `n` bytes at `data`). Does not allocate.
Digest256 Sha256Of(std::string_view data);
Digest256 Sha256Of(const void* data, size_t n);

// The SHA-256 of two messages, *da of `a` and *db of `b`. When they have the
// same length the two are computed interleaved, which on CPUs with the SHA
// extensions takes about the time of one.
void Sha256OfTwo(std::string_view a, std::string_view b, Digest256* da, Digest256* db);

struct FileDigest {
  Digest256 sha256{};
  uint64_t size = 0;  // bytes hashed
};

// Hashes the file at `path` with read() in 1 MiB chunks (memory does not grow
// with the file's size). NotFound if the file does not exist; IOError naming
// the path and the system error if it cannot be opened or read.
Result<FileDigest> Sha256File(const std::string& path);

}  // namespace unseen

#endif  // UNSEEN_STORAGE_DIGEST_H_
