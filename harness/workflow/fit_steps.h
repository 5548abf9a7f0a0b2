// The named steps of the `fit` command (workflow/fit.h), shared by its
// files: fit.cc opens the run, runs a pipeline spec's steps in order and
// holds the steps both paths share; fit_select.cc chooses among a pipeline
// spec's candidates; blend_fit.cc fits a blend. Internal to the fit command;
// all of it runs inside the command's one ledger transaction.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_FIT_STEPS_H_
#define UNSEEN_HARNESS_WORKFLOW_FIT_STEPS_H_

#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/metrics.h"
#include "harness/pipeline/spec.h"
#include "harness/workflow/carve.h"
#include "harness/workflow/fit.h"
#include "storage/ledger.h"

namespace unseen::internal {

// Everything one `fit` call knows, step by step. OpenFit() fills the first
// part; the rows and the report are filled by the path the spec takes.
struct FitRun {
  const FitRequest* req = nullptr;
  std::unique_ptr<Ledger> ledger;
  LedgerState st;
  PipelineSpec spec;
  std::string data_path;  // the file the rows were read from
  AdmittedData data;      // the rows fitted on
  FitReport report;

  // Pipeline specs only (fit.cc, fit_select.cc).
  LearnTask task = LearnTask::kRegression;
  int classes = 0;  // classification: the number of classes
  Metric metric = Metric::kMse;
  std::optional<NamedPartition> excluded;  // --exclude
  std::vector<Candidate> candidates;
  std::vector<int> fold;  // each row's fold, when candidates are compared
  int k = 0;              // the number of folds (2 for a validation split)
  uint64_t seed = 0;
  std::vector<int64_t> parents;  // of the fit entry
};

// The blobs every fit entry stores first, in this order.
struct FitBlobs {
  BlobRef model, spec, rows_read;
};

// --- fit.cc: the steps both paths share ---

// Checks the model name, opens the ledger in the command's transaction,
// reads its state, checks that the holdout is sealed and the name is free,
// and parses the spec. Errors as FitModel documents.
Result<std::unique_ptr<FitRun>> OpenFit(const FitRequest& request);

// Loads the fit's data (request.data_path, else the dev file seal wrote) as
// development rows and sets run->data_path to the file read. When the data
// is refused (holdout rows, rows that are not dev rows) it rolls the ledger
// back, appends a `refusal` entry and returns the refusal.
Result<AdmittedData> AdmitFitData(FitRun* run);

// Rolls the ledger back and records `reason` as a `refusal` entry of the fit
// command with `details` (a JSON object); returns `reason` (or the error
// that kept the refusal from being recorded).
Status RefuseFit(FitRun* run, const Status& reason, const nlohmann::json& details);

// The fields every frozen model starts with: format, name, ledger_id,
// source_sha256 and target {column, classes}.
nlohmann::json FrozenModelHeader(const LedgerState& state, const std::string& name);

// Stores the frozen `model` (canonical JSON), the spec file's bytes and the
// rows read (run->data) as blobs, in that order; sets run->report.model_digest.
Result<FitBlobs> PutFitBlobs(FitRun* run, const nlohmann::json& model);

// A fit entry's body with the fields every fit records: the model, its
// digest, the spec, the data file, the rows read and their number.
FitBody FitEntryBody(const FitRun& run, const FitBlobs& blobs);

// Appends the fit entry with `blobs`, commits the transaction and sets
// run->report.head.
Status RecordFit(FitRun* run, const FitBody& fit, const std::vector<BlobRef>& blobs);

// --- fit_select.cc: choosing among a pipeline spec's candidates ---

// Fits `candidate` (every transform, then the learner) on the rows of `data` with fold[i] != f
// only, and scores it on the rows with fold[i] == f: no statistic of the scored rows reaches
// the fit.
Result<double> ScoreOnFold(const Candidate& candidate, const AdmittedData& data,
                           const std::vector<int>& fold, int f, Metric metric, LearnTask task,
                           int classes);

// The source rows of each fold's validation part (fold[i] == f), as row sets.
std::vector<RowSet> FoldRowSets(const AdmittedData& data, const std::vector<int>& fold, int k);

// Expands the grid and, when there is more than one candidate or a [select]
// table, assigns folds (or a validation split) and scores every candidate
// on them; fills the report's selection fields and run->report.chosen.
Status SelectCandidate(FitRun* run);

// Appends the `select` entry (every candidate's scores, one row-set blob per
// fold) when candidates were compared, and adds it to run->parents.
Status RecordSelection(FitRun* run, const FitBlobs& blobs);

// --- blend_fit.cc ---

// Fits the blend that run->spec describes (after OpenFit()), appends its
// `fit` entry and commits. Errors as FitModel documents for blends.
Status FitBlend(FitRun* run);

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_WORKFLOW_FIT_STEPS_H_
