#include "storage/sha256_compress.h"

#include <atomic>
#include <cstring>

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <cpuid.h>
#include <immintrin.h>
#define UNSEEN_SHA256_X86 1
#else
#define UNSEEN_SHA256_X86 0
#endif

namespace unseen::internal {
namespace {

// FIPS 180-4 section 4.2.2: the round constants.
alignas(16) constexpr uint32_t kK[64] = {
    0x428a2f98, 0x71374491, 0xb5c0fbcf, 0xe9b5dba5, 0x3956c25b, 0x59f111f1, 0x923f82a4, 0xab1c5ed5,
    0xd807aa98, 0x12835b01, 0x243185be, 0x550c7dc3, 0x72be5d74, 0x80deb1fe, 0x9bdc06a7, 0xc19bf174,
    0xe49b69c1, 0xefbe4786, 0x0fc19dc6, 0x240ca1cc, 0x2de92c6f, 0x4a7484aa, 0x5cb0a9dc, 0x76f988da,
    0x983e5152, 0xa831c66d, 0xb00327c8, 0xbf597fc7, 0xc6e00bf3, 0xd5a79147, 0x06ca6351, 0x14292967,
    0x27b70a85, 0x2e1b2138, 0x4d2c6dfc, 0x53380d13, 0x650a7354, 0x766a0abb, 0x81c2c92e, 0x92722c85,
    0xa2bfe8a1, 0xa81a664b, 0xc24b8b70, 0xc76c51a3, 0xd192e819, 0xd6990624, 0xf40e3585, 0x106aa070,
    0x19a4c116, 0x1e376c08, 0x2748774c, 0x34b0bcb5, 0x391c0cb3, 0x4ed8aa4a, 0x5b9cca4f, 0x682e6ff3,
    0x748f82ee, 0x78a5636f, 0x84c87814, 0x8cc70208, 0x90befffa, 0xa4506ceb, 0xbef9a3f7, 0xc67178f2};

inline uint32_t Rotr(uint32_t x, int n) { return (x >> n) | (x << (32 - n)); }

inline uint32_t LoadBigEndian32(const uint8_t* p) {
  return uint32_t{p[0]} << 24 | uint32_t{p[1]} << 16 | uint32_t{p[2]} << 8 | uint32_t{p[3]};
}

void StoreDigest(const uint32_t state[8], uint8_t out[32]) {
  for (int i = 0; i < 8; ++i) {
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    const uint32_t be = __builtin_bswap32(state[i]);
    std::memcpy(out + 4 * i, &be, 4);
#else
    out[4 * i] = static_cast<uint8_t>(state[i] >> 24);
    out[4 * i + 1] = static_cast<uint8_t>(state[i] >> 16);
    out[4 * i + 2] = static_cast<uint8_t>(state[i] >> 8);
    out[4 * i + 3] = static_cast<uint8_t>(state[i]);
#endif
  }
}

// The final one or two blocks of an `n`-byte message whose last n % 64 bytes are at `tail`:
// those bytes, 0x80, zeros and the bit length (FIPS 180-4 section 5.1.1). Returns the number of
// blocks written to `out` (1 or 2).
size_t PadTail(const uint8_t* tail, size_t n, uint8_t out[128]) {
  const size_t rem = n % 64;
  const size_t size = rem + 9 <= 64 ? 64 : 128;
  std::memset(out, 0, 128);  // a fixed size: a few vector stores, no call
  if (rem > 0) std::memcpy(out, tail, rem);
  out[rem] = 0x80;
  const uint64_t bits = uint64_t{n} * 8;
  for (int i = 0; i < 8; ++i) out[size - 1 - i] = static_cast<uint8_t>(bits >> (8 * i));
  return size / 64;
}

// 0: not chosen yet; 1: portable; 2: SHA extensions.
std::atomic<int> g_impl{0};

int Impl() {
  int impl = g_impl.load(std::memory_order_relaxed);
  if (impl == 0) {
    impl = CpuHasShaExtensions() ? 2 : 1;
    g_impl.store(impl, std::memory_order_relaxed);
  }
  return impl;
}

}  // namespace

void Sha256CompressPortable(uint32_t state[8], const uint8_t* p, size_t blocks) {
  for (; blocks > 0; --blocks, p += 64) {
    uint32_t w[64];
    for (int i = 0; i < 16; ++i) w[i] = LoadBigEndian32(p + 4 * i);
    for (int i = 16; i < 64; ++i) {
      const uint32_t s0 = Rotr(w[i - 15], 7) ^ Rotr(w[i - 15], 18) ^ (w[i - 15] >> 3);
      const uint32_t s1 = Rotr(w[i - 2], 17) ^ Rotr(w[i - 2], 19) ^ (w[i - 2] >> 10);
      w[i] = w[i - 16] + s0 + w[i - 7] + s1;
    }
    uint32_t a = state[0], b = state[1], c = state[2], d = state[3];
    uint32_t e = state[4], f = state[5], g = state[6], h = state[7];
    for (int i = 0; i < 64; ++i) {
      const uint32_t t1 =
          h + (Rotr(e, 6) ^ Rotr(e, 11) ^ Rotr(e, 25)) + ((e & f) ^ (~e & g)) + kK[i] + w[i];
      const uint32_t t2 = (Rotr(a, 2) ^ Rotr(a, 13) ^ Rotr(a, 22)) + ((a & b) ^ (a & c) ^ (b & c));
      h = g;
      g = f;
      f = e;
      e = d + t1;
      d = c;
      c = b;
      b = a;
      a = t1 + t2;
    }
    state[0] += a;
    state[1] += b;
    state[2] += c;
    state[3] += d;
    state[4] += e;
    state[5] += f;
    state[6] += g;
    state[7] += h;
  }
}

#if UNSEEN_SHA256_X86

bool CpuHasShaExtensions() {
  unsigned eax = 0, ebx = 0, ecx = 0, edx = 0;
  if (!__get_cpuid(1, &eax, &ebx, &ecx, &edx)) return false;
  const bool sse41 = (ecx & (1u << 19)) != 0, ssse3 = (ecx & (1u << 9)) != 0;
  if (!__get_cpuid_count(7, 0, &eax, &ebx, &ecx, &edx)) return false;
  const bool sha = (ebx & (1u << 29)) != 0;
  return sha && sse41 && ssse3;
}

// The state lives in two registers as ABEF and CDGH (the order sha256rnds2 wants). Each group of
// four rounds g takes message words W[4g..4g+3]; from g = 4 on they come from the schedule
// W[t] = s1(W[t-2]) + W[t-7] + s0(W[t-15]) + W[t-16], which sha256msg1 (the s0 part plus
// W[t-16]), an alignr (W[t-7]) and sha256msg2 (the s1 part) compute four at a time.
#define UNSEEN_SHA_TARGET __attribute__((target("sha,sse4.1,ssse3")))

#define UNSEEN_SHA_LOAD_STATE(st, s0, s1)                                                          \
  do {                                                                                             \
    __m128i t_ =                                                                                   \
        _mm_shuffle_epi32(_mm_loadu_si128(reinterpret_cast<const __m128i*>(st)), 0xB1); /* CDAB */ \
    s1 = _mm_shuffle_epi32(_mm_loadu_si128(reinterpret_cast<const __m128i*>((st) + 4)),            \
                           0x1B);       /* EFGH */                                                 \
    s0 = _mm_alignr_epi8(t_, s1, 8);    /* ABEF */                                                 \
    s1 = _mm_blend_epi16(s1, t_, 0xF0); /* CDGH */                                                 \
  } while (0)

#define UNSEEN_SHA_STORE_STATE(st, s0, s1)                      \
  do {                                                          \
    __m128i t_ = _mm_shuffle_epi32(s0, 0x1B); /* FEBA */        \
    s1 = _mm_shuffle_epi32(s1, 0xB1);         /* DCHG */        \
    s0 = _mm_blend_epi16(t_, s1, 0xF0);       /* DCBA */        \
    s1 = _mm_alignr_epi8(s1, t_, 8);          /* HGFE */        \
    _mm_storeu_si128(reinterpret_cast<__m128i*>(st), s0);       \
    _mm_storeu_si128(reinterpret_cast<__m128i*>((st) + 4), s1); \
  } while (0)

// Four rounds of group g with message words w.
#define UNSEEN_SHA_ROUNDS(s0, s1, w, g)                                                            \
  do {                                                                                             \
    __m128i m_ = _mm_add_epi32(w, _mm_load_si128(reinterpret_cast<const __m128i*>(kK + 4 * (g)))); \
    s1 = _mm_sha256rnds2_epu32(s1, s0, m_);                                                        \
    m_ = _mm_shuffle_epi32(m_, 0x0E);                                                              \
    s0 = _mm_sha256rnds2_epu32(s0, s1, m_);                                                        \
  } while (0)

// w[g & 3] becomes W[4g..4g+3] (g >= 4) from the four previous groups.
#define UNSEEN_SHA_SCHEDULE(w, g)                                                   \
  do {                                                                              \
    __m128i x_ = _mm_sha256msg1_epu32(w[(g)&3], w[((g) + 1) & 3]);                  \
    x_ = _mm_add_epi32(x_, _mm_alignr_epi8(w[((g) + 3) & 3], w[((g) + 2) & 3], 4)); \
    w[(g)&3] = _mm_sha256msg2_epu32(x_, w[((g) + 3) & 3]);                          \
  } while (0)

UNSEEN_SHA_TARGET void Sha256CompressShaExt(uint32_t state[8], const uint8_t* data, size_t blocks) {
  const __m128i kByteSwap = _mm_set_epi64x(0x0c0d0e0f08090a0bULL, 0x0405060700010203ULL);
  __m128i s0, s1;
  UNSEEN_SHA_LOAD_STATE(state, s0, s1);
  for (; blocks > 0; --blocks, data += 64) {
    const __m128i abef = s0, cdgh = s1;
    __m128i w[4];
    for (int g = 0; g < 4; ++g) {
      w[g] = _mm_shuffle_epi8(_mm_loadu_si128(reinterpret_cast<const __m128i*>(data + 16 * g)),
                              kByteSwap);
      UNSEEN_SHA_ROUNDS(s0, s1, w[g], g);
    }
#pragma GCC unroll 12
    for (int g = 4; g < 16; ++g) {
      UNSEEN_SHA_SCHEDULE(w, g);
      UNSEEN_SHA_ROUNDS(s0, s1, w[g & 3], g);
    }
    s0 = _mm_add_epi32(s0, abef);
    s1 = _mm_add_epi32(s1, cdgh);
  }
  UNSEEN_SHA_STORE_STATE(state, s0, s1);
}

UNSEEN_SHA_TARGET void Sha256Compress2ShaExt(uint32_t state_a[8], const uint8_t* da,
                                             uint32_t state_b[8], const uint8_t* db,
                                             size_t blocks) {
  const __m128i kByteSwap = _mm_set_epi64x(0x0c0d0e0f08090a0bULL, 0x0405060700010203ULL);
  __m128i a0, a1, b0, b1;
  UNSEEN_SHA_LOAD_STATE(state_a, a0, a1);
  UNSEEN_SHA_LOAD_STATE(state_b, b0, b1);
  for (; blocks > 0; --blocks, da += 64, db += 64) {
    const __m128i a_abef = a0, a_cdgh = a1, b_abef = b0, b_cdgh = b1;
    __m128i wa[4], wb[4];
    for (int g = 0; g < 4; ++g) {
      wa[g] = _mm_shuffle_epi8(_mm_loadu_si128(reinterpret_cast<const __m128i*>(da + 16 * g)),
                               kByteSwap);
      wb[g] = _mm_shuffle_epi8(_mm_loadu_si128(reinterpret_cast<const __m128i*>(db + 16 * g)),
                               kByteSwap);
      UNSEEN_SHA_ROUNDS(a0, a1, wa[g], g);
      UNSEEN_SHA_ROUNDS(b0, b1, wb[g], g);
    }
#pragma GCC unroll 12
    for (int g = 4; g < 16; ++g) {
      UNSEEN_SHA_SCHEDULE(wa, g);
      UNSEEN_SHA_SCHEDULE(wb, g);
      UNSEEN_SHA_ROUNDS(a0, a1, wa[g & 3], g);
      UNSEEN_SHA_ROUNDS(b0, b1, wb[g & 3], g);
    }
    a0 = _mm_add_epi32(a0, a_abef);
    a1 = _mm_add_epi32(a1, a_cdgh);
    b0 = _mm_add_epi32(b0, b_abef);
    b1 = _mm_add_epi32(b1, b_cdgh);
  }
  UNSEEN_SHA_STORE_STATE(state_a, a0, a1);
  UNSEEN_SHA_STORE_STATE(state_b, b0, b1);
}

#undef UNSEEN_SHA_SCHEDULE
#undef UNSEEN_SHA_ROUNDS
#undef UNSEEN_SHA_STORE_STATE
#undef UNSEEN_SHA_LOAD_STATE
#undef UNSEEN_SHA_TARGET

#else  // !UNSEEN_SHA256_X86

bool CpuHasShaExtensions() { return false; }
void Sha256CompressShaExt(uint32_t state[8], const uint8_t* data, size_t blocks) {
  Sha256CompressPortable(state, data, blocks);
}
void Sha256Compress2ShaExt(uint32_t state_a[8], const uint8_t* da, uint32_t state_b[8],
                           const uint8_t* db, size_t blocks) {
  Sha256CompressPortable(state_a, da, blocks);
  Sha256CompressPortable(state_b, db, blocks);
}

#endif  // UNSEEN_SHA256_X86

void ForcePortableSha256ForTesting(bool portable) {
  g_impl.store(portable ? 1 : 0, std::memory_order_relaxed);
}

void Sha256Compress(uint32_t state[8], const uint8_t* data, size_t blocks) {
  if (Impl() == 2) {
    Sha256CompressShaExt(state, data, blocks);
  } else {
    Sha256CompressPortable(state, data, blocks);
  }
}

void Sha256Compress2(uint32_t state_a[8], const uint8_t* data_a, uint32_t state_b[8],
                     const uint8_t* data_b, size_t blocks) {
  if (Impl() == 2) {
    Sha256Compress2ShaExt(state_a, data_a, state_b, data_b, blocks);
  } else {
    Sha256CompressPortable(state_a, data_a, blocks);
    Sha256CompressPortable(state_b, data_b, blocks);
  }
}

void Sha256OneShot(const void* data, size_t n, uint8_t out[32]) {
  const auto* p = static_cast<const uint8_t*>(data);
  uint32_t state[8];
  std::memcpy(state, kSha256Initial, sizeof state);
  const size_t full = n / 64;
  if (full > 0) Sha256Compress(state, p, full);
  uint8_t tail[128];
  const size_t blocks = PadTail(p + 64 * full, n, tail);
  Sha256Compress(state, tail, blocks);
  StoreDigest(state, out);
}

void Sha256OneShot2(const void* a, const void* b, size_t n, uint8_t out_a[32], uint8_t out_b[32]) {
  const auto* pa = static_cast<const uint8_t*>(a);
  const auto* pb = static_cast<const uint8_t*>(b);
  uint32_t sa[8], sb[8];
  std::memcpy(sa, kSha256Initial, sizeof sa);
  std::memcpy(sb, kSha256Initial, sizeof sb);
  const size_t full = n / 64;
  if (full > 0) Sha256Compress2(sa, pa, sb, pb, full);
  uint8_t ta[128], tb[128];
  const size_t blocks = PadTail(pa + 64 * full, n, ta);
  PadTail(pb + 64 * full, n, tb);
  Sha256Compress2(sa, ta, sb, tb, blocks);
  StoreDigest(sa, out_a);
  StoreDigest(sb, out_b);
}

}  // namespace unseen::internal
