// Reading any entry: the stamp the ledger adds, and a one-line summary.
#include <fmt/core.h>

#include "harness/ledger/entries.h"
#include "harness/ledger/entry_reader.h"

namespace unseen {

namespace {

// The kinds that carry their own "summary" field.
template <typename Body>
Result<std::string> StoredSummary(const Entry& entry) {
  UNSEEN_ASSIGN_OR_RETURN(Body body, DecodeEntry<Body>(entry));
  return body.summary;
}

// A kind this version does not write (a newer tool's, or "note"): its
// summary text if it has one. Only the summary is read, as before.
Result<std::string> UnknownKindSummary(const Entry& entry) {
  internal::BodyReader r(entry, entry.kind);
  const std::optional<nlohmann::json> summary = r.Nullable<nlohmann::json>("summary");
  UNSEEN_RETURN_IF_ERROR(r.Finish());
  return summary && summary->is_string() ? summary->get<std::string>() : std::string();
}

}  // namespace

Result<EntryStamp> DecodeStamp(const Entry& entry) {
  internal::BodyReader r(entry, entry.kind);
  EntryStamp s;
  s.time = r.Required<std::string>("time");
  s.actor = r.Required<std::string>("actor");
  s.tool = r.Required<std::string>("tool");
  UNSEEN_RETURN_IF_ERROR(r.Finish());
  return s;
}

Result<std::string> SummarizeEntry(const Entry& entry) {
  const std::string_view kind = entry.kind;
  if (kind == kKindLedger) {
    UNSEEN_ASSIGN_OR_RETURN(GenesisBody b, DecodeEntry<GenesisBody>(entry));
    return "ledger " + b.ledger_id;
  }
  if (kind == kKindSource) {
    UNSEEN_ASSIGN_OR_RETURN(SourceBody b, DecodeEntry<SourceBody>(entry));
    return fmt::format("{} ({} rows, {} columns, {})", b.source.path, b.source.rows,
                       b.source.columns.size(), TaskKindName(b.source.task));
  }
  if (kind == kKindSeal) {
    UNSEEN_ASSIGN_OR_RETURN(SealBody b, DecodeEntry<SealBody>(entry));
    return fmt::format("{} split, seed {}: holdout {} rows, dev {} rows", b.strategy, b.seed,
                       b.holdout.rows, b.dev.rows);
  }
  if (kind == kKindPartition) return StoredSummary<PartitionBody>(entry);
  if (kind == kKindExport) return StoredSummary<ExportBody>(entry);
  if (kind == kKindSelect) return StoredSummary<SelectBody>(entry);
  if (kind == kKindFit) return StoredSummary<FitBody>(entry);
  if (kind == kKindApply) return StoredSummary<ApplyBody>(entry);
  if (kind == kKindScore) return StoredSummary<ScoreBody>(entry);
  if (kind == kKindEval) return StoredSummary<EvalBody>(entry);
  if (kind == kKindBudget) return StoredSummary<BudgetBody>(entry);
  if (kind == kKindRefusal) return StoredSummary<RefusalBody>(entry);
  if (kind == kKindExposure) return StoredSummary<ExposureBody>(entry);
  return UnknownKindSummary(entry);
}

}  // namespace unseen
