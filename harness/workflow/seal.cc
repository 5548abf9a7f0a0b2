#include "harness/workflow/seal.h"

#include <stdio.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cstdlib>
#include <cstring>
#include <future>
#include <memory>
#include <nlohmann/json.hpp>
#include <unordered_map>
#include <unordered_set>

#include "harness/data/csv.h"
#include "harness/data/row_digest.h"
#include "harness/data/source_scan.h"
#include "harness/workflow/staged_file.h"
#include "storage/row_set.h"
#include "storage/sealed_blob.h"

namespace unseen {
namespace {

using json = nlohmann::json;

constexpr size_t kShownDuplicateLines = 5;

struct DigestHash {
  size_t operator()(const RowDigest& d) const {
    size_t h;
    std::memcpy(&h, d.data(), sizeof h);
    return h;
  }
};

// Pass 1: the per-row keys a strategy (or a violation count) needs.
Status ReadSplitKeys(const CsvFile& csv, const SourceInfo& src, SplitRequest* split,
                     std::vector<uint32_t>* group_of_row, SplitRequest* time_keys) {
  auto target = src.ColumnOf(ColumnRole::kTarget);
  auto group = src.ColumnOf(ColumnRole::kGroup);
  auto time = src.ColumnOf(ColumnRole::kTime);
  bool want_class = split->strategy == SplitStrategy::kStratified;
  bool time_numeric = time && src.columns[*time].type == ColumnType::kNumeric;
  std::unordered_map<std::string, uint32_t> classes, groups;
  time_keys->rows = src.rows;
  return csv.ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    if (want_class) {
      auto [it, _] = classes.emplace(CanonicalLabel(f[*target]), classes.size());
      split->labels.push_back(it->second);
    }
    if (group) {
      auto [it, _] = groups.emplace(std::string(f[*group]), groups.size());
      group_of_row->push_back(it->second);
    }
    if (time) {
      double v = 0;
      if (time_numeric && ParseNumber(f[*time], &v)) {
        time_keys->time_numeric.push_back(v);
      } else {
        time_keys->time_text.emplace_back(f[*time]);
      }
    }
    return Status::OK();
  });
}

// Content digests that fall on both sides. Returns the holdout rows that
// have an exact duplicate in dev, and counts the dev rows that have one.
std::vector<uint32_t> CrossDuplicates(std::string_view digests, const SplitResult& split,
                                      uint64_t* dev_rows) {
  auto at = [&](uint32_t row) {
    RowDigest d;
    std::memcpy(d.data(), digests.data() + size_t{row} * d.size(), d.size());
    return d;
  };
  std::unordered_set<RowDigest, DigestHash> holdout;
  holdout.reserve(split.holdout.size());
  for (uint32_t r : split.holdout) holdout.insert(at(r));
  std::unordered_set<RowDigest, DigestHash> in_both;
  *dev_rows = 0;
  for (uint32_t r : split.dev) {
    RowDigest d = at(r);
    if (holdout.count(d)) {
      ++*dev_rows;
      in_both.insert(d);
    }
  }
  std::vector<uint32_t> rows;
  if (in_both.empty()) return rows;
  for (uint32_t r : split.holdout) {
    if (in_both.count(at(r))) rows.push_back(r);
  }
  return rows;
}

// Moves `rows` (ascending, all in the holdout) to dev.
void MoveToDev(const std::vector<uint32_t>& rows, SplitResult* split) {
  std::vector<uint32_t> holdout, dev;
  std::set_difference(split->holdout.begin(), split->holdout.end(), rows.begin(), rows.end(),
                      std::back_inserter(holdout));
  std::merge(split->dev.begin(), split->dev.end(), rows.begin(), rows.end(),
             std::back_inserter(dev));
  split->holdout = std::move(holdout);
  split->dev = std::move(dev);
}

bool SameFile(const std::string& a, const std::string& b) {
  struct stat sa, sb;
  return ::stat(a.c_str(), &sa) == 0 && ::stat(b.c_str(), &sb) == 0 && sa.st_dev == sb.st_dev &&
         sa.st_ino == sb.st_ino;
}

struct Pass2Output {
  std::string sealed;
  std::string feature_digests;  // 16 bytes per holdout row, in row order
  std::vector<uint64_t> duplicate_lines;
};

