// The sealed holdout opened in memory: its text, and the check of every row
// against the digests committed at init and seal. Together with the guard
// (guard.h), the only code that holds decrypted holdout rows; the text never
// reaches a file. Thread-compatible.
#ifndef UNSEEN_HARNESS_EVALUATE_SEALED_HOLDOUT_H_
#define UNSEEN_HARNESS_EVALUATE_SEALED_HOLDOUT_H_

#include <cstdint>
#include <string>

#include "harness/ledger/keys.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"

namespace unseen {

// Decrypts the holdout into memory and checks each row's digests. Returns
// the number of rows checked.
Result<uint64_t> CheckSealedHoldout(const Ledger& ledger, const KeySpec& key);

// The sealed holdout as CSV text (header, then its rows in source order),
// authenticated, decompressed and decoded in memory. `key` must already
// match the seal's key check value: a failed tag is then Corruption (damage),
// as is an unknown holdout encoding. Only the evaluation guard and
// CheckSealedHoldout call this; the text must never reach a file.
Result<std::string> OpenHoldoutText(const Ledger& ledger, const LedgerState& state, const Key& key);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_EVALUATE_SEALED_HOLDOUT_H_
