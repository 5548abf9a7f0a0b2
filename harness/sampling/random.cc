#include "harness/sampling/random.h"

namespace unseen {
namespace {

inline uint64_t RotateLeft(uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }

}  // namespace

uint64_t SplitMix64::Next() {
  uint64_t z = (state_ += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

Random::Random(uint64_t seed) {
  // The SplitMix64 finaliser is a bijection and consecutive states differ, so
  // at most one of the four words is zero: never the all-zero fixed point.
  SplitMix64 expand(seed);
  for (uint64_t& word : s_) word = expand.Next();
}

uint64_t Random::Next() {
  const uint64_t result = RotateLeft(s_[1] * 5, 7) * 9;
  const uint64_t t = s_[1] << 17;
  s_[2] ^= s_[0];
  s_[3] ^= s_[1];
  s_[1] ^= s_[2];
  s_[0] ^= s_[3];
  s_[2] ^= t;
  s_[3] = RotateLeft(s_[3], 45);
  return result;
}

uint64_t Random::Bounded(uint64_t n) {
  if (n == 0) return 0;
  uint64_t hi;
  uint64_t lo;
  internal::Multiply64(Next(), n, &hi, &lo);
  if (lo < n) {
    // Reject the low products that would over-represent some results:
    // threshold = 2^64 mod n, computed without 128-bit arithmetic.
    const uint64_t threshold = (0 - n) % n;
    while (lo < threshold) internal::Multiply64(Next(), n, &hi, &lo);
  }
  return hi;
}

double Random::NextDouble() { return static_cast<double>(Next() >> 11) * 0x1.0p-53; }

namespace internal {

void Multiply64(uint64_t a, uint64_t b, uint64_t* hi, uint64_t* lo) {
  // Schoolbook multiplication on 32-bit halves; no partial sum overflows.
  const uint64_t a_lo = a & 0xffffffffULL;
  const uint64_t a_hi = a >> 32;
  const uint64_t b_lo = b & 0xffffffffULL;
  const uint64_t b_hi = b >> 32;
  const uint64_t ll = a_lo * b_lo;
  const uint64_t lh = a_lo * b_hi;
  const uint64_t hl = a_hi * b_lo;
  const uint64_t hh = a_hi * b_hi;
  const uint64_t middle = (ll >> 32) + (lh & 0xffffffffULL) + (hl & 0xffffffffULL);
  *lo = (middle << 32) | (ll & 0xffffffffULL);
  *hi = hh + (lh >> 32) + (hl >> 32) + (middle >> 32);
}

}  // namespace internal
}  // namespace unseen