// Pass 2: dev rows to the dev file, holdout rows into the sealed blob.
Status WriteRows(const CsvFile& csv, const SourceInfo& src, const SplitResult& split,
                 const std::vector<uint32_t>& flagged, const Key& key, const std::string& aad,
                 StagedFile* dev, Pass2Output* out, const std::function<void(double)>& progress) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<SealedWriter> sealer, SealedWriter::Create(key, aad));
  std::string header = std::string(csv.header_raw()) + "\n";
  UNSEEN_RETURN_IF_ERROR(dev->Write(header));
  UNSEEN_RETURN_IF_ERROR(sealer->Append(header));
  std::vector<size_t> skip;
  if (auto id = src.ColumnOf(ColumnRole::kId)) skip.push_back(*id);
  skip.push_back(*src.ColumnOf(ColumnRole::kTarget));
  RowDigester features(skip);
  size_t next_holdout = 0, next_flag = 0;
  std::string line;
  uint64_t next_progress = 0;
  Status s = csv.ForEachRecord([&](const CsvRecord& r) -> Status {
    line.assign(r.raw.data(), r.raw.size());
    line.push_back('\n');
    bool in_holdout = next_holdout < split.holdout.size() && split.holdout[next_holdout] == r.index;
    if (!in_holdout) return dev->Write(line);
    ++next_holdout;
    if (next_flag < flagged.size() && flagged[next_flag] == r.index) {
      if (out->duplicate_lines.size() < kShownDuplicateLines) out->duplicate_lines.push_back(r.line);
      ++next_flag;
    }
    RowDigest d = features.Digest(*r.fields);
    out->feature_digests.append(reinterpret_cast<const char*>(d.data()), d.size());
    if (progress && r.offset >= next_progress) {
      progress(static_cast<double>(r.offset) / static_cast<double>(csv.size()));
      next_progress = r.offset + (64u << 20);
    }
    return sealer->Append(line);
  });
  UNSEEN_RETURN_IF_ERROR(s);
  UNSEEN_ASSIGN_OR_RETURN(out->sealed, sealer->Finish());
  return Status::OK();
}

json KeyJson(const KeyInfo& k) {
  json j = {{"source", k.source}, {"key_check", k.key_check_hex}};
  if (k.source == "passphrase") {
    j["salt"] = k.salt_hex;
    j["scrypt"] = {{"N", k.scrypt.n}, {"r", k.scrypt.r}, {"p", k.scrypt.p}};
  }
  return j;
}

}  // namespace

