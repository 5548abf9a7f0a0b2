// Holdout splitting: which rows of a source go to the holdout and which to
// dev. Split() is a pure function of its request: the same request gives the
// same result on every machine and compiler (the algorithms, and the PRNG in
// harness/sampling/random.h, are frozen; see docs/splits.md). Thread-safe.
#ifndef UNSEEN_HARNESS_SAMPLING_SPLIT_H_
#define UNSEEN_HARNESS_SAMPLING_SPLIT_H_

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "storage/status.h"

namespace unseen {

enum class SplitStrategy { kRandom, kStratified, kGroup, kTime };

// "random", "stratified", "group" or "time" (exact, lower case). Any other
// name returns InvalidArgument listing the accepted names.
Result<SplitStrategy> ParseSplitStrategy(std::string_view name);
// The name ParseSplitStrategy() accepts for `s`.
const char* SplitStrategyName(SplitStrategy s);

// The most rows Split() accepts (row numbers are uint32_t, and the
// stratified apportionment stays exact in 64-bit integers below this).
inline constexpr uint64_t kMaxSplitRows = uint64_t{1} << 31;

struct SplitRequest {
  SplitStrategy strategy = SplitStrategy::kRandom;
  // Share of rows wanted in the holdout. REQUIRES: 0 < fraction < 1.
  double fraction = 0.2;
  uint64_t seed = 0;
  // REQUIRES: 2 <= rows <= kMaxSplitRows.
  uint64_t rows = 0;
  // kStratified: class index per row (0..k-1). kGroup: group index per row
  // (0..g-1). One entry per row; every index below `rows`; indexes may be
  // unused. Ignored by the other strategies.
  std::vector<uint32_t> labels;
  // kTime: a sortable time key per row; fill exactly one of the two.
  std::vector<double> time_numeric;    // used when time values are all numeric; no NaN
  std::vector<std::string> time_text;  // else ISO-8601 text, compared bytewise
};

struct SplitResult {
  std::vector<uint32_t> holdout;   // ascending row numbers
  std::vector<uint32_t> dev;       // ascending, the complement
  uint64_t requested_holdout = 0;  // round(fraction * rows), at least 1 and at most rows-1
  // Empty, or one sentence on why the holdout size or a class share moved
  // away from what was requested (whole groups, tied times, tiny classes).
  std::string note;
};

// Carves `request.rows` rows into holdout and dev by `request.strategy`
// (semantics in docs/splits.md). Both sides are non-empty. On success returns
// the split. Returns InvalidArgument when the fraction is outside (0, 1),
// rows < 2 or rows > kMaxSplitRows, the per-row vector the strategy needs
// has the wrong size or an index >= rows, a time is NaN or both time vectors
// are given, a group split finds a single group, or a time split finds a
// single time value.
Result<SplitResult> Split(const SplitRequest& request);

// The number of distinct group values present both among `holdout_rows` and
// among the other rows of `group_of_row` (0 after a kGroup split). Row
// numbers >= group_of_row.size() are ignored; duplicates are harmless.
// Returns UINT64_MAX if memory for the check runs out.
uint64_t CountGroupViolations(const std::vector<uint32_t>& group_of_row,
                              const std::vector<uint32_t>& holdout_rows);

// The number of dev rows whose time is later than the earliest holdout time
// (0 after a kTime split). Uses request.time_numeric when it is non-empty,
// else request.time_text; rows without a time key are ignored, and NaN times
// are never later than anything.
uint64_t CountTimeViolations(const SplitRequest& request, const SplitResult& result);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_SAMPLING_SPLIT_H_
