#include "harness/ledger/keys.h"

namespace unseen {

ScryptParams DefaultScryptParams() { return ScryptParams{uint64_t{1} << 15, 8, 1}; }

namespace {

Status CheckSpec(const KeySpec& spec) {
  if (spec.key_file.empty() && !spec.passphrase) {
    return Status::InvalidArgument(
        "--key-file: a key is required (a key file from `unseen keygen`, or a passphrase in "
        "UNSEEN_PASSPHRASE or typed at the prompt)");
  }
  if (!spec.key_file.empty() && spec.passphrase) {
    return Status::InvalidArgument("--key-file and a passphrase were both given; expected one");
  }
  if (spec.passphrase && spec.passphrase->empty()) {
    return Status::InvalidArgument("the passphrase is empty; expected at least one character");
  }
  return Status::OK();
}

}  // namespace

Result<std::pair<Key, KeyInfo>> KeyForNewSeal(const KeySpec& spec) {
  UNSEEN_RETURN_IF_ERROR(CheckSpec(spec));
  KeyInfo info;
  if (!spec.key_file.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(Key key, ReadKeyFile(spec.key_file));
    info.source = "key-file";
    return std::make_pair(key, info);
  }
  info.source = "passphrase";
  info.scrypt = DefaultScryptParams();
  UNSEEN_ASSIGN_OR_RETURN(std::string salt, RandomBytes(16));
  info.salt_hex = ToHex(salt.data(), salt.size());
  UNSEEN_ASSIGN_OR_RETURN(Key key, KeyFromPassphrase(*spec.passphrase, salt, info.scrypt));
  return std::make_pair(key, info);
}

Result<Key> KeyForSeal(const KeySpec& spec, const SealInfo& seal, const std::string& ledger_id) {
  UNSEEN_RETURN_IF_ERROR(CheckSpec(spec));
  Key key{};
  if (!spec.key_file.empty()) {
    if (seal.key.source != "key-file") {
      return Status::WrongKey("this ledger was sealed with a passphrase, not a key file");
    }
    UNSEEN_ASSIGN_OR_RETURN(key, ReadKeyFile(spec.key_file));
  } else {
    if (seal.key.source != "passphrase") {
      return Status::WrongKey("this ledger was sealed with a key file, not a passphrase");
    }
    UNSEEN_ASSIGN_OR_RETURN(std::string salt, FromHex(seal.key.salt_hex));
    UNSEEN_ASSIGN_OR_RETURN(key, KeyFromPassphrase(*spec.passphrase, salt, seal.key.scrypt));
  }
  if (ToHex(KeyCheck(key, ledger_id)) != seal.key.key_check_hex) {
    return Status::WrongKey(spec.key_file.empty()
                                ? std::string("the passphrase does not open this ledger's holdout")
                                : spec.key_file + ": this key does not open this ledger's holdout");
  }
  return key;
}

}  // namespace unseen
