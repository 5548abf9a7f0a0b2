// Folds for model selection inside the development rows: k-fold
// (stratified for classification, group-aware when groups are given) and a
// single validation split. Deterministic in the seed on every machine.
// Pure functions; thread-safe.
#ifndef UNSEEN_HARNESS_SAMPLING_FOLDS_H_
#define UNSEEN_HARNESS_SAMPLING_FOLDS_H_

#include <cstdint>
#include <string>
#include <vector>

#include "storage/status.h"

namespace unseen {

// fold[i] in 0..k-1 for each of the n rows.
//   labels (optional, size n): stratify — each class dealt round-robin over
//     the folds after a seeded shuffle;
//   groups (optional, size n): whole groups per fold — groups shuffled, then
//     each put in the fold with the fewest rows so far (ties: lowest fold).
// Groups win over labels when both are given. InvalidArgument if k < 2 or
// there are fewer rows (or groups) than folds.
Result<std::vector<int>> AssignFolds(size_t n, int k, uint64_t seed,
                                     const std::vector<int>& labels,
                                     const std::vector<std::string>& groups);

// A validation split: fold 1 marks the validation rows (round(fraction*n)
// rows, or whole groups as close to that as the group rule allows), 0 the
// training rows.
Result<std::vector<int>> AssignValidation(size_t n, double fraction, uint64_t seed,
                                          const std::vector<std::string>& groups);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_SAMPLING_FOLDS_H_
