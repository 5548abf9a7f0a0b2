// FitModel: the `fit` command. Fits a pipeline spec on development rows,
// selecting among a grid of candidates by cross-validation (every transform
// refitted inside every fold) or a validation split, refits the chosen
// candidate on all rows read and freezes it as a named model. Records a
// `select` entry (every candidate's scores, the fold row sets) and a `fit`
// entry (rows read, parameters, parents, the model's digest) in one
// transaction. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_FIT_H_
#define UNSEEN_HARNESS_WORKFLOW_FIT_H_

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "harness/bounds.h"
#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct FitRequest {
  std::string ledger_path;
  std::string spec_path;
  std::string name;
  std::string data_path;  // empty: the dev file written by seal
  std::string actor;
};

struct CandidateScore {
  nlohmann::json settings;
  std::vector<double> fold_scores;
  double mean = 0;
};

struct FitReport {
  std::string name;
  Digest256 model_digest{};
  uint64_t rows = 0;
  std::string metric;
  std::string selection;  // "none", "k-fold" or "validation"
  int folds = 0;
  std::vector<CandidateScore> candidates;
  size_t chosen = 0;
  std::optional<Bound> validation_bound;  // validation selection with a bounded metric
  std::string caution;
  Digest256 head{};
};

// Refused (exit 1, after appending a `refusal` entry) when the data holds
// holdout rows or rows that are not development rows; InvalidArgument for
// a bad spec ("SPEC:LINE:COL: ...") or a model name already used;
// FailedPrecondition before seal.
Result<FitReport> FitModel(const FitRequest& request);

// Model names: 1-64 characters of [A-Za-z0-9._-], starting with a letter or digit.
Status CheckModelName(const std::string& name);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_FIT_H_
