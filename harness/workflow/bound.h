// CalculateBound: the `bound` command. The holdout bounds as a calculator,
// for an error count or a mean loss obtained elsewhere: either a union
// bound over M questions fixed in advance, or the level `eval` gives one
// answer of a ledger (docs/bounds.md, "One accounting"). Touches no ledger
// and no data. Thread-safe.
#ifndef UNSEEN_HARNESS_WORKFLOW_BOUND_H_
#define UNSEEN_HARNESS_WORKFLOW_BOUND_H_

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "harness/bounds/bounds.h"
#include "storage/status.h"

namespace unseen {

struct BoundCalcRequest {
  uint64_t n = 0;                   // holdout size; REQUIRES n >= 1
  std::optional<uint64_t> errors;   // rows with a 0/1 loss of 1; or else
  std::optional<double> mean;       // the mean loss over the n rows
  std::optional<double> variance;   // unbiased sample variance (Bernstein)
  uint64_t models = 1;  // without a ledger: questions fixed in advance (ln H = ln M)
  // As one answer of a ledger (any of these set): the answer's number j
  // (default reveals + 1), the budget sealed (B), the answers shown before
  // the question was asked, each one of resolution_values values, and the
  // questions fixed before the first answer this one is among (if it is).
  std::optional<uint64_t> answer;
  uint64_t budget = 100;
  uint64_t reveals = 0;
  uint64_t resolution_values = 1001;  // values one answer could show
  std::optional<uint64_t> advance;
  double delta = 0.05;
  std::string method;               // empty: Clopper-Pearson for errors, else Hoeffding
  std::string range = "0:1";        // the loss range, "LO:HI"
};

struct BoundCalcReport {
  Bound bound;
  std::string metric;  // "error_rate" for --errors, "mean_loss" for --mean
  double log_hypotheses = 0;
};

// InvalidArgument naming the option for inconsistent or out-of-range input
// (no count and no mean, more errors than rows, --models with the ledger's
// options, a zero budget, answer or advance count, a malformed range or
// method) and for what ComputeBound rejects.
Result<BoundCalcReport> CalculateBound(const BoundCalcRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_BOUND_H_
