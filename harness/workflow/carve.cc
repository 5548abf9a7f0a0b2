#include "harness/workflow/carve.h"

#include <algorithm>
#include <cctype>
#include <nlohmann/json.hpp>
#include <optional>
#include <unordered_map>
#include <utility>

#include "harness/data/csv.h"
#include "harness/data/source_scan.h"
#include "harness/sampling/split.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"

namespace unseen {

using json = nlohmann::json;

namespace {

Status CheckPartitionName(const std::string& name) {
  bool ok = !name.empty() && name.size() <= 64 && std::isalnum(static_cast<unsigned char>(name[0]));
  for (char ch : name) {
    ok =
        ok && (std::isalnum(static_cast<unsigned char>(ch)) || ch == '.' || ch == '_' || ch == '-');
  }
  if (!ok) {
    return Status::InvalidArgument("--name: '" + name +
                                   "' is not a partition name; expected 1-64 of A-Z a-z 0-9 . _ -, "
                                   "starting with a letter or digit");
  }
  if (name == "dev" || name == "holdout") {
    return Status::InvalidArgument("--name: '" + name +
                                   "' names a partition made by seal; expected another name");
  }
  return Status::OK();
}

Result<NamedPartition> PartitionFromEntry(const Ledger& ledger, const Decoded<PartitionBody>& e) {
  NamedPartition p;
  p.name = e.body.name;
  p.entry_seq = e.entry.seq;
  p.strategy = e.body.strategy;
  p.fraction = e.body.fraction;
  p.seed = e.body.seed;
  p.row_set = e.body.row_set;
  UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(p.row_set));
  UNSEEN_ASSIGN_OR_RETURN(p.rows, RowSet::Deserialize(bytes));
  return p;
}

// The split code's note speaks of the holdout; here the carved side is the partition.
std::string PartitionNote(std::string note) {
  for (const auto& [from, to] : {std::pair<std::string, std::string>{
                                     "the holdout or dev", "the partition or the rest of dev"},
                                 {"holdout has", "the partition has"}}) {
    size_t at = note.find(from);
    if (at != std::string::npos) note.replace(at, from.size(), to);
  }
  return note;
}

// The split request over the dev rows (index i = the i-th dev row): group
// indexes when the source has groups, else class indexes when stratified.
Result<SplitRequest> DevSplitRequest(const CarveRequest& req, const LedgerState& st,
                                     const std::vector<uint32_t>& dev_rows,
                                     std::optional<PartitionBody::LabelsFrom>* labels_from) {
  const SourceInfo& src = st.source;
  SplitRequest split;
  split.fraction = req.fraction;
  split.seed = req.seed;
  split.rows = dev_rows.size();
  const auto group = src.ColumnOf(ColumnRole::kGroup);
  split.strategy = group ? SplitStrategy::kGroup
                         : (req.stratified ? SplitStrategy::kStratified : SplitStrategy::kRandom);
  if (split.strategy == SplitStrategy::kRandom) return split;

  std::string data = req.data_path.empty() ? st.source_abs_path : req.data_path;
  UNSEEN_ASSIGN_OR_RETURN(FileDigest fd, Sha256File(data));
  if (fd.sha256 != src.file_sha256) {
    return Status::InvalidArgument(data +
                                   ": the file's SHA-256 differs from the registered "
                                   "source's; expected the file given to init (--data)");
  }
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv, CsvFile::Open(data, options));
  const size_t column = group ? *group : *src.ColumnOf(ColumnRole::kTarget);
  std::vector<std::string> classes = ClassLabels(src);
  std::unordered_map<std::string, uint32_t> group_index;
  size_t next = 0;
  UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (next >= dev_rows.size() || dev_rows[next] != r.index) return Status::OK();
    ++next;
    std::string_view cell = (*r.fields)[column];
    if (group) {
      auto it = group_index.emplace(std::string(cell), static_cast<uint32_t>(group_index.size()));
      split.labels.push_back(it.first->second);
    } else {
      auto it = std::lower_bound(classes.begin(), classes.end(), CanonicalLabel(cell));
      split.labels.push_back(static_cast<uint32_t>(it - classes.begin()));
    }
    return Status::OK();
  }));
  if (next != dev_rows.size()) {
    return Status::InvalidArgument(data + ": has fewer rows than the registered source");
  }
  *labels_from = PartitionBody::LabelsFrom{data, fd.sha256, src.columns[column].name};
  return split;
}

}  // namespace

