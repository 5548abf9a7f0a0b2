// ParseNumber's fast path against std::from_chars: row digests are a frozen format built on the
// parsed doubles, so the two paths must agree bit for bit on every cell, numbers or not.
#include "harness/data/number.h"

#include <gtest/gtest.h>

#include <charconv>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <cstring>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include "harness/data/csv.h"

namespace unseen {
namespace {

uint64_t Bits(double v) {
  uint64_t b;
  std::memcpy(&b, &v, sizeof b);
  return b;
}

// Asserts ParseNumber (fast path first) and the from_chars reference agree on `cell`.
void ExpectSameAsFromChars(const std::string& cell) {
  double fast = 1234.5, reference = 1234.5;
  const bool fast_ok = ParseNumber(cell, &fast);
  const bool reference_ok = internal::ParseNumberWithFromChars(cell, &reference);
  ASSERT_EQ(fast_ok, reference_ok) << '"' << cell << '"';
  ASSERT_EQ(Bits(fast), Bits(reference)) << '"' << cell << "\": " << fast << " vs " << reference;
  // Each fast path on its own, where it decides.
  double v = 0;
  if (internal::ParseShortDecimal(cell, &v)) {
    ASSERT_TRUE(reference_ok) << '"' << cell << '"';
    ASSERT_EQ(Bits(v), Bits(reference)) << '"' << cell << "\" (short path)";
  }
  if (internal::ParseSimpleDecimal(cell, &v)) {
    ASSERT_TRUE(reference_ok) << '"' << cell << '"';
    ASSERT_EQ(Bits(v), Bits(reference)) << '"' << cell << "\" (simple path)";
  }
}

std::string Digits(std::mt19937_64& rng, int n) {
  std::string s;
  for (int i = 0; i < n; ++i) s.push_back(static_cast<char>('0' + rng() % 10));
  return s;
}

// A random cell from a grammar around the decimal syntax: signs, leading zeros, up to 25 digits
// on each side of the point, exponents of 0 to 5 digits, and now and then a stray character.
std::string RandomCell(std::mt19937_64& rng) {
  std::string s;
  switch (rng() % 6) {
    case 0:
      s += '-';
      break;
    case 1:
      s += '+';
      break;
    default:
      break;
  }
  if (rng() % 4 == 0) s += std::string(rng() % 4, '0');
  s += Digits(rng, static_cast<int>(rng() % 26));
  if (rng() % 3 != 0) {
    s += '.';
    s += Digits(rng, static_cast<int>(rng() % 26));
  }
  if (rng() % 3 == 0) {
    s += rng() % 2 ? 'e' : 'E';
    switch (rng() % 3) {
      case 0:
        s += '-';
        break;
      case 1:
        s += '+';
        break;
      default:
        break;
    }
    s += Digits(rng, static_cast<int>(rng() % 6));
  }
  if (rng() % 50 == 0) s.insert(rng() % (s.size() + 1), 1, " x.e-+"[rng() % 6]);
  return s;
}

TEST(NumberTest, FastPathMatchesFromCharsOnEdgeCases) {
  const std::vector<std::string> cells = {
      "0",
      "-0",
      "+0",
      "0.0",
      "-0.0",
      "00",
      "000.000",
      ".0",
      "0.",
      "-.0",
      "1",
      "-1",
      "+1",
      "1.",
      ".1",
      "0.1",
      "0.2",
      "0.3",
      "1e0",
      "1E0",
      "1e+0",
      "1e-0",
      "123.456",
      "-999.999",
      "0.001",
      "-1000.000",
      "1e22",
      "1e23",
      "1e-22",
      "1e-23",
      "9007199254740992",
      "9007199254740993",
      "9007199254740991",
      "-9007199254740993",
      "18446744073709551615",
      "18446744073709551616",
      "9999999999999999999",
      "10000000000000000000",
      "4.9406564584124654e-324",
      "5e-324",
      "2.4703282292062327e-324",
      "2.4703282292062328e-324",
      "2.2250738585072014e-308",
      "2.2250738585072011e-308",
      "1.7976931348623157e308",
      "1.7976931348623158e308",
      "1.7976931348623159e308",
      "1e308",
      "1e309",
      "-1e309",
      "1e-400",
      "-1e-400",
      "0e400",
      "0e-400",
      "0e9999",
      "1e0000",
      "1e00001",
      "1e9999",
      "1e-9999",
      "0.1e1",
      "100e-2",
      "12345678901234567890",
      "1234567890123456789",
      "0.0000000000000000000001",
      "3.141592653589793",
      "3.1415926535897932",
      "3.14159265358979323846",
      "2.718281828459045",
      "0.30000000000000004",
      "123456789012345.67",
      "8.98846567431158e307",
      "1.0000000000000002",
      "0.9999999999999999",
      "0.99999999999999999",
      "1e-5",
      "1e-7",
      "4.35",
      "1.15",
      "2.675",
      "",
      "-",
      "+",
      ".",
      "-.",
      "+.",
      "e",
      "e1",
      ".e1",
      "1e",
      "1e+",
      "1e-",
      "1e+-1",
      "1.2.3",
      "1..2",
      "--1",
      "+-1",
      "-+1",
      "++1",
      " 1",
      "1 ",
      "0x10",
      "0X1p3",
      "inf",
      "-inf",
      "nan",
      "NaN",
      "NA",
      "infinity",
      "1,5",
      "1_0",
      "١",
      "1e5x",
      "5.e3",
      ".5e-3",
      "-.5E+3",
      "12345678",
      "-12345678",
      "+12345678",
      "123456789",
      "1234.5678",
      "1234.567",
      "0000000.",
      ".0000000",
      "99999999",
      "9999.999",
      ".9999999",
      "9999999.",
      "-0000.000",
      "1.234567",
  };
  for (const std::string& c : cells) ASSERT_NO_FATAL_FAILURE(ExpectSameAsFromChars(c));
}

TEST(NumberTest, FastPathsMatchFromCharsOnEveryShortCell) {
  // Every cell of up to 4 characters over the alphabet a number can use, and a few others.
  const std::string alphabet = "0123456789.-+eE x";
  std::string cell;
  std::vector<size_t> at;
  for (size_t length = 0; length <= 4; ++length) {
    at.assign(length, 0);
    for (;;) {
      cell.resize(length);
      for (size_t i = 0; i < length; ++i) cell[i] = alphabet[at[i]];
      ASSERT_NO_FATAL_FAILURE(ExpectSameAsFromChars(cell));
      size_t i = 0;
      while (i < length && ++at[i] == alphabet.size()) at[i++] = 0;
      if (i == length) break;
    }
  }
}

TEST(NumberTest, FastPathMatchesFromCharsOnRandomCells) {
  std::mt19937_64 rng(20261202);
  int fast = 0, short_fast = 0;
  for (int i = 0; i < 1000000; ++i) {
    const std::string cell = RandomCell(rng);
    ASSERT_NO_FATAL_FAILURE(ExpectSameAsFromChars(cell));
    double v;
    fast += internal::ParseSimpleDecimal(cell, &v);
    short_fast += internal::ParseShortDecimal(cell, &v);
  }
  EXPECT_GT(fast, 100000);  // the fast paths were exercised, not just the fallback
  EXPECT_GT(short_fast, 20000);
}

TEST(NumberTest, FastPathMatchesFromCharsOnPrintedDoubles) {
  std::mt19937_64 rng(754);
  char buf[64];
  for (int i = 0; i < 100000; ++i) {
    // Random bit patterns (every exponent, subnormals included) and values of everyday size.
    double v;
    const uint64_t bits = rng();
    std::memcpy(&v, &bits, sizeof v);
    if (!std::isfinite(v)) continue;
    const double everyday = static_cast<double>(static_cast<int64_t>(rng() % 2000000) - 1000000) /
                            std::pow(10.0, static_cast<double>(rng() % 8));
    for (double x : {v, everyday}) {
      auto r = std::to_chars(buf, buf + sizeof buf, x);  // shortest round trip
      ASSERT_NO_FATAL_FAILURE(ExpectSameAsFromChars(std::string(buf, r.ptr)));
      for (const char* format : {"%.17g", "%.3f", "%.15e", "%.6f", "%.16g"}) {
        std::snprintf(buf, sizeof buf, format, x);
        ASSERT_NO_FATAL_FAILURE(ExpectSameAsFromChars(buf));
      }
    }
  }
}

TEST(NumberTest, FastPathTakesPlainDecimals) {
  // The benchmark's kind of cell must not fall back to from_chars.
  double v = 0;
  for (const char* cell : {"-123.456", "999.999", "0.001", "1", "42", "-0.5", "1e5", "2.5E-3"}) {
    EXPECT_TRUE(internal::ParseSimpleDecimal(cell, &v)) << cell;
  }
  for (const char* cell : {"-123.456", "999.999", "0.001", "1", "42", "-0.5", "+1234.567"}) {
    EXPECT_TRUE(internal::ParseShortDecimal(cell, &v)) << cell;
  }
  for (const char* cell : {"1e5", "123456789", "1.2.3", ".", "-", "", "1,5", "0x1"}) {
    EXPECT_FALSE(internal::ParseShortDecimal(cell, &v)) << cell;
  }
  ASSERT_TRUE(internal::ParseShortDecimal("-123.456", &v));
  EXPECT_EQ(v, -123.456);
  ASSERT_TRUE(internal::ParseSimpleDecimal("-123.456", &v));
  EXPECT_EQ(v, -123.456);
  for (const char* cell : {"1e23", "9007199254740993", "0.1234567890123456789", "inf", ""}) {
    EXPECT_FALSE(internal::ParseSimpleDecimal(cell, &v)) << cell;
  }
}

}  // namespace
}  // namespace unseen
