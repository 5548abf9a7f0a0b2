// The `export` command as named steps: open the ledger and the registered
// source, assign each dev row its fold, write every dev row to the main file
// and its fold's file in one pass, record one entry, and only then move the
// files into place.
#include "harness/workflow/export.h"

#include <algorithm>
#include <memory>

#include "harness/data/csv.h"
#include "harness/data/source_scan.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "harness/sampling/folds.h"
#include "storage/ledger.h"
#include "storage/row_set.h"
#include "storage/staged_file.h"

namespace unseen {

namespace {

// Everything one `export` call knows, step by step.
struct ExportRun {
  const ExportRequest* req = nullptr;
  std::unique_ptr<Ledger> ledger;
  LedgerState st;
  std::vector<uint32_t> dev_rows;  // in row order
  std::unique_ptr<CsvFile> csv;    // the source file
  std::vector<int> fold_of;        // the fold of each dev row, with --folds
  bool add_row = false;            // the source has no id column: add kRowColumn
  std::unique_ptr<StagedFile> all;
  std::vector<std::unique_ptr<StagedFile>> fold_files;
  std::vector<std::vector<uint32_t>> fold_rows;  // the source rows written to each fold
  ExportReport report;
};

std::string FoldPath(const ExportRequest& req, int k) {
  return req.out_dir + "/fold_" + std::to_string(k + 1) + ".csv";
}

// Checks the options, opens the ledger in the command's transaction, and
// opens the data after checking it is the registered source.
Result<std::unique_ptr<ExportRun>> OpenExport(const ExportRequest& req) {
  if (req.folds == 1 || req.folds < 0)
    return Status::InvalidArgument("--folds: expected 2 or more");
  if (req.folds > 0 && req.out_dir.empty())
    return Status::InvalidArgument("--out-dir: required with --folds");
  auto run = std::make_unique<ExportRun>();
  run->req = &req;
  UNSEEN_ASSIGN_OR_RETURN(SealedLedger opened, OpenSealedLedger(req.ledger_path));
  run->ledger = std::move(opened.ledger);
  run->st = std::move(opened.state);
  const SourceInfo& src = run->st.source;
  std::string data = req.data_path.empty() ? run->st.source_abs_path : req.data_path;
  UNSEEN_ASSIGN_OR_RETURN(FileDigest fd, Sha256File(data));
  if (fd.sha256 != src.file_sha256) {
    return Status::InvalidArgument(data +
                                   ": the file's SHA-256 differs from the registered source's");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string dev_bytes, run->ledger->GetBlob(run->st.seal->dev_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet dev, RowSet::Deserialize(dev_bytes));
  run->dev_rows = dev.ToVector();
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(run->csv, CsvFile::Open(data, options));
  return run;
}

// With --folds, the fold of each dev row (in row order), stratified by the
// target and kept whole by the group column.
Status AssignExportFolds(ExportRun* run) {
  const ExportRequest& req = *run->req;
  if (req.folds <= 0) return Status::OK();
  const SourceInfo& src = run->st.source;
  std::vector<std::string> labels_text, groups;
  auto target = *src.ColumnOf(ColumnRole::kTarget);
  auto group = src.ColumnOf(ColumnRole::kGroup);
  size_t next = 0;
  UNSEEN_RETURN_IF_ERROR(run->csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (next >= run->dev_rows.size() || run->dev_rows[next] != r.index) return Status::OK();
    ++next;
    labels_text.push_back(CanonicalLabel((*r.fields)[target]));
    if (group) groups.emplace_back((*r.fields)[*group]);
    return Status::OK();
  }));
  std::vector<int> labels;
  if (src.task == TaskKind::kClassification) {
    std::vector<std::string> classes = ClassLabels(src);
    for (const std::string& l : labels_text) {
      labels.push_back(
          static_cast<int>(std::lower_bound(classes.begin(), classes.end(), l) - classes.begin()));
    }
  }
  UNSEEN_ASSIGN_OR_RETURN(run->fold_of,
                          AssignFolds(run->dev_rows.size(), req.folds, req.seed, labels, groups));
  return Status::OK();
}

// The main file and each fold's file, staged beside their destinations,
// each starting with the header (and kRowColumn when the source has no id).
Status OpenOutputs(ExportRun* run) {
  const ExportRequest& req = *run->req;
  const SourceInfo& src = run->st.source;
  run->add_row = !src.ColumnOf(ColumnRole::kId).has_value();
  std::string header =
      (run->add_row ? std::string(kRowColumn) + std::string(1, src.delimiter) : "") +
      std::string(run->csv->header_raw()) + "\n";
  run->all = std::make_unique<StagedFile>(req.out_path, "--out");
  UNSEEN_RETURN_IF_ERROR(run->all->Open());
  UNSEEN_RETURN_IF_ERROR(run->all->Write(header));
  run->fold_rows.resize(static_cast<size_t>(req.folds));
  for (int k = 0; k < req.folds; ++k) {
    run->fold_files.push_back(std::make_unique<StagedFile>(FoldPath(req, k), "--out-dir"));
    UNSEEN_RETURN_IF_ERROR(run->fold_files.back()->Open());
    UNSEEN_RETURN_IF_ERROR(run->fold_files.back()->Write(header));
  }
  return Status::OK();
}

// One pass: every dev row to the main file and to its fold's file.
Status WriteRows(ExportRun* run) {
  const char delimiter = run->st.source.delimiter;
  size_t next = 0;
  std::string line;
  return run->csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (next >= run->dev_rows.size() || run->dev_rows[next] != r.index) return Status::OK();
    line = run->add_row ? std::to_string(r.index) + std::string(1, delimiter) : std::string();
    line.append(r.raw.data(), r.raw.size());
    line.push_back('\n');
    UNSEEN_RETURN_IF_ERROR(run->all->Write(line));
    if (run->req->folds > 0) {
      auto k = static_cast<size_t>(run->fold_of[next]);
      run->fold_rows[k].push_back(static_cast<uint32_t>(r.index));
      UNSEEN_RETURN_IF_ERROR(run->fold_files[k]->Write(line));
    }
    ++next;
    return Status::OK();
  });
}