Result<SealReport> SealHoldout(const SealRequest& req) {
  if (!(req.fraction > 0 && req.fraction < 1)) {
    return Status::InvalidArgument("--fraction: expected a number strictly between 0 and 1");
  }
  if (req.dev_out.empty()) return Status::InvalidArgument("--dev-out: a path is required");
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState state, ReadLedgerState(*ledger));
  if (state.seal) {
    return Status::FailedPrecondition(req.ledger_path + ": already sealed at entry " +
                                      std::to_string(state.seal->entry_seq) +
                                      "; a ledger has one holdout and it is sealed once");
  }
  const SourceInfo& src = state.source;
  std::string data = req.data_path.empty() ? state.source_abs_path : req.data_path;
  if (SameFile(data, req.dev_out)) {
    return Status::InvalidArgument("--dev-out: " + req.dev_out + " is the data file itself");
  }
  if (src.rows > kMaxSplitRows) return Status::InvalidArgument("source has too many rows to split");

  // The file must be the one registered: its digest runs beside the passes.
  auto file_digest = std::async(std::launch::async, [&data] { return Sha256File(data); });
  auto check_file = [&]() -> Status {
    auto fd = file_digest.get();
    if (!fd.ok()) return fd.status();
    if (fd->sha256 != src.file_sha256 || fd->size != src.file_size) {
      return Status::InvalidArgument(data + ": the file's SHA-256 is " + ToHex(fd->sha256) +
                                     " but the source registered at init has " +
                                     ToHex(src.file_sha256) + "; expected the same file");
    }
    return Status::OK();
  };
  CsvOptions csv_options;
  csv_options.delimiter = src.delimiter;
  auto csv = CsvFile::Open(data, csv_options);
  if (!csv.ok()) return csv.status();

  SplitRequest split_req;
  split_req.strategy = req.strategy;
  split_req.fraction = req.fraction;
  split_req.seed = req.seed;
  split_req.rows = src.rows;
  std::vector<uint32_t> group_of_row;
  SplitRequest time_keys;
  SealReport report;
  report.has_group = src.ColumnOf(ColumnRole::kGroup).has_value();
  report.has_time = src.ColumnOf(ColumnRole::kTime).has_value();
  if (req.strategy == SplitStrategy::kGroup && !report.has_group) {
    return Status::InvalidArgument("--strategy group: the source has no group column (init --group)");
  }
  if (req.strategy == SplitStrategy::kTime && !report.has_time) {
    return Status::InvalidArgument("--strategy time: the source has no time column (init --time)");
  }
  if (req.strategy == SplitStrategy::kStratified && src.task != TaskKind::kClassification) {
    return Status::InvalidArgument("--strategy stratified: needs a classification target");
  }
  if (req.strategy != SplitStrategy::kRandom || report.has_group || report.has_time) {
    UNSEEN_RETURN_IF_ERROR(ReadSplitKeys(**csv, src, &split_req, &group_of_row, &time_keys));
  }
  if (req.strategy == SplitStrategy::kGroup) split_req.labels = group_of_row;
  if (req.strategy == SplitStrategy::kTime) {
    split_req.time_numeric = time_keys.time_numeric;
    split_req.time_text = time_keys.time_text;
  }
  UNSEEN_ASSIGN_OR_RETURN(SplitResult split, Split(split_req));

  // Exact duplicates across the cut are a leak: report, and optionally drop.
  UNSEEN_ASSIGN_OR_RETURN(std::string content, ledger->GetBlob(state.content_digests));
  if (content.size() != src.rows * sizeof(RowDigest)) {
    return Status::Corruption("the content digest list does not match the source's row count");
  }
  std::vector<uint32_t> flagged = CrossDuplicates(content, split, &report.cross_duplicate_dev_rows);
  content = std::string();
  report.cross_duplicate_holdout_rows = flagged.size();
  std::vector<uint32_t> flagged_before_drop = flagged;
  if (req.drop_cross_duplicates && !flagged.empty()) {
    MoveToDev(flagged, &split);
    report.dropped_cross_duplicates = true;
  }
  if (report.has_group) report.group_violations = CountGroupViolations(group_of_row, split.holdout);
  if (report.has_time) {
    time_keys.strategy = SplitStrategy::kTime;
    report.time_violations = CountTimeViolations(time_keys, split);
  }

  RowSet holdout_set = RowSet::FromSorted(split.holdout);
  RowSet dev_set = RowSet::FromSorted(split.dev);
  UNSEEN_ASSIGN_OR_RETURN(BlobRef holdout_ref, ledger->PutBlob("row-set", holdout_set.Serialize()));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef dev_ref, ledger->PutBlob("row-set", dev_set.Serialize()));

  StagedFile dev(req.dev_out, "--dev-out");
  UNSEEN_RETURN_IF_ERROR(dev.Open());
  Pass2Output out;
  std::string aad = SealedAad(state.ledger_id, holdout_ref.digest);
  UNSEEN_RETURN_IF_ERROR(WriteRows(**csv, src, split, flagged_before_drop, req.key, aad, &dev, &out,
                                   req.progress));
  UNSEEN_RETURN_IF_ERROR(check_file());
  UNSEEN_RETURN_IF_ERROR(dev.Close(&report.dev_out_sha256));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef sealed_ref, ledger->PutBlob("sealed-rows", out.sealed));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef feat_ref, ledger->PutBlob("feature-digests", out.feature_digests));

  KeyInfo key_info = req.key_info;
  key_info.key_check_hex = ToHex(KeyCheck(req.key, state.ledger_id));
  json fields = {
      {"source_entry", state.source_seq},
      {"strategy", SplitStrategyName(req.strategy)},
      {"fraction", req.fraction},
      {"seed", req.seed},
      {"requested_holdout", split.requested_holdout},
      {"split_note", split.note},
      {"holdout", {{"rows", split.holdout.size()}, {"row_set", ToHex(holdout_ref.digest)},
                   {"sealed_rows", ToHex(sealed_ref.digest)}, {"feature_digests", ToHex(feat_ref.digest)},
                   {"cipher", "AES-256-GCM"}, {"compression", "zstd"}}},
      {"dev", {{"rows", split.dev.size()}, {"row_set", ToHex(dev_ref.digest)},
               {"file", {{"path", req.dev_out}, {"sha256", ToHex(report.dev_out_sha256)},
                         {"size", dev.size()}}}}},
      {"key", KeyJson(key_info)},
      {"cross_duplicates", {{"holdout_rows", report.cross_duplicate_holdout_rows},
                            {"dev_rows", report.cross_duplicate_dev_rows},
                            {"moved_to_dev", report.dropped_cross_duplicates}}},
      {"violations", {{"group", report.has_group ? json(report.group_violations) : json(nullptr)},
                      {"time", report.has_time ? json(report.time_violations) : json(nullptr)}}},
      {"budget", req.budget_half_width > 0
                     ? json{{"queries", req.budget_queries},
                            {"half_width", req.budget_half_width},
                            {"delta", req.budget_delta}}
                     : json{{"queries", req.budget_queries}}},
  };
  UNSEEN_ASSIGN_OR_RETURN(Entry entry, ledger->Append("seal", req.actor, fields.dump(),
                                                      {holdout_ref, dev_ref, sealed_ref, feat_ref}));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  UNSEEN_RETURN_IF_ERROR(dev.MoveIntoPlace());

  UNSEEN_ASSIGN_OR_RETURN(LedgerState after, ReadLedgerState(*ledger));
  report.seal = *after.seal;
  report.requested_holdout = split.requested_holdout;
  report.split_note = split.note;
  report.cross_duplicate_lines = out.duplicate_lines;
  report.sealed_bytes = sealed_ref.size;
  report.head = entry.hash;
  return report;
}

}  // namespace unseen
