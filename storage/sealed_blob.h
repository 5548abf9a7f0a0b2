// Sealed blobs: the holdout rows, compressed with zstd and encrypted with
// AES-256-GCM as they stream in, in the frozen format of docs/sealed-format.md.
//
// A SealedWriter is thread-compatible (one thread at a time); OpenSealed is
// thread-safe.
#ifndef UNSEEN_STORAGE_SEALED_BLOB_H_
#define UNSEEN_STORAGE_SEALED_BLOB_H_

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "storage/seal_crypto.h"
#include "storage/status.h"

namespace unseen {

// Written to disk as bytes 8-10 of every blob: do not renumber.
constexpr uint8_t kSealedFormatVersion = 1;
constexpr uint8_t kSealedCipherAes256Gcm = 1;
constexpr uint8_t kSealedCompressionZstd = 1;

// Seals plaintext fed in pieces: each piece is compressed (zstd level 3) and
// the compressed bytes are encrypted as they come, so the whole plaintext is
// never held; the blob (compressed, encrypted) grows in memory.
// Non-copyable: it owns compression and cipher state that must not be shared.
//
// Example:
//   UNSEEN_ASSIGN_OR_RETURN(auto w, SealedWriter::Create(key, "ledger/seal/1"));
//   for (const std::string& line : lines) UNSEEN_RETURN_IF_ERROR(w->Append(line));
//   UNSEEN_ASSIGN_OR_RETURN(std::string blob, w->Finish());
class SealedWriter {
 public:
  // A writer with a fresh random 12-byte nonce, bound to `aad` (which must be
  // given again to OpenSealed). Internal if zstd or OpenSSL cannot start;
  // IOError if the random number generator fails.
  static Result<std::unique_ptr<SealedWriter>> Create(const Key& key, std::string aad);

  ~SealedWriter();
  SealedWriter(const SealedWriter&) = delete;
  SealedWriter& operator=(const SealedWriter&) = delete;

  // Adds plaintext. FailedPrecondition after Finish(); Internal if zstd or
  // OpenSSL fails, after which every later call returns that same error.
  Status Append(std::string_view plaintext);

  // Ends the stream and returns the whole blob. A second call returns
  // FailedPrecondition. REQUIRES: called once.
  Result<std::string> Finish();

 private:
  struct Impl;
  explicit SealedWriter(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;
};

// Authenticates, decrypts and decompresses a blob in memory and returns the
// plaintext. Corruption if the blob is shorter than its fixed parts (39
// bytes), has a bad magic, an unknown version, cipher or compression id, or
// if decompression fails after authentication succeeded. WrongKey when GCM
// authentication fails: a wrong key, a wrong `aad`, or altered or truncated
// bytes (compare KeyCheck values to tell which).
Result<std::string> OpenSealed(const Key& key, std::string_view aad, std::string_view blob);

}  // namespace unseen

#endif  // UNSEEN_STORAGE_SEALED_BLOB_H_
