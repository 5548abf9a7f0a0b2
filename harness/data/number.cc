#include "harness/data/number.h"

#include <charconv>
#include <cstdint>
#include <cstring>
#include <system_error>

#include "harness/data/csv.h"

namespace unseen {
namespace internal {
namespace {

constexpr int kMaxExactPower = 22;
constexpr uint64_t kMaxExactInteger = uint64_t{1} << 53;

inline bool IsDigit(char c) { return static_cast<unsigned char>(c - '0') < 10; }

// Decimal exponent of the leading significant digit of a from_chars-valid number (sign already
// removed), or 0 when every digit is zero. Only its sign matters: it tells an underflow (the
// value is tiny) from an overflow when from_chars reports a value out of range.
long LeadingDigitExponent(std::string_view s) {
  long position = -1;  // decimal exponent of the digit being looked at, before the exponent part
  size_t i = 0;
  size_t int_digits = 0;
  while (i < s.size() && s[i] >= '0' && s[i] <= '9') ++int_digits, ++i;
  long lead = 0;
  bool found = false;
  for (size_t k = 0; k < int_digits && !found; ++k) {
    if (s[k] != '0') lead = static_cast<long>(int_digits - k) - 1, found = true;
  }
  if (i < s.size() && s[i] == '.') {
    ++i;
    for (; i < s.size() && s[i] >= '0' && s[i] <= '9'; ++i, --position) {
      if (!found && s[i] != '0') lead = position, found = true;
    }
  }
  long exponent = 0;
  if (i < s.size() && (s[i] == 'e' || s[i] == 'E')) {
    long sign = 1;
    ++i;
    if (i < s.size() && (s[i] == '+' || s[i] == '-')) sign = s[i++] == '-' ? -1 : 1;
    for (; i < s.size() && exponent < 100000; ++i) exponent = exponent * 10 + (s[i] - '0');
    exponent *= sign;
  }
  return found ? lead + exponent : 0;
}

}  // namespace

bool ParseNumberWithFromChars(std::string_view cell, double* out) {
  std::string_view s = cell;
  if (!s.empty() && s[0] == '+') {
    s.remove_prefix(1);
    if (!s.empty() && s[0] == '-') return false;  // "+-1"
  }
  const size_t first = !s.empty() && s[0] == '-' ? 1 : 0;
  // from_chars also takes "inf", "nan" and "infinity"; a number starts with a digit or a point.
  if (first >= s.size() || !((s[first] >= '0' && s[first] <= '9') || s[first] == '.')) {
    return false;
  }
  double value = 0;
  const std::from_chars_result r = std::from_chars(s.data(), s.data() + s.size(), value);
  if (r.ptr != s.data() + s.size()) return false;
  if (r.ec == std::errc::result_out_of_range) {
    if (LeadingDigitExponent(s.substr(first)) >= 0) return false;  // overflow
    value = first == 1 ? -0.0 : 0.0;                               // underflow
  } else if (r.ec != std::errc()) {
    return false;
  }
  *out = value;
  return true;
}

bool ParseSimpleDecimal(std::string_view cell, double* out) {
#if UNSEEN_DECIMAL_FAST_PATH
  const char* p = cell.data();
  const char* const end = p + cell.size();
  bool negative = false;
  if (p < end && (*p == '-' || *p == '+')) negative = *p++ == '-';
  uint64_t w = 0;       // the significant digits as an integer
  int significant = 0;  // digits in w, counted from the first non-zero one
  int fraction = 0;     // digits after the point
  bool any_digit = false;
  for (; p < end && IsDigit(*p); ++p) {
    any_digit = true;
    if (w == 0 && *p == '0') continue;
    if (++significant > 19) return false;
    w = w * 10 + static_cast<uint64_t>(*p - '0');
  }
  if (p < end && *p == '.') {
    for (++p; p < end && IsDigit(*p); ++p) {
      any_digit = true;
      ++fraction;
      if (w == 0 && *p == '0') continue;
      if (++significant > 19) return false;
      w = w * 10 + static_cast<uint64_t>(*p - '0');
    }
  }
  if (!any_digit) return false;
  int exponent = 0;
  if (p < end && (*p == 'e' || *p == 'E')) {
    ++p;
    bool exponent_negative = false;
    if (p < end && (*p == '+' || *p == '-')) exponent_negative = *p++ == '-';
    const char* const digits = p;
    for (; p < end && IsDigit(*p) && p - digits < 4; ++p) exponent = exponent * 10 + (*p - '0');
    if (p == digits) return false;
    if (exponent_negative) exponent = -exponent;
  }
  if (p != end || w > kMaxExactInteger) return false;
  const int q = exponent - fraction;
  if (q < -kMaxExactPower || q > kMaxExactPower) return false;
  double v = static_cast<double>(w);  // exact: w <= 2^53
  v = q >= 0 ? v * kExactPowersOfTen[q] : v / kExactPowersOfTen[-q];
  *out = negative ? -v : v;
  return true;
#else
  (void)cell;
  (void)out;
  return false;
#endif
}

}  // namespace internal

bool ParseNumber(std::string_view cell, double* out) {
  return internal::ParseShortDecimal(cell, out) || internal::ParseSimpleDecimal(cell, out) ||
         internal::ParseNumberWithFromChars(cell, out);
}

}  // namespace unseen
