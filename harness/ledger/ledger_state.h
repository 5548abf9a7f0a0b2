// LedgerState: what the entries of a ledger say about its source and seal,
// read back into plain values. Used by every command after `init`.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_LEDGER_STATE_H_
#define UNSEEN_HARNESS_LEDGER_LEDGER_STATE_H_

#include <memory>
#include <optional>
#include <string>

#include "harness/data/source.h"
#include "harness/ledger/entries.h"
#include "storage/ledger.h"
#include "storage/seal_crypto.h"

namespace unseen {

// The seal entry's fields the commands use (entries.h has the whole body),
// with the budget raised by every later `budget` entry.
struct SealInfo {
  int64_t entry_seq = 0;
  std::string strategy;
  double fraction = 0;
  uint64_t seed = 0;
  uint64_t holdout_rows = 0, dev_rows = 0;
  Digest256 holdout_set{}, dev_set{}, sealed_rows{};
  // Sealed with the key (harness/ledger/sealed_figures.h): the holdout rows' digests and the
  // figures over every source row.
  Digest256 sealed_digests{}, sealed_summary{};
  // Plain: the development rows' row and content digests (16 bytes a row, in row order).
  Digest256 dev_row_digests{}, dev_content_digests{};
  RowsSummary dev_summary;  // the figures over the development rows, as published
  // How the sealed rows are laid out before compression (harness/data/holdout_rows.h):
  // "columns-1", or "csv" for seals written before the encoding had a name.
  std::string holdout_encoding = "csv";
  KeyInfo key;
  uint64_t budget_queries = 0;  // set at seal, plus every `budget` entry's raise
  uint64_t sealed_budget_queries = 0;  // as set at seal: the accounting splits delta over it
  double budget_half_width = 0;  // 0: no half-width limit
  double budget_delta = 0.05;
  std::string dev_out_path;  // where seal wrote the development rows
  Digest256 dev_out_sha256{};  // and that file's SHA-256 and size
  uint64_t dev_out_size = 0;
};

struct LedgerState {
  std::string ledger_id;
  int64_t source_seq = 0;
  // After the seal, source.target and source.columns[].missing hold the development rows'
  // figures (seal.dev_summary); the figures over every row are sealed (ReadSourceSummary).
  // Before the seal they are empty.
  SourceInfo source;
  std::string source_abs_path;
  std::optional<SealInfo> seal;
  uint64_t holdout_queries = 0;  // the queries_spent of every eval entry
  uint64_t budget_raises = 0;    // `budget` entries
  int64_t entries = 0;
  Digest256 head{};
};

// Reads the state. Corruption if the genesis or source entry is missing, or
// a genesis, source, seal, budget or eval entry is malformed (run `unseen
// verify` for the full check).
Result<LedgerState> ReadLedgerState(const Ledger& ledger);

// A ledger opened for a command that works on a sealed holdout: read-write,
// inside the command's one transaction (Begin() called), with its state read.
struct SealedLedger {
  std::unique_ptr<Ledger> ledger;
  LedgerState state;
};

// NotFound or Corruption as Ledger::Open and ReadLedgerState;
// FailedPrecondition "PATH: seal the holdout first (`unseen seal`)" before
// the seal.
Result<SealedLedger> OpenSealedLedger(const std::string& path);

// The AAD that binds a sealed blob to its ledger and holdout.
std::string SealedAad(const std::string& ledger_id, const Digest256& holdout_set);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_LEDGER_STATE_H_
