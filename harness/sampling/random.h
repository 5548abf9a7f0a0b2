// A seeded pseudo-random generator whose output is the same on every machine
// and compiler: SplitMix64 expands the seed, xoshiro256** 1.0 (Blackman &
// Vigna) generates, and bounded integers, doubles and shuffles are derived by
// fixed published methods, never by std::*_distribution or std::shuffle,
// whose results are implementation-defined. The sequences are part of the
// split format (docs/splits.md): never change them. Thread-compatible.
#ifndef UNSEEN_HARNESS_SAMPLING_RANDOM_H_
#define UNSEEN_HARNESS_SAMPLING_RANDOM_H_

#include <cstddef>
#include <cstdint>
#include <utility>

namespace unseen {

// SplitMix64 (Steele, Lea & Flood 2014, as in Vigna's reference code): a
// 64-bit state advanced by a Weyl increment and finalised by a mixer.
class SplitMix64 {
 public:
  explicit SplitMix64(uint64_t seed) : state_(seed) {}
  // The next 64-bit output.
  uint64_t Next();

 private:
  uint64_t state_;
};

// xoshiro256** seeded with the first four SplitMix64 outputs of `seed`.
class Random {
 public:
  explicit Random(uint64_t seed);

  // The next 64-bit output of xoshiro256**.
  uint64_t Next();

  // A uniform integer in [0, n) by Lemire's multiply-shift with rejection
  // (unbiased). Returns 0, consuming nothing, when n == 0.
  uint64_t Bounded(uint64_t n);

  // A uniform double in [0, 1): the top 53 bits of Next() times 2^-53.
  double NextDouble();

  // Fisher–Yates shuffle of data[0..n) in forward order: for i = 0 .. n-2,
  // swap data[i] with data[i + Bounded(n - i)]. Every permutation is equally
  // likely.
  template <typename T>
  void Shuffle(T* data, size_t n) {
    PartialShuffle(data, n, n);
  }

  // The first min(k, n) steps of Shuffle(): afterwards data[0..k) holds
  // exactly what a full Shuffle() would have put there, in the same order,
  // and consumes the generator identically up to that point.
  template <typename T>
  void PartialShuffle(T* data, size_t n, size_t k) {
    if (n < 2) return;
    if (k > n - 1) k = n - 1;
    // The swap targets depend only on the generator, not on the data: draw them a few steps
    // ahead and prefetch their elements, so a large array is not read one cache miss at a time.
    // The draws and swaps happen in the same order as in the plain loop.
    constexpr size_t kAhead = 16;
    size_t ahead[kAhead];
    const size_t first = k < kAhead ? k : kAhead;
    for (size_t i = 0; i < first; ++i) {
      ahead[i] = i + static_cast<size_t>(Bounded(n - i));
      __builtin_prefetch(data + ahead[i]);
    }
    for (size_t i = 0; i < k; ++i) {
      const size_t j = ahead[i % kAhead];
      if (i + kAhead < k) {
        const size_t next = i + kAhead;
        ahead[i % kAhead] = next + static_cast<size_t>(Bounded(n - next));
        __builtin_prefetch(data + ahead[i % kAhead]);
      }
      using std::swap;
      swap(data[i], data[j]);
    }
  }

 private:
  uint64_t s_[4];
};

namespace internal {
// The 128-bit product a * b as (high, low) 64-bit halves, in portable C++.
void Multiply64(uint64_t a, uint64_t b, uint64_t* hi, uint64_t* lo);
}  // namespace internal

}  // namespace unseen

#endif  // UNSEEN_HARNESS_SAMPLING_RANDOM_H_
