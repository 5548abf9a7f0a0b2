// The SHA-256 compression function (FIPS 180-4 section 6.2.2) over whole 64-byte blocks, and
// one-shot digests of short messages built on it. Internal to storage/: storage/digest.h is the
// public interface.
//
// Two implementations give identical results: a portable one, and one using the x86 SHA
// extensions (SHA-NI), chosen at run time when the CPU has them. Hashing millions of ~100-byte
// rows is dominated by per-call overhead in a general-purpose library, and a single stream is
// bound by the latency of the SHA rounds, so the two-message variants interleave two independent
// messages and roughly double throughput. All functions are pure and thread-safe.
#ifndef UNSEEN_STORAGE_SHA256_COMPRESS_H_
#define UNSEEN_STORAGE_SHA256_COMPRESS_H_

#include <cstddef>
#include <cstdint>

namespace unseen::internal {

// FIPS 180-4 section 5.3.3.
inline constexpr uint32_t kSha256Initial[8] = {0x6a09e667, 0xbb67ae85, 0x3c6ef372, 0xa54ff53a,
                                               0x510e527f, 0x9b05688c, 0x1f83d9ab, 0x5be0cd19};

// Runs `blocks` consecutive 64-byte blocks at `data` through `state`, with the fastest
// implementation this CPU has.
void Sha256Compress(uint32_t state[8], const uint8_t* data, size_t blocks);

// Two independent streams of `blocks` blocks each: the same result as two Sha256Compress()
// calls, computed interleaved.
void Sha256Compress2(uint32_t state_a[8], const uint8_t* data_a, uint32_t state_b[8],
                     const uint8_t* data_b, size_t blocks);

// SHA-256 of the `n` bytes at `data`, written to out[0..31].
void Sha256OneShot(const void* data, size_t n, uint8_t out[32]);

// SHA-256 of two messages of the same length `n`, interleaved.
void Sha256OneShot2(const void* a, const void* b, size_t n, uint8_t out_a[32], uint8_t out_b[32]);

// The implementations, exposed for tests and benchmarks.
void Sha256CompressPortable(uint32_t state[8], const uint8_t* data, size_t blocks);
// True when the CPU has the SHA extensions and SSE4.1 (always false off x86-64).
bool CpuHasShaExtensions();
// REQUIRES: CpuHasShaExtensions().
void Sha256CompressShaExt(uint32_t state[8], const uint8_t* data, size_t blocks);
void Sha256Compress2ShaExt(uint32_t state_a[8], const uint8_t* data_a, uint32_t state_b[8],
                           const uint8_t* data_b, size_t blocks);
// Forces the portable implementation in this process (true) or restores the automatic
// choice (false); for tests of the portable path on machines with the extensions.
void ForcePortableSha256ForTesting(bool portable);

}  // namespace unseen::internal

#endif  // UNSEEN_STORAGE_SHA256_COMPRESS_H_
