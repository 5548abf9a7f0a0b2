#include "harness/workflow/export.h"

#include "harness/data/csv.h"
#include "harness/data/source_scan.h"
#include "harness/sampling/folds.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "storage/staged_file.h"
#include "storage/ledger.h"
#include "storage/row_set.h"

namespace unseen {

Result<ExportReport> ExportRows(const ExportRequest& req) {
  if (req.folds == 1 || req.folds < 0) return Status::InvalidArgument("--folds: expected 2 or more");
  if (req.folds > 0 && req.out_dir.empty()) return Status::InvalidArgument("--out-dir: required with --folds");
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  if (!st.seal) return Status::FailedPrecondition(req.ledger_path + ": seal the holdout first (`unseen seal`)");
  const SourceInfo& src = st.source;
  std::string data = req.data_path.empty() ? st.source_abs_path : req.data_path;
  UNSEEN_ASSIGN_OR_RETURN(FileDigest fd, Sha256File(data));
  if (fd.sha256 != src.file_sha256) {
    return Status::InvalidArgument(data + ": the file's SHA-256 differs from the registered source's");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string dev_bytes, ledger->GetBlob(st.seal->dev_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet dev, RowSet::Deserialize(dev_bytes));
  std::vector<uint32_t> dev_rows = dev.ToVector();

  // Fold of each dev row (in row order), from the target and group columns.
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv, CsvFile::Open(data, options));
  std::vector<int> fold_of;
  if (req.folds > 0) {
    std::vector<std::string> labels_text, groups;
    auto target = *src.ColumnOf(ColumnRole::kTarget);
    auto group = src.ColumnOf(ColumnRole::kGroup);
    size_t next = 0;
    UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
      if (next >= dev_rows.size() || dev_rows[next] != r.index) return Status::OK();
      ++next;
      labels_text.push_back(CanonicalLabel((*r.fields)[target]));
      if (group) groups.emplace_back((*r.fields)[*group]);
      return Status::OK();
    }));
    std::vector<int> labels;
    if (src.task == TaskKind::kClassification) {
      std::vector<std::string> classes = ClassLabels(src);
      for (const std::string& l : labels_text) {
        labels.push_back(static_cast<int>(std::lower_bound(classes.begin(), classes.end(), l) - classes.begin()));
      }
    }
    UNSEEN_ASSIGN_OR_RETURN(fold_of, AssignFolds(dev_rows.size(), req.folds, req.seed, labels, groups));
  }

  // One pass: every dev row to the main file and to its fold's file.
  const bool add_row = !src.ColumnOf(ColumnRole::kId).has_value();
  std::string header = (add_row ? std::string(kRowColumn) + std::string(1, src.delimiter) : "") +
                       std::string(csv->header_raw()) + "\n";
  StagedFile all(req.out_path, "--out");
  UNSEEN_RETURN_IF_ERROR(all.Open());
  UNSEEN_RETURN_IF_ERROR(all.Write(header));
  std::vector<std::unique_ptr<StagedFile>> fold_files;
  std::vector<std::vector<uint32_t>> fold_rows(static_cast<size_t>(req.folds));
  for (int k = 0; k < req.folds; ++k) {
    fold_files.push_back(std::make_unique<StagedFile>(req.out_dir + "/fold_" + std::to_string(k + 1) + ".csv", "--out-dir"));
    UNSEEN_RETURN_IF_ERROR(fold_files.back()->Open());
    UNSEEN_RETURN_IF_ERROR(fold_files.back()->Write(header));
  }
  size_t next = 0;
  std::string line;
  UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (next >= dev_rows.size() || dev_rows[next] != r.index) return Status::OK();
    line = add_row ? std::to_string(r.index) + std::string(1, src.delimiter) : std::string();
    line.append(r.raw.data(), r.raw.size());
    line.push_back('\n');
    UNSEEN_RETURN_IF_ERROR(all.Write(line));
    if (req.folds > 0) {
      auto k = static_cast<size_t>(fold_of[next]);
      fold_rows[k].push_back(static_cast<uint32_t>(r.index));
      UNSEEN_RETURN_IF_ERROR(fold_files[k]->Write(line));
    }
    ++next;
    return Status::OK();
  }));

  ExportReport report;
  report.all = {req.out_path, {}, dev_rows.size(), st.seal->dev_set};
  UNSEEN_RETURN_IF_ERROR(all.Close(&report.all.sha256));
  std::vector<BlobRef> blobs;
  ExportBody body;
  for (int k = 0; k < req.folds; ++k) {
    ExportedFile f{req.out_dir + "/fold_" + std::to_string(k + 1) + ".csv", {}, fold_rows[static_cast<size_t>(k)].size(), {}};
    UNSEEN_RETURN_IF_ERROR(fold_files[static_cast<size_t>(k)]->Close(&f.sha256));
    UNSEEN_ASSIGN_OR_RETURN(BlobRef ref, ledger->PutBlob("row-set", RowSet::FromSorted(fold_rows[static_cast<size_t>(k)]).Serialize()));
    blobs.push_back(ref);
    f.row_set = ref.digest;
    body.folds.push_back({f.path, f.sha256, f.rows, f.row_set});
    report.folds.push_back(f);
  }
  body.out = {req.out_path, report.all.sha256};
  body.rows = report.all.rows;
  body.row_set = st.seal->dev_set;
  if (add_row) body.row_column = kRowColumn;
  body.seed = req.seed;
  body.parents = {st.seal->entry_seq};
  body.summary = "exported " + std::to_string(report.all.rows) + " dev rows" +
                 (req.folds > 0 ? " in " + std::to_string(req.folds) + " folds" : std::string());
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger.get(), req.actor, body, blobs));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  UNSEEN_RETURN_IF_ERROR(all.MoveIntoPlace());
  for (auto& f : fold_files) UNSEEN_RETURN_IF_ERROR(f->MoveIntoPlace());
  report.head = e.hash;
  return report;
}

}  // namespace unseen
