// Seal keys: from a key file or from a passphrase through scrypt, and the
// check that tells a wrong key from a damaged blob. Thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_KEYS_H_
#define UNSEEN_HARNESS_LEDGER_KEYS_H_

#include <optional>
#include <string>
#include <utility>

#include "harness/ledger/ledger_state.h"
#include "storage/seal_crypto.h"

namespace unseen {

// Where the key comes from: a key file, or a passphrase the caller obtained
// (from UNSEEN_PASSPHRASE or a prompt).
struct KeySpec {
  std::string key_file;
  std::optional<std::string> passphrase;
};

// scrypt parameters for new seals. Default N=2^15, r=8, p=1: 32 MiB and
// about 0.1 s per derivation on this class of machine (RFC 7914 section 2
// recommends raising N as hardware allows).
ScryptParams DefaultScryptParams();

// A key for a new seal and the KeyInfo to record (a fresh random salt for a
// passphrase). InvalidArgument if neither or both are given.
Result<std::pair<Key, KeyInfo>> KeyForNewSeal(const KeySpec& spec);

// The key for an existing seal, checked against its key check value:
// WrongKey if it does not open this ledger's holdout.
Result<Key> KeyForSeal(const KeySpec& spec, const SealInfo& seal, const std::string& ledger_id);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_KEYS_H_
