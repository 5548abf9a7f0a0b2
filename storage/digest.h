// SHA-256 digests (one-shot, incremental, of whole files) and hex text.
//
// A Digest256 names content; a RowDigest (the first 16 bytes of a SHA-256)
// names one row. A Sha256 object is thread-compatible; the free functions are
// thread-safe. Functions returning a digest abort only if OpenSSL cannot allocate.
#ifndef UNSEEN_STORAGE_DIGEST_H_
#define UNSEEN_STORAGE_DIGEST_H_

#include <array>
#include <cstddef>
#include <cstdint>
#include <memory>
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
// for reuse, so one object can hash millions of small messages without
// allocating. Non-copyable (it owns an OpenSSL context); movable. A moved-from
// object may only be destroyed or assigned to.
class Sha256 {
 public:
  Sha256();
  ~Sha256();
  Sha256(const Sha256&) = delete;
  Sha256& operator=(const Sha256&) = delete;
  Sha256(Sha256&&) noexcept;
  Sha256& operator=(Sha256&&) noexcept;

  void Update(const void* data, size_t n);
  void Update(std::string_view s) { Update(s.data(), s.size()); }
  Digest256 Finish();

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// SHA-256 of `data`. Uses a per-thread context, so it does not allocate.
Digest256 Sha256Of(std::string_view data);

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