Result<std::vector<NamedPartition>> ListPartitions(const Ledger& ledger) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<PartitionBody>> entries,
                          ReadEntries<PartitionBody>(ledger));
  std::vector<NamedPartition> out;
  for (const Decoded<PartitionBody>& e : entries) {
    UNSEEN_ASSIGN_OR_RETURN(NamedPartition p, PartitionFromEntry(ledger, e));
    out.push_back(std::move(p));
  }
  return out;
}

Result<NamedPartition> FindPartition(const Ledger& ledger, const std::string& name) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<NamedPartition> all, ListPartitions(ledger));
  std::string known;
  for (NamedPartition& p : all) {
    if (p.name == name) return std::move(p);
    known += (known.empty() ? "" : ", ") + p.name;
  }
  return Status::NotFound("no partition named '" + name + "' (partitions: " +
                          (known.empty() ? std::string("none carved yet") : known) + ")");
}

Result<CarveReport> CarvePartition(const CarveRequest& req) {
  UNSEEN_RETURN_IF_ERROR(CheckPartitionName(req.name));
  if (!(req.fraction > 0 && req.fraction < 1)) {
    return Status::InvalidArgument("--fraction: " + json(req.fraction).dump() +
                                   " is not a share of the dev rows; expected a number strictly "
                                   "between 0 and 1");
  }
  UNSEEN_ASSIGN_OR_RETURN(SealedLedger opened, OpenSealedLedger(req.ledger_path));
  std::unique_ptr<Ledger> ledger = std::move(opened.ledger);
  LedgerState st = std::move(opened.state);
  if (req.stratified && st.source.task != TaskKind::kClassification) {
    return Status::InvalidArgument(
        "--stratified: the source's task is regression; stratifying "
        "needs classes");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::vector<NamedPartition> existing, ListPartitions(*ledger));
  for (const NamedPartition& p : existing) {
    if (p.name == req.name) {
      return Status::InvalidArgument("--name: a partition named '" + req.name +
                                     "' already exists (entry " + std::to_string(p.entry_seq) +
                                     "); partitions are never replaced");
    }
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string dev_bytes, ledger->GetBlob(st.seal->dev_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet dev, RowSet::Deserialize(dev_bytes));
  std::vector<uint32_t> dev_rows = dev.ToVector();
  PartitionBody body;
  UNSEEN_ASSIGN_OR_RETURN(SplitRequest split,
                          DevSplitRequest(req, st, dev_rows, &body.labels_from));
  Result<SplitResult> carved = Split(split);
  if (!carved.ok()) {
    return Status::InvalidArgument("carve: " + carved.status().message());
  }
  std::vector<uint32_t> rows;
  for (uint32_t i : carved->holdout) rows.push_back(dev_rows[i]);

  CarveReport report;
  NamedPartition& p = report.partition;
  p.name = req.name;
  p.strategy = SplitStrategyName(split.strategy);
  p.fraction = req.fraction;
  p.seed = req.seed;
  p.rows = RowSet::FromSorted(rows);
  report.dev_rows = dev_rows.size();
  report.requested = carved->requested_holdout;
  report.note = PartitionNote(carved->note);
  UNSEEN_ASSIGN_OR_RETURN(BlobRef ref, ledger->PutBlob("row-set", p.rows.Serialize()));
  p.row_set = ref.digest;
  body.name = p.name;
  body.strategy = p.strategy;
  body.fraction = p.fraction;
  body.seed = p.seed;
  body.rows = rows.size();
  body.dev_rows = report.dev_rows;
  body.requested = report.requested;
  body.note = report.note;
  body.row_set = ref.digest;
  body.parents = {st.seal->entry_seq};
  body.summary = "carved partition " + p.name + " (" + std::to_string(rows.size()) + " of " +
                 std::to_string(report.dev_rows) + " dev rows, " + p.strategy + ")";
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger.get(), req.actor, body, {ref}));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  p.entry_seq = e.seq;
  report.head = e.hash;
  return report;
}

}  // namespace unseen
