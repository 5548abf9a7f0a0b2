#include "harness/sampling/split.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <numeric>
#include <queue>
#include <string>
#include <utility>

#include "harness/sampling/random.h"

namespace unseen {
namespace {

using std::to_string;

// side[row] is 1 for a holdout row, 0 for a dev row.
using Sides = std::vector<uint8_t>;

uint64_t RequestedHoldout(double fraction, uint64_t rows) {
  // One IEEE-754 multiplication and round-half-away-from-zero: exact and
  // identical everywhere for rows below 2^53.
  const double wanted = std::round(fraction * static_cast<double>(rows));
  const uint64_t k = static_cast<uint64_t>(wanted);
  return std::min(std::max<uint64_t>(k, 1), rows - 1);
}

Status CheckCommon(const SplitRequest& r) {
  if (!(r.fraction > 0.0 && r.fraction < 1.0)) {
    return Status::InvalidArgument(
        fmt::format("split: fraction {} is out of range; expected 0 < fraction < 1", r.fraction));
  }
  if (r.rows < 2 || r.rows > kMaxSplitRows) {
    return Status::InvalidArgument("split: " + to_string(r.rows) +
                                   " rows; expected between 2 and " + to_string(kMaxSplitRows));
  }
  return Status::OK();
}

// Checks labels for kStratified/kGroup: one per row, each below rows.
Status CheckLabels(const SplitRequest& r, const char* what) {
  if (r.labels.size() != r.rows) {
    return Status::InvalidArgument("split: labels has " + to_string(r.labels.size()) +
                                   " entries for " + to_string(r.rows) + " rows; expected one " +
                                   what + " index per row");
  }
  for (size_t row = 0; row < r.labels.size(); ++row) {
    if (r.labels[row] >= r.rows) {
      return Status::InvalidArgument(
          "split: row " + to_string(row) + " has " + what + " index " + to_string(r.labels[row]) +
          "; expected an index below the row count " + to_string(r.rows));
    }
  }
  return Status::OK();
}

// Rows per label value; the vector is as long as the largest label plus one.
std::vector<uint64_t> CountLabels(const std::vector<uint32_t>& labels) {
  uint32_t largest = 0;
  for (uint32_t label : labels) largest = std::max(largest, label);
  std::vector<uint64_t> counts(uint64_t{largest} + 1, 0);
  for (uint32_t label : labels) ++counts[label];
  return counts;
}

SplitResult Collect(const Sides& side, uint64_t requested) {
  SplitResult result;
  result.requested_holdout = requested;
  const uint64_t holdout = static_cast<uint64_t>(std::count(side.begin(), side.end(), 1));
  result.holdout.resize(holdout);
  result.dev.resize(side.size() - holdout);
  // Without a branch per row: the sides of a random split follow no pattern. Each row is
  // written to both lists and kept by the one whose count advances; both have a slot to spare
  // except at their ends, where the other list's write is the one that lands.
  uint32_t* const h = result.holdout.data();
  uint32_t* const d = result.dev.data();
  size_t nh = 0, nd = 0;
  for (size_t row = 0; row < side.size(); ++row) {
    const uint32_t r = static_cast<uint32_t>(row);
    const size_t in_holdout = side[row] != 0;
    if (nh < holdout) h[nh] = r;
    if (nd < side.size() - holdout) d[nd] = r;
    nh += in_holdout;
    nd += 1 - in_holdout;
  }
  return result;
}

std::string SizeNote(uint64_t got, uint64_t requested, const char* reason) {
  if (got == requested) return "";
  const uint64_t gap = got > requested ? got - requested : requested - got;
  return "holdout has " + to_string(got) + " rows, " + to_string(gap) +
         (got > requested ? " more" : " fewer") + " than the requested " + to_string(requested) +
         ": " + reason;
}

// ---- random ----------------------------------------------------------------

SplitResult SplitRandom(const SplitRequest& r, uint64_t requested) {
  std::vector<uint32_t> order(r.rows);
  std::iota(order.begin(), order.end(), uint32_t{0});
  Random rng(r.seed);
  rng.PartialShuffle(order.data(), order.size(), requested);
  Sides side(r.rows, 0);
  for (uint64_t i = 0; i < requested; ++i) side[order[i]] = 1;
  return Collect(side, requested);
}

// ---- stratified ------------------------------------------------------------

// Per class: its size, the holdout rows it gets, and excess = take * rows -
// requested * size, i.e. rows times how far take is above the exact quota.
// With rows <= 2^31 every product stays below 2^62.
struct Apportionment {
  std::vector<uint64_t> size;
  std::vector<uint64_t> take;
  std::vector<int64_t> excess;
  uint64_t total = 0;
};

// Largest-remainder (Hamilton) apportionment of `requested` seats by size;
// equal remainders favour the lower class index.
Apportionment Apportion(std::vector<uint64_t> sizes, uint64_t rows, uint64_t requested) {
  Apportionment a;
  const size_t k = sizes.size();
  a.size = std::move(sizes);
  a.take.resize(k);
  std::vector<uint64_t> remainder(k);
  for (size_t c = 0; c < k; ++c) {
    a.take[c] = requested * a.size[c] / rows;
    remainder[c] = requested * a.size[c] % rows;
    a.total += a.take[c];
  }
  std::vector<uint32_t> by_remainder(k);
  std::iota(by_remainder.begin(), by_remainder.end(), uint32_t{0});
  // Fewer than k seats remain. The order is total, so the set of classes
  // before position `left` is unique whatever nth_element does.
  const size_t left = static_cast<size_t>(requested - a.total);
  if (left > 0) {
    std::nth_element(by_remainder.begin(), by_remainder.begin() + (left - 1), by_remainder.end(),
                     [&](uint32_t x, uint32_t y) {
                       return remainder[x] != remainder[y] ? remainder[x] > remainder[y] : x < y;
                     });
  }
  for (size_t i = 0; i < left; ++i) ++a.take[by_remainder[i]];
  a.total = requested;
  a.excess.resize(k);
  for (size_t c = 0; c < k; ++c) {
    a.excess[c] =
        static_cast<int64_t>(a.take[c] * rows) - static_cast<int64_t>(requested * a.size[c]);
  }
  return a;
}

// Moves one seat at a time until the total is `requested` or no class within
// [lo, hi] can move. Removing takes from the class furthest above its quota
// (ties: the higher index); adding gives to the class furthest below it
// (ties: the lower index). The keys form a strict total order, so the
// sequence of moves does not depend on the heap implementation.
void Rebalance(const std::vector<uint64_t>& lo, const std::vector<uint64_t>& hi, uint64_t rows,
               uint64_t requested, Apportionment* a) {
  const bool remove = a->total > requested;
  const int64_t step = static_cast<int64_t>(rows);
  auto key = [&](uint32_t c) {
    return remove ? std::make_pair(a->excess[c], int64_t{c})
                  : std::make_pair(-a->excess[c], -int64_t{c});
  };
  auto movable = [&](uint32_t c) { return remove ? a->take[c] > lo[c] : a->take[c] < hi[c]; };
  std::priority_queue<std::pair<std::pair<int64_t, int64_t>, uint32_t>> heap;
  for (uint32_t c = 0; c < a->take.size(); ++c) {
    if (movable(c)) heap.push({key(c), c});
  }
  while (a->total != requested && !heap.empty()) {
    const uint32_t c = heap.top().second;
    heap.pop();
    if (remove) {
      --a->take[c], --a->total;
      a->excess[c] -= step;
    } else {
      ++a->take[c], ++a->total;
      a->excess[c] += step;
    }
    if (movable(c)) heap.push({key(c), c});
  }
}

// Keeps a row of every class with >= 2 rows on each side while the total
// allows it; returns how many such classes still lack a row on one side.
uint64_t KeepBothSides(uint64_t rows, uint64_t requested, Apportionment* a) {
  const size_t k = a->size.size();
  std::vector<uint64_t> lo(k), hi(k);
  for (size_t c = 0; c < k; ++c) {
    const bool two = a->size[c] >= 2;
    lo[c] = two ? 1 : 0;
    hi[c] = two ? a->size[c] - 1 : a->size[c];
    const uint64_t clamped = std::min(std::max(a->take[c], lo[c]), hi[c]);
    a->total = a->total - a->take[c] + clamped;
    a->excess[c] += (static_cast<int64_t>(clamped) - static_cast<int64_t>(a->take[c])) *
                    static_cast<int64_t>(rows);
    a->take[c] = clamped;
  }
  Rebalance(lo, hi, rows, requested, a);
  if (a->total == requested) return 0;
  // The holdout (or dev) is smaller than the number of classes: give up the
  // one-row minimum where the quota is smallest.
  std::vector<uint64_t> zero(k, 0);
  Rebalance(zero, a->size, rows, requested, a);
  uint64_t lacking = 0;
  for (size_t c = 0; c < k; ++c) {
    lacking += a->size[c] >= 2 && (a->take[c] == 0 || a->take[c] == a->size[c]);
  }
  return lacking;
}

SplitResult SplitStratified(const SplitRequest& r, uint64_t requested) {
  Apportionment a = Apportion(CountLabels(r.labels), r.rows, requested);
  const uint64_t lacking = KeepBothSides(r.rows, requested, &a);
  // Bucket rows by class (counting sort; ascending row order within a class),
  // then shuffle each class's rows with one generator, class 0 first.
  const size_t k = a.size.size();
  std::vector<uint64_t> start(k + 1, 0);
  for (size_t c = 0; c < k; ++c) start[c + 1] = start[c] + a.size[c];
  std::vector<uint32_t> order(r.rows);
  std::vector<uint64_t> next(start.begin(), start.end() - 1);
  for (size_t row = 0; row < r.rows; ++row) {
    order[next[r.labels[row]]++] = static_cast<uint32_t>(row);
  }
  Random rng(r.seed);
  Sides side(r.rows, 0);
  for (size_t c = 0; c < k; ++c) {
    uint32_t* rows_of_class = order.data() + start[c];
    rng.PartialShuffle(rows_of_class, a.size[c], a.take[c]);
    for (uint64_t i = 0; i < a.take[c]; ++i) side[rows_of_class[i]] = 1;
  }
  SplitResult result = Collect(side, requested);
  if (lacking > 0) {
    result.note = to_string(lacking) +
                  " classes with 2 or more rows have all their rows on one side: the holdout "
                  "or dev is smaller than the number of classes";
  }
  return result;
}

// ---- group -----------------------------------------------------------------

Result<SplitResult> SplitGroup(const SplitRequest& r, uint64_t requested) {
  const std::vector<uint64_t> size = CountLabels(r.labels);
  std::vector<uint32_t> groups;  // non-empty groups, ascending, then shuffled
  uint64_t largest = 0;
  for (uint32_t g = 0; g < size.size(); ++g) {
    if (size[g] > 0) groups.push_back(g);
    largest = std::max(largest, size[g]);
  }
  if (groups.size() < 2) {
    return Status::InvalidArgument(
        "split: every row is in one group; a group split needs at least two groups");
  }
  Random rng(r.seed);
  rng.Shuffle(groups.data(), groups.size());
  // The prefix of 1 .. G-1 shuffled groups whose row count is closest to
  // requested; on a tie the shorter prefix.
  size_t best_prefix = 1;
  uint64_t best_gap = UINT64_MAX;
  uint64_t total = 0;
  for (size_t p = 1; p < groups.size(); ++p) {
    total += size[groups[p - 1]];
    const uint64_t gap = total > requested ? total - requested : requested - total;
    if (gap < best_gap) best_gap = gap, best_prefix = p;
    if (total >= requested) break;  // longer prefixes only move further away
  }
  std::vector<uint8_t> in_holdout(size.size(), 0);
  for (size_t p = 0; p < best_prefix; ++p) in_holdout[groups[p]] = 1;
  Sides side(r.rows);
  for (size_t row = 0; row < r.rows; ++row) side[row] = in_holdout[r.labels[row]];
  SplitResult result = Collect(side, requested);
  result.note =
      SizeNote(result.holdout.size(), requested,
               ("groups stay whole (largest group " + to_string(largest) + " rows)").c_str());
  return result;
}

// ---- time ------------------------------------------------------------------

// In time order the allowed cuts are where the value changes. The sorted
// position rows - requested lies in the run of one value v; the closest
// allowed cuts are that run's two ends, so the holdout is either
// {time >= v} or {time > v}. Selection (nth_element) finds v in O(rows);
// v is unique as a value whatever the selection algorithm does.
template <typename Key>
Result<SplitResult> SplitByTime(const std::vector<Key>& key, uint64_t requested) {
  const size_t rows = key.size();
  std::vector<uint32_t> order(rows);
  std::iota(order.begin(), order.end(), uint32_t{0});
  const size_t position = rows - requested;
  std::nth_element(order.begin(), order.begin() + position, order.end(),
                   [&](uint32_t x, uint32_t y) { return key[x] < key[y]; });
  const Key& v = key[order[position]];
  uint64_t at_least = 0;  // rows with time >= v: the holdout if cut before v's run
  uint64_t after = 0;     // rows with time > v: the holdout if cut after it
  for (const Key& t : key) {
    at_least += !(t < v);
    after += v < t;
  }
  // Both candidates must leave each side non-empty; at equal distance the
  // smaller holdout wins.
  const bool can_before = at_least < rows;
  const bool can_after = after > 0;
  if (!can_before && !can_after) {
    return Status::InvalidArgument("split: all " + to_string(rows) +
                                   " rows share one time value; a time split needs at least two");
  }
  const bool before = can_before && (!can_after || at_least - requested < requested - after);
  Sides side(rows, 0);
  for (size_t row = 0; row < rows; ++row) side[row] = before ? !(key[row] < v) : v < key[row];
  SplitResult result = Collect(side, requested);
  result.note =
      SizeNote(result.holdout.size(), requested, "rows sharing a time value stay on one side");
  return result;
}

Result<SplitResult> SplitTime(const SplitRequest& r, uint64_t requested) {
  const bool numeric = !r.time_numeric.empty();
  if (numeric && !r.time_text.empty()) {
    return Status::InvalidArgument(
        "split: both time_numeric and time_text are given; expected exactly one");
  }
  const size_t got = numeric ? r.time_numeric.size() : r.time_text.size();
  if (got != r.rows) {
    return Status::InvalidArgument("split: " + to_string(got) + " time values for " +
                                   to_string(r.rows) + " rows; expected one per row");
  }
  if (!numeric) return SplitByTime(r.time_text, requested);
  for (size_t row = 0; row < r.rows; ++row) {
    if (std::isnan(r.time_numeric[row])) {
      return Status::InvalidArgument("split: row " + to_string(row) +
                                     " has a NaN time; expected a number");
    }
  }
  return SplitByTime(r.time_numeric, requested);
}

bool Comparable(double key) { return !std::isnan(key); }
bool Comparable(const std::string&) { return true; }

// The number of dev rows whose key is later than the earliest holdout key.
template <typename Key>
uint64_t CountLater(const std::vector<Key>& key, const SplitResult& result) {
  const Key* earliest = nullptr;
  for (uint32_t row : result.holdout) {
    if (row >= key.size() || !Comparable(key[row])) continue;
    if (earliest == nullptr || key[row] < *earliest) earliest = &key[row];
  }
  if (earliest == nullptr) return 0;
  uint64_t later = 0;
  for (uint32_t row : result.dev) later += row < key.size() && *earliest < key[row];
  return later;
}

}  // namespace

Result<SplitStrategy> ParseSplitStrategy(std::string_view name) {
  for (SplitStrategy s : {SplitStrategy::kRandom, SplitStrategy::kStratified, SplitStrategy::kGroup,
                          SplitStrategy::kTime}) {
    if (name == SplitStrategyName(s)) return s;
  }
  return Status::InvalidArgument("unknown split strategy '" + std::string(name) +
                                 "'; expected random, stratified, group or time");
}

const char* SplitStrategyName(SplitStrategy s) {
  switch (s) {
    case SplitStrategy::kRandom:
      return "random";
    case SplitStrategy::kStratified:
      return "stratified";
    case SplitStrategy::kGroup:
      return "group";
    case SplitStrategy::kTime:
      return "time";
  }
  return "unknown";
}

Result<SplitResult> Split(const SplitRequest& request) try {
  UNSEEN_RETURN_IF_ERROR(CheckCommon(request));
  const uint64_t requested = RequestedHoldout(request.fraction, request.rows);
  switch (request.strategy) {
    case SplitStrategy::kRandom:
      return SplitRandom(request, requested);
    case SplitStrategy::kStratified:
      UNSEEN_RETURN_IF_ERROR(CheckLabels(request, "class"));
      return SplitStratified(request, requested);
    case SplitStrategy::kGroup:
      UNSEEN_RETURN_IF_ERROR(CheckLabels(request, "group"));
      return SplitGroup(request, requested);
    case SplitStrategy::kTime:
      return SplitTime(request, requested);
  }
  return Status::InvalidArgument("split: unknown strategy value " +
                                 to_string(static_cast<int>(request.strategy)));
} catch (const std::bad_alloc&) {
  return Status::Internal("split: out of memory for " + to_string(request.rows) + " rows");
}

uint64_t CountGroupViolations(const std::vector<uint32_t>& group_of_row,
                              const std::vector<uint32_t>& holdout_rows) try {
  const size_t rows = group_of_row.size();
  std::vector<uint8_t> in_holdout(rows, 0);
  for (uint32_t row : holdout_rows) {
    if (row < rows) in_holdout[row] = 1;
  }
  // Bit 1: the group has a dev row; bit 2: it has a holdout row. Dense group
  // values index a table directly; sparse ones are ranked first.
  uint32_t largest = 0;
  for (uint32_t g : group_of_row) largest = std::max(largest, g);
  std::vector<uint32_t> values;
  if (largest >= 4 * uint64_t{rows} + 1024) {
    values = group_of_row;
    std::sort(values.begin(), values.end());
    values.erase(std::unique(values.begin(), values.end()), values.end());
  }
  std::vector<uint8_t> seen(values.empty() ? uint64_t{largest} + 1 : values.size(), 0);
  for (size_t row = 0; row < rows; ++row) {
    const size_t slot =
        values.empty()
            ? group_of_row[row]
            : std::lower_bound(values.begin(), values.end(), group_of_row[row]) - values.begin();
    seen[slot] |= in_holdout[row] ? 2 : 1;
  }
  return static_cast<uint64_t>(std::count(seen.begin(), seen.end(), 3));
} catch (const std::bad_alloc&) {
  return UINT64_MAX;  // fail safe: a seal report must not read this as "none"
}

uint64_t CountTimeViolations(const SplitRequest& request, const SplitResult& result) {
  if (!request.time_numeric.empty()) return CountLater(request.time_numeric, result);
  return CountLater(request.time_text, result);
}

}  // namespace unseen
