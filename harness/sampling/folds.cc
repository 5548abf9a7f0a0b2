#include "harness/sampling/folds.h"

#include <algorithm>
#include <cmath>
#include <map>
#include <numeric>

#include "harness/sampling/random.h"

namespace unseen {

namespace {

// Group index per row, groups numbered by first appearance.
std::vector<size_t> GroupIndex(const std::vector<std::string>& groups, size_t* count) {
  std::map<std::string, size_t> seen;
  std::vector<size_t> idx;
  idx.reserve(groups.size());
  for (const std::string& g : groups) idx.push_back(seen.emplace(g, seen.size()).first->second);
  *count = seen.size();
  return idx;
}

}  // namespace

Result<std::vector<int>> AssignFolds(size_t n, int k, uint64_t seed, const std::vector<int>& labels,
                                     const std::vector<std::string>& groups) {
  if (k < 2) return Status::InvalidArgument("folds: expected at least 2");
  if (n < static_cast<size_t>(k)) {
    return Status::InvalidArgument("folds: " + std::to_string(k) + " folds need at least as many rows");
  }
  Random rng(seed);
  std::vector<int> fold(n, 0);
  if (!groups.empty()) {
    size_t g = 0;
    std::vector<size_t> gi = GroupIndex(groups, &g);
    if (g < static_cast<size_t>(k)) {
      return Status::InvalidArgument("folds: " + std::to_string(k) + " group-aware folds need at least " +
                                     std::to_string(k) + " groups; the rows have " + std::to_string(g));
    }
    std::vector<size_t> size(g, 0), order(g);
    for (size_t r = 0; r < n; ++r) ++size[gi[r]];
    std::iota(order.begin(), order.end(), 0);
    rng.Shuffle(order.data(), order.size());
    std::vector<size_t> fold_rows(static_cast<size_t>(k), 0);
    std::vector<int> fold_of_group(g, 0);
    for (size_t grp : order) {
      size_t best = static_cast<size_t>(std::min_element(fold_rows.begin(), fold_rows.end()) - fold_rows.begin());
      fold_of_group[grp] = static_cast<int>(best);
      fold_rows[best] += size[grp];
    }
    for (size_t r = 0; r < n; ++r) fold[r] = fold_of_group[gi[r]];
    return fold;
  }
  // Stratified (or plain, with one class): per class, shuffle and deal.
  std::map<int, std::vector<size_t>> by_class;
  for (size_t r = 0; r < n; ++r) by_class[labels.empty() ? 0 : labels[r]].push_back(r);
  size_t next = 0;  // continue dealing where the previous class stopped, to balance sizes
  for (auto& [label, rows] : by_class) {
    rng.Shuffle(rows.data(), rows.size());
    for (size_t r : rows) fold[r] = static_cast<int>(next++ % static_cast<size_t>(k));
  }
  return fold;
}

Result<std::vector<int>> AssignValidation(size_t n, double fraction, uint64_t seed,
                                          const std::vector<std::string>& groups) {
  if (!(fraction > 0 && fraction < 1)) return Status::InvalidArgument("validation: expected a fraction in (0,1)");
  size_t want = static_cast<size_t>(std::llround(fraction * static_cast<double>(n)));
  want = std::clamp<size_t>(want, 1, n - 1);
  Random rng(seed);
  std::vector<int> fold(n, 0);
  if (groups.empty()) {
    std::vector<size_t> order(n);
    std::iota(order.begin(), order.end(), 0);
    rng.PartialShuffle(order.data(), n, want);
    for (size_t i = 0; i < want; ++i) fold[order[i]] = 1;
    return fold;
  }
  size_t g = 0;
  std::vector<size_t> gi = GroupIndex(groups, &g);
  if (g < 2) return Status::InvalidArgument("validation: group-aware validation needs at least 2 groups");
  std::vector<size_t> size(g, 0), order(g);
  for (size_t r = 0; r < n; ++r) ++size[gi[r]];
  std::iota(order.begin(), order.end(), 0);
  rng.Shuffle(order.data(), order.size());
  std::vector<bool> chosen(g, false);
  size_t taken = 0;
  for (size_t i = 0; i + 1 < g && taken < want; ++i) {
    chosen[order[i]] = true;
    taken += size[order[i]];
  }
  for (size_t r = 0; r < n; ++r) fold[r] = chosen[gi[r]] ? 1 : 0;
  return fold;
}

}  // namespace unseen
