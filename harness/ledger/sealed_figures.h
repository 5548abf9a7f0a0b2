// What `seal` keeps under the key besides the rows: the holdout rows' digests and the figures
// over every source row. Both are sealed blobs (zstd, then AES-256-GCM under the holdout key,
// docs/sealed-format.md), each bound by its own AAD to the ledger and the holdout's row set, so
// that nothing a modeller can read lets them test whether a row, or a label for given features,
// is a holdout row (docs/row-digests.md, docs/threat-model.md). Only the key holder's commands
// open them: eval (attached files, the source-wide target range), verify. The ledger layer
// never holds decrypted holdout rows; these are digests and counts.
// Plain functions; thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_SEALED_FIGURES_H_
#define UNSEEN_HARNESS_LEDGER_SEALED_FIGURES_H_

#include <string>

#include "harness/data/source.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"
#include "storage/seal_crypto.h"
#include "storage/status.h"

namespace unseen {

// The content and feature digests of each holdout row (harness/data/row_digest.h), 16 bytes a
// row, in row order. (Without an id column the content digest is the row digest; with one, the
// key holder recomputes row digests from the decrypted rows when needed, as verify does.)
struct HoldoutDigests {
  std::string content, feature;
  size_t rows() const { return content.size() / 16; }
};

// What the `sealed-summary` blob holds: the figures over every source row, and how many rows
// were exact duplicates across the cut (holdout rows with a copy in dev, dev rows with a copy in
// the holdout), which the seal entry does not publish.
struct SealedFigures {
  RowsSummary source;
  uint64_t cross_duplicate_holdout_rows = 0;
  uint64_t cross_duplicate_dev_rows = 0;
};

// The AADs of the two blobs (docs/sealed-format.md).
std::string SealedDigestsAad(const std::string& ledger_id, const Digest256& holdout_set);
std::string SealedSummaryAad(const std::string& ledger_id, const Digest256& holdout_set);

// The sealed blob of `d` (plaintext: the content digests, then the feature digests).
// InvalidArgument if the two lists differ in length; errors of SealedWriter otherwise.
Result<std::string> SealHoldoutDigests(const Key& key, const std::string& aad,
                                       const HoldoutDigests& d);
// The sealed blob of `f` (plaintext: RowsSummaryToJson of f.source, with "cross_duplicates":
// {"holdout_rows", "dev_rows"} added).
Result<std::string> SealSourceSummary(const Key& key, const std::string& aad,
                                      const SealedFigures& f);

// The holdout rows' digests, opened with `key` (checked by KeyForSeal). FailedPrecondition
// before the seal; Corruption if the blob is missing, fails authentication or does not hold
// two lists of one digest per holdout row.
Result<HoldoutDigests> ReadHoldoutDigests(const Ledger& ledger, const LedgerState& st,
                                          const Key& key);

// The figures over every row of the source (row count, missing cells per column, target classes
// with counts, or the target's min, max and mean), opened with `key`. Errors as
// ReadHoldoutDigests. This is where eval finds the source-wide target range.
Result<RowsSummary> ReadSourceSummary(const Ledger& ledger, const LedgerState& st, const Key& key);
// The same with the cross-duplicate counts.
Result<SealedFigures> ReadSealedFigures(const Ledger& ledger, const LedgerState& st,
                                        const Key& key);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_SEALED_FIGURES_H_
