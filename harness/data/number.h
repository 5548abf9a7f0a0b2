// How ParseNumber (csv.h) turns a cell into a double, in three paths that give bit-identical
// results: two fast paths for plain decimals whose value one IEEE-754 operation computes exactly
// (one for cells of at most 8 characters after the sign, the common case, with no loop over the
// characters), and std::from_chars for everything else. Internal to harness/data; exposed for the
// differential tests. Pure functions, thread-safe.
#ifndef UNSEEN_HARNESS_DATA_NUMBER_H_
#define UNSEEN_HARNESS_DATA_NUMBER_H_

#include <cfloat>
#include <cstdint>
#include <cstring>
#include <string_view>

namespace unseen::internal {

// The reference: ParseNumber's contract (csv.h) implemented with std::from_chars.
bool ParseNumberWithFromChars(std::string_view cell, double* out);

// The fast path. Returns true and sets *out when `cell` is [+-]digits[.digits][(e|E)[+-]d{1,4}]
// with at least one digit in the significand, at most 19 significant digits forming an integer
// w <= 2^53, and a power of ten q (exponent minus fraction digits) with |q| <= 22. Then w and
// 10^|q| are exact doubles, so w * 10^q (or w / 10^-q) in one correctly rounded IEEE operation
// is the correctly rounded value of the decimal, which is what from_chars returns (Clinger's
// fast path). Returns false, leaving *out unchanged, for anything else, which may still be a
// number: the caller then asks ParseNumberWithFromChars.
bool ParseSimpleDecimal(std::string_view cell, double* out);

// The fast path for short cells: [+-]d{1,8} or [+-] with at most 8 characters of digits and
// one '.' (at least one digit). The characters are read as one 64-bit word, checked and
// converted with word-wide arithmetic (no branch per character), then w / 10^f in one IEEE
// operation with w < 10^8 and f <= 7, exact inputs as above. Reads no byte outside `cell`.
// Returns false, leaving *out unchanged, for anything else.
inline bool ParseShortDecimal(std::string_view cell, double* out);

// ---- Implementation details: inline, since the scan calls it for every cell. ----

// The fast path relies on each double operation being rounded once, to binary64. That holds
// with SSE2 arithmetic (FLT_EVAL_METHOD 0) and without -ffast-math; elsewhere it is off.
#if FLT_EVAL_METHOD == 0 && !defined(__FAST_MATH__)
#define UNSEEN_DECIMAL_FAST_PATH 1
#else
#define UNSEEN_DECIMAL_FAST_PATH 0
#endif

// 10^0 .. 10^22: every one is exactly representable in binary64 (5^22 < 2^53).
inline constexpr double kExactPowersOfTen[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                                               1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                                               1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

// The n <= 8 bytes at p in the low bytes of a little-endian word, the rest zero, reading no
// byte outside [p, p + n): two overlapping 4-byte loads, or three single bytes.
inline uint64_t LoadUpTo8(const char* p, size_t n) {
  if (n >= 4) {
    uint32_t lo, hi;
    std::memcpy(&lo, p, 4);
    std::memcpy(&hi, p + n - 4, 4);
    return uint64_t{lo} | uint64_t{hi} << (8 * (n - 4));  // the overlap ORs equal bytes
  }
  if (n == 0) return 0;
  auto byte = [p](size_t i) { return uint64_t{static_cast<uint8_t>(p[i])} << (8 * i); };
  return byte(0) | byte(n / 2) | byte(n - 1);
}

inline bool ParseShortDecimal(std::string_view cell, double* out) {
#if UNSEEN_DECIMAL_FAST_PATH && defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
  const char* p = cell.data();
  size_t n = cell.size();
  if (n == 0) return false;
  // No branch on the sign: half the numbers in a column may be negative, in no pattern.
  const bool negative = *p == '-';
  const size_t sign = static_cast<size_t>(negative) | static_cast<size_t>(*p == '+');
  p += sign;
  n -= sign;
  if (n == 0 || n > 8) return false;
  // Byte i of `a` is character i minus '0': 0..9 for a digit.
  const uint64_t a = LoadUpTo8(p, n) ^ 0x3030303030303030ULL;
  const uint64_t in_cell = n == 8 ? ~uint64_t{0} : (uint64_t{1} << (8 * n)) - 1;
  // The high bit of each byte that is not 0..9 (adding 0x76 to the low 7 bits carries into the
  // high bit from 0x0A up, and never into the next byte), within the cell.
  uint64_t other =
      (((a & 0x7F7F7F7F7F7F7F7FULL) + 0x7676767676767676ULL) | a) & 0x8080808080808080ULL & in_cell;
  uint64_t digits = a & in_cell;
  size_t count = n;
  int fraction = 0;
  if (other != 0) {
    const int k = __builtin_ctzll(other) / 8;  // the first non-digit: it must be the point
    other &= other - 1;
    if (p[k] != '.' || other != 0 || n == 1) return false;
    const uint64_t below = (uint64_t{1} << (8 * k)) - 1;   // k < 8
    digits = (digits & below) | ((digits >> 8) & ~below);  // close the gap
    count = n - 1;
    fraction = static_cast<int>(n - 1 - static_cast<size_t>(k));
  }
  // Move the `count` digits (most significant first, at byte 0) to the top bytes, so the word
  // reads as eight digits with leading zeros, and combine them pairwise: 8 -> 4 -> 2 -> 1.
  uint64_t v = digits << (8 * (8 - count));
  v = v * 10 + (v >> 8);
  v = ((v & 0x000000FF000000FFULL) * (100 + (1000000ULL << 32)) +
       ((v >> 16) & 0x000000FF000000FFULL) * (1 + (10000ULL << 32))) >>
      32;
  const double d = static_cast<double>(static_cast<uint32_t>(v)) / kExactPowersOfTen[fraction];
  uint64_t bits;  // negation is exact: flip the sign bit
  std::memcpy(&bits, &d, sizeof bits);
  bits ^= static_cast<uint64_t>(negative) << 63;
  std::memcpy(out, &bits, sizeof bits);
  return true;
#else
  (void)cell;
  (void)out;
  return false;
#endif
}

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_DATA_NUMBER_H_