// Closes each fold's file and stores its row set as a blob.
Status CloseFolds(ExportRun* run, ExportBody* body, std::vector<BlobRef>* blobs) {
  const ExportRequest& req = *run->req;
  for (int k = 0; k < req.folds; ++k) {
    const std::vector<uint32_t>& rows = run->fold_rows[static_cast<size_t>(k)];
    ExportedFile f{FoldPath(req, k), {}, rows.size(), {}};
    UNSEEN_RETURN_IF_ERROR(run->fold_files[static_cast<size_t>(k)]->Close(&f.sha256));
    UNSEEN_ASSIGN_OR_RETURN(BlobRef ref,
                            run->ledger->PutBlob("row-set", RowSet::FromSorted(rows).Serialize()));
    blobs->push_back(ref);
    f.row_set = ref.digest;
    body->folds.push_back({f.path, f.sha256, f.rows, f.row_set});
    run->report.folds.push_back(f);
  }
  return Status::OK();
}

// Closes the files and appends the `export` entry, then the commit.
Status RecordExport(ExportRun* run) {
  const ExportRequest& req = *run->req;
  ExportReport& report = run->report;
  report.all = {req.out_path, {}, run->dev_rows.size(), run->st.seal->dev_set};
  UNSEEN_RETURN_IF_ERROR(run->all->Close(&report.all.sha256));
  std::vector<BlobRef> blobs;
  ExportBody body;
  UNSEEN_RETURN_IF_ERROR(CloseFolds(run, &body, &blobs));
  body.out = {req.out_path, report.all.sha256};
  body.rows = report.all.rows;
  body.row_set = run->st.seal->dev_set;
  if (run->add_row) body.row_column = kRowColumn;
  body.seed = req.seed;
  body.parents = {run->st.seal->entry_seq};
  body.summary = "exported " + std::to_string(report.all.rows) + " dev rows" +
                 (req.folds > 0 ? " in " + std::to_string(req.folds) + " folds" : std::string());
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(run->ledger.get(), req.actor, body, blobs));
  UNSEEN_RETURN_IF_ERROR(run->ledger->Commit());
  report.head = e.hash;
  return Status::OK();
}

}  // namespace

Result<ExportReport> ExportRows(const ExportRequest& req) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<ExportRun> run, OpenExport(req));
  // Each dev row's fold, from the target and group columns.
  UNSEEN_RETURN_IF_ERROR(AssignExportFolds(run.get()));
  // One pass over the source writes every file, still under temporary names.
  UNSEEN_RETURN_IF_ERROR(OpenOutputs(run.get()));
  UNSEEN_RETURN_IF_ERROR(WriteRows(run.get()));
  // The entry; the files move into place only after the commit.
  UNSEEN_RETURN_IF_ERROR(RecordExport(run.get()));
  UNSEEN_RETURN_IF_ERROR(run->all->MoveIntoPlace());
  for (auto& f : run->fold_files) UNSEEN_RETURN_IF_ERROR(f->MoveIntoPlace());
  return std::move(run->report);
}

}  // namespace unseen
