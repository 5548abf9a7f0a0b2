// FitModel: the `fit` command. Fits a pipeline spec on development rows,
// selecting among a grid of candidates by cross-validation (every transform
// refitted inside every fold) or a validation split, refits the chosen
// candidate on all rows read and freezes it as a named model. Records a
// `select` entry (every candidate's scores, the fold row sets) and a `fit`
// entry (rows read, parameters, parents, the model's digest) in one
// transaction. A spec whose learner is a blend (harness/pipeline/blend.h)
// instead fits blend weights over frozen models on a carved partition that
// none of them read. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_FIT_H_
#define UNSEEN_HARNESS_WORKFLOW_FIT_H_

#include <optional>
#include <string>
#include <vector>

#include <nlohmann/json.hpp>

#include "harness/bounds/bounds.h"
#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct FitRequest {
  std::string ledger_path;
  std::string spec_path;
  std::string name;
  std::string data_path;  // empty: the dev file written by seal
  std::string actor;
  std::string exclude;  // a carved partition (`unseen carve`) whose rows are left out
};

struct CandidateScore {
  nlohmann::json settings;
  std::vector<double> fold_scores;
  double mean = 0;
};

// One member of a fitted blend.
struct BlendMemberReport {
  std::string name;
  Digest256 digest{};
  int64_t fit_entry = 0;
  double weight = 0;
  double loss_without = 0;  // cross-validated loss of the blend refitted without this member
  double contribution = 0;  // loss_without - the blend's loss with every member
};

struct BlendReport {
  std::string partition;
  bool nonnegative = false;
  double intercept = 0;
  double loss_all = 0;  // cross-validated loss of the blend of every member
  std::vector<BlendMemberReport> members;
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
  std::string excluded;              // the partition left out (--exclude), or empty
  uint64_t excluded_rows = 0;        // rows of the data that fell in it and were dropped
  std::optional<BlendReport> blend;  // a blend: metric and folds are its contributions'
  Digest256 head{};
};

// Refused (exit 1, after appending a `refusal` entry) when the data holds
// holdout rows or rows that are not development rows, and for a blend when
// a member is tainted or any row its lineage read lies in the blend's
// partition; InvalidArgument for a bad spec ("SPEC:LINE:COL: ..."), a model
// name already used, a blend on a multiclass source, or --exclude with a
// blend; NotFound for an unknown partition or blend member;
// FailedPrecondition before seal. On error the ledger is unchanged apart
// from the refusal entry.
Result<FitReport> FitModel(const FitRequest& request);

// Model names: 1-64 characters of [A-Za-z0-9._-], starting with a letter or digit.
Status CheckModelName(const std::string& name);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_FIT_H_
