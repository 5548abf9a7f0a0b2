#include "storage/digest.h"

#include <errno.h>
#include <fcntl.h>
#include <string.h>
#include <unistd.h>

#include <algorithm>
#include <cstring>
#include <vector>

#include "storage/sha256_compress.h"

namespace unseen {
namespace {

constexpr size_t kFileChunk = 1 << 20;  // Sha256File reads 1 MiB at a time

int HexValue(char c) {
  if (c >= '0' && c <= '9') return c - '0';
  if (c >= 'a' && c <= 'f') return c - 'a' + 10;
  if (c >= 'A' && c <= 'F') return c - 'A' + 10;
  return -1;
}

}  // namespace

std::string ToHex(const void* data, size_t n) {
  static const char kDigits[] = "0123456789abcdef";
  const auto* p = static_cast<const uint8_t*>(data);
  std::string out(2 * n, '\0');
  for (size_t i = 0; i < n; ++i) {
    out[2 * i] = kDigits[p[i] >> 4];
    out[2 * i + 1] = kDigits[p[i] & 0xf];
  }
  return out;
}

Result<std::string> FromHex(std::string_view hex) {
  if (hex.size() % 2 != 0) {
    return Status::InvalidArgument("hex text has an odd number of digits (" +
                                   std::to_string(hex.size()) + "); expected pairs of digits");
  }
  std::string out(hex.size() / 2, '\0');
  for (size_t i = 0; i < hex.size(); i += 2) {
    int hi = HexValue(hex[i]);
    int lo = HexValue(hex[i + 1]);
    if (hi < 0 || lo < 0) {
      size_t bad = hi < 0 ? i : i + 1;
      return Status::InvalidArgument("hex text: offset " + std::to_string(bad) +
                                     ": expected a hex digit 0-9 or a-f");
    }
    out[i / 2] = static_cast<char>((hi << 4) | lo);
  }
  return out;
}

Result<Digest256> Digest256FromHex(std::string_view hex) {
  if (hex.size() != 64) {
    return Status::InvalidArgument("a SHA-256 digest is 64 hex digits; got " +
                                   std::to_string(hex.size()) + " characters");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string bytes, FromHex(hex));
  Digest256 d;
  memcpy(d.data(), bytes.data(), d.size());
  return d;
}

RowDigest TruncateToRowDigest(const Digest256& d) {
  RowDigest r;
  memcpy(r.data(), d.data(), r.size());
  return r;
}

Sha256::Sha256() { std::memcpy(state_, internal::kSha256Initial, sizeof state_); }

void Sha256::Update(const void* data, size_t n) {
  const auto* p = static_cast<const uint8_t*>(data);
  length_ += n;
  if (buffered_ > 0) {
    const size_t take = std::min(n, sizeof buffer_ - buffered_);
    std::memcpy(buffer_ + buffered_, p, take);
    buffered_ += take;
    p += take;
    n -= take;
    if (buffered_ < sizeof buffer_) return;
    internal::Sha256Compress(state_, buffer_, 1);
    buffered_ = 0;
  }
  if (n >= 64) {
    internal::Sha256Compress(state_, p, n / 64);
    p += n / 64 * 64;
    n %= 64;
  }
  if (n > 0) std::memcpy(buffer_, p, n);
  buffered_ = n;
}

Digest256 Sha256::Finish() {
  // FIPS 180-4 section 5.1.1: 0x80, zeros, then the message length in bits.
  const uint64_t bits = length_ * 8;
  uint8_t pad[72] = {0x80};
  const size_t zeros = (buffered_ < 56 ? 56 : 120) - buffered_;
  for (int i = 0; i < 8; ++i) pad[zeros + i] = static_cast<uint8_t>(bits >> (56 - 8 * i));
  Update(pad, zeros + 8);
  Digest256 d;
  for (int i = 0; i < 8; ++i) {
    d[4 * i] = static_cast<uint8_t>(state_[i] >> 24);
    d[4 * i + 1] = static_cast<uint8_t>(state_[i] >> 16);
    d[4 * i + 2] = static_cast<uint8_t>(state_[i] >> 8);
    d[4 * i + 3] = static_cast<uint8_t>(state_[i]);
  }
  std::memcpy(state_, internal::kSha256Initial, sizeof state_);
  buffered_ = 0;
  length_ = 0;
  return d;
}

Digest256 Sha256Of(std::string_view data) { return Sha256Of(data.data(), data.size()); }

Digest256 Sha256Of(const void* data, size_t n) {
  Digest256 d;
  internal::Sha256OneShot(data, n, d.data());
  return d;
}

void Sha256OfTwo(std::string_view a, std::string_view b, Digest256* da, Digest256* db) {
  if (a.size() == b.size()) {
    internal::Sha256OneShot2(a.data(), b.data(), a.size(), da->data(), db->data());
  } else {
    internal::Sha256OneShot(a.data(), a.size(), da->data());
    internal::Sha256OneShot(b.data(), b.size(), db->data());
  }
}

Result<FileDigest> Sha256File(const std::string& path) {
  int fd = open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) {
    int err = errno;
    if (err == ENOENT) return Status::NotFound(path + ": no such file");
    return Status::IOError(path + ": cannot open: " + strerror(err));
  }
  posix_fadvise(fd, 0, 0, POSIX_FADV_SEQUENTIAL);  // a hint; failure is harmless
  std::vector<char> buf(kFileChunk);
  Sha256 hasher;
  FileDigest out;
  for (;;) {
    ssize_t got = read(fd, buf.data(), buf.size());
    if (got < 0) {
      if (errno == EINTR) continue;
      int err = errno;
      close(fd);
      return Status::IOError(path + ": read failed after " + std::to_string(out.size) +
                             " bytes: " + strerror(err));
    }
    if (got == 0) break;
    hasher.Update(buf.data(), static_cast<size_t>(got));
    out.size += static_cast<uint64_t>(got);
  }
  close(fd);  // read-only: a close error cannot lose data
  out.sha256 = hasher.Finish();
  return out;
}

}  // namespace unseen
