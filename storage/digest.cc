#include "storage/digest.h"

#include <errno.h>
#include <fcntl.h>
#include <openssl/evp.h>
#include <string.h>
#include <unistd.h>

#include <cstdlib>
#include <vector>

namespace unseen {
namespace {

constexpr size_t kFileChunk = 1 << 20;  // Sha256File reads 1 MiB at a time

// The SHA-256 implementation, fetched from the default provider once per
// process. Fetching is the expensive part of EVP; every context reuses it.
const EVP_MD* Sha256Md() {
  static const EVP_MD* md = [] {
    EVP_MD* m = EVP_MD_fetch(nullptr, "SHA256", nullptr);
    if (m == nullptr) std::abort();  // the default provider always has SHA-256
    return m;
  }();
  return md;
}

EVP_MD_CTX* NewSha256Ctx() {
  EVP_MD_CTX* ctx = EVP_MD_CTX_new();
  if (ctx == nullptr || EVP_DigestInit_ex2(ctx, Sha256Md(), nullptr) != 1) std::abort();
  return ctx;
}

// Writes the digest and re-initialises `ctx` for the next message.
// Re-initialising with the same EVP_MD keeps the provider context, so this
// does not allocate.
void FinishAndReset(EVP_MD_CTX* ctx, Digest256* out) {
  unsigned int len = 0;
  if (EVP_DigestFinal_ex(ctx, out->data(), &len) != 1 || len != out->size()) std::abort();
  if (EVP_DigestInit_ex2(ctx, nullptr, nullptr) != 1) std::abort();
}

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

struct Sha256::Impl {
  Impl() : ctx(NewSha256Ctx()) {}
  ~Impl() { EVP_MD_CTX_free(ctx); }
  Impl(const Impl&) = delete;
  Impl& operator=(const Impl&) = delete;
  EVP_MD_CTX* ctx;
};

Sha256::Sha256() : impl_(std::make_unique<Impl>()) {}
Sha256::~Sha256() = default;
Sha256::Sha256(Sha256&&) noexcept = default;
Sha256& Sha256::operator=(Sha256&&) noexcept = default;

void Sha256::Update(const void* data, size_t n) {
  if (n == 0) return;
  if (EVP_DigestUpdate(impl_->ctx, data, n) != 1) std::abort();
}

Digest256 Sha256::Finish() {
  Digest256 d;
  FinishAndReset(impl_->ctx, &d);
  return d;
}

Digest256 Sha256Of(std::string_view data) {
  // One context per thread, kept for the thread's life: EVP_Digest() would
  // allocate and free a context on every call, which dominates tiny rows.
  thread_local Sha256 hasher;
  hasher.Update(data);
  return hasher.Finish();
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
