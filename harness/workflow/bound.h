// CalculateBound: the `bound` command. The holdout bounds as a calculator,
// for an error count or a mean loss obtained elsewhere, with the same
// adaptivity accounting as `eval` (docs/bounds.md). Touches no ledger and
// no data. Thread-safe.
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
  uint64_t models = 1;              // hypotheses fixed in advance
  std::vector<uint64_t> reveals;    // per model, reveals before its freeze; missing count 0
  uint64_t resolution_values = 1001;  // values one reveal could show
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
// (no count and no mean, more errors than rows, more reveals than models,
// a malformed range or method) and for what ComputeBound rejects.
Result<BoundCalcReport> CalculateBound(const BoundCalcRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_BOUND_H_
