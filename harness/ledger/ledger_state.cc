#include "harness/ledger/ledger_state.h"

namespace unseen {

namespace {

SealInfo SealInfoOf(const SealBody& b, int64_t seq) {
  SealInfo s;
  s.entry_seq = seq;
  s.strategy = b.strategy;
  s.fraction = b.fraction;
  s.seed = b.seed;
  s.holdout_rows = b.holdout.rows;
  s.dev_rows = b.dev.rows;
  s.holdout_set = b.holdout.row_set;
  s.dev_set = b.dev.row_set;
  s.sealed_rows = b.holdout.sealed_rows;
  s.sealed_digests = b.holdout.sealed_digests;
  s.sealed_summary = b.holdout.sealed_summary;
  s.dev_row_digests = b.dev.row_digests;
  s.dev_content_digests = b.dev.content_digests;
  s.dev_summary = b.dev.summary;
  s.holdout_encoding = b.holdout.encoding;
  s.key = b.key;
  s.budget_queries = b.budget_queries;
  s.sealed_budget_queries = b.budget_queries;
  s.budget_half_width = b.budget_half_width;
  s.budget_delta = b.budget_delta;
  s.dev_out_path = b.dev.file_path;
  s.dev_out_sha256 = b.dev.file_sha256;
  s.dev_out_size = b.dev.file_size;
  return s;
}

// Folds one entry after the genesis into the state. Only the first source
// entry counts, and a budget raise only after the seal.
Status Apply(const Entry& e, bool* have_source, LedgerState* st) {
  if (e.kind == kKindSource && !*have_source) {
    UNSEEN_ASSIGN_OR_RETURN(SourceBody b, DecodeEntry<SourceBody>(e));
    st->source = std::move(b.source);
    st->source_abs_path = b.absolute_path ? *b.absolute_path : st->source.path;
    st->source_seq = e.seq;
    *have_source = true;
  } else if (e.kind == kKindSeal) {
    UNSEEN_ASSIGN_OR_RETURN(SealBody b, DecodeEntry<SealBody>(e));
    st->seal = SealInfoOf(b, e.seq);
    // The published figures are the development rows'.
    const RowsSummary& dev = st->seal->dev_summary;
    if (dev.missing.size() != st->source.columns.size()) {
      return Status::Corruption("entry " + std::to_string(e.seq) +
                                " (seal): 'dev.summary.missing' should have one count per "
                                "column of the source");
    }
    for (size_t c = 0; c < dev.missing.size(); ++c) st->source.columns[c].missing = dev.missing[c];
    st->source.target = dev.target;
  } else if (e.kind == kKindBudget && st->seal) {
    UNSEEN_ASSIGN_OR_RETURN(BudgetBody b, DecodeEntry<BudgetBody>(e));
    st->seal->budget_queries += b.add_queries;
    ++st->budget_raises;
  } else if (e.kind == kKindEval) {
    UNSEEN_ASSIGN_OR_RETURN(EvalBody b, DecodeEntry<EvalBody>(e));
    st->holdout_queries += b.queries_spent;
  }
  return Status::OK();
}

}  // namespace

std::string SealedAad(const std::string& ledger_id, const Digest256& holdout_set) {
  return "unseen sealed rows v1|" + ledger_id + "|" + ToHex(holdout_set);
}

Result<LedgerState> ReadLedgerState(const Ledger& ledger) {
  LedgerState st;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> entries, ledger.Entries());
  if (entries.empty() || entries[0].kind != kKindLedger) {
    return Status::Corruption(ledger.path() + ": the first entry is not the genesis entry");
  }
  st.entries = static_cast<int64_t>(entries.size());
  st.head = entries.back().hash;
  UNSEEN_ASSIGN_OR_RETURN(GenesisBody genesis, DecodeEntry<GenesisBody>(entries[0]));
  st.ledger_id = genesis.ledger_id;
  bool have_source = false;
  for (const Entry& e : entries) UNSEEN_RETURN_IF_ERROR(Apply(e, &have_source, &st));
  if (!have_source) return Status::Corruption(ledger.path() + ": the ledger has no source entry");
  return st;
}

Result<SealedLedger> OpenSealedLedger(const std::string& path) {
  SealedLedger out;
  UNSEEN_ASSIGN_OR_RETURN(out.ledger, Ledger::Open(path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(out.ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(out.state, ReadLedgerState(*out.ledger));
  if (!out.state.seal) {
    return Status::FailedPrecondition(path + ": seal the holdout first (`unseen seal`)");
  }
  return out;
}

}  // namespace unseen
