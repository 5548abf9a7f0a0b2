// BodyReader: reads one entry's body field by field for the entry codec
// (entries.h), turning every problem into Corruption("entry N (kind): ...")
// instead of an exception. Internal to harness/ledger. Thread-compatible.
//
// Paths name nested keys and array items with dots: "holdout.rows",
// "answers.3.model_digest". The first problem is kept; later reads return
// their fallback, so a decoder reads straight through and calls Finish()
// once.
#ifndef UNSEEN_HARNESS_LEDGER_ENTRY_READER_H_
#define UNSEEN_HARNESS_LEDGER_ENTRY_READER_H_

#include <cstdint>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "harness/ledger/entries.h"
#include "storage/digest.h"
#include "storage/ledger.h"
#include "storage/status.h"

namespace unseen::internal {

// Typed reads of one JSON value: false (and *out untouched) when the value
// is not of that type. Integers must be integers in range: 1.5 is no count.
// A double reads null as NaN (the encoder writes NaN and infinities as null).
bool ReadValue(const nlohmann::json& j, std::string* out);
bool ReadValue(const nlohmann::json& j, bool* out);
bool ReadValue(const nlohmann::json& j, double* out);
bool ReadValue(const nlohmann::json& j, uint64_t* out);
bool ReadValue(const nlohmann::json& j, uint32_t* out);
bool ReadValue(const nlohmann::json& j, int64_t* out);
bool ReadValue(const nlohmann::json& j, int* out);
bool ReadValue(const nlohmann::json& j, nlohmann::json* out);
template <typename T>
bool ReadValue(const nlohmann::json& j, std::vector<T>* out) {
  if (!j.is_array()) return false;
  std::vector<T> v(j.size());
  for (size_t i = 0; i < j.size(); ++i) {
    if (!ReadValue(j[i], &v[i])) return false;
  }
  *out = std::move(v);
  return true;
}

template <typename T>
bool ReadValue(const nlohmann::json& j, std::map<std::string, T>* out) {
  if (!j.is_object()) return false;
  std::map<std::string, T> m;
  for (auto it = j.begin(); it != j.end(); ++it) {
    if (!ReadValue(it.value(), &m[it.key()])) return false;
  }
  *out = std::move(m);
  return true;
}

// What a type is called in a message ("an unsigned integer").
const char* TypeName(const std::string*);
const char* TypeName(const bool*);
const char* TypeName(const double*);
const char* TypeName(const uint64_t*);
const char* TypeName(const uint32_t*);
const char* TypeName(const int64_t*);
const char* TypeName(const int*);
const char* TypeName(const nlohmann::json*);
template <typename T>
const char* TypeName(const std::vector<T>*) {
  return "an array";
}
template <typename T>
const char* TypeName(const std::map<std::string, T>*) {
  return "an object";
}

class BodyReader {
 public:
  // Parses entry.body; an entry of another kind than `kind`, or a body that
  // is not a JSON object, is the first problem. `entry` must outlive the reader.
  BodyReader(const Entry& entry, std::string_view kind);

  // The value at `path`. Missing or of another type: a problem, and T().
  template <typename T>
  T Required(std::string_view path) {
    T out{};
    const nlohmann::json* j = Find(path, /*required=*/true);
    if (j != nullptr && !ReadValue(*j, &out)) WrongType(path, TypeName(&out));
    return out;
  }
  // The value at `path`, or `fallback` when absent. Present but of another
  // type: a problem (so is null, except for a double, which reads it as NaN).
  template <typename T>
  T Optional(std::string_view path, T fallback = T()) {
    const nlohmann::json* j = Find(path, /*required=*/false);
    if (j == nullptr) return fallback;
    if (!ReadValue(*j, &fallback)) WrongType(path, TypeName(&fallback));
    return fallback;
  }
  // The value at `path`; none when absent or null (or, if `required`, a
  // problem when absent).
  template <typename T>
  std::optional<T> Nullable(std::string_view path, bool required = false) {
    const nlohmann::json* j = Find(path, required);
    if (j == nullptr || j->is_null()) return std::nullopt;
    T out{};
    if (!ReadValue(*j, &out)) {
      WrongType(path, TypeName(&out));
      return std::nullopt;
    }
    return out;
  }

  // A SHA-256 digest written as 64 hex digits.
  Digest256 RequiredDigest(std::string_view path);
  Digest256 OptionalDigest(std::string_view path);  // absent: all zero
  std::optional<Digest256> NullableDigest(std::string_view path);

  // True when `path` holds a value other than null.
  bool Has(std::string_view path);
  // True when `path` holds a value, null included.
  bool Present(std::string_view path);
  // The length of the array at `path`; absent: 0, or a problem if `required`.
  size_t ArraySize(std::string_view path, bool required);
  // Notes a problem of the decoder's own (a value out of its domain).
  void Fail(std::string what);

  // OK, or Corruption("entry N (kind): " + the first problem).
  Status Finish() const;

 private:
  // The value at `path`, or nullptr (a problem when `required`, or when a
  // step of the path is not an object or array).
  const nlohmann::json* Find(std::string_view path, bool required);
  Digest256 DigestAt(const nlohmann::json& j, std::string_view path);
  void WrongType(std::string_view path, const char* expected);

  const Entry& entry_;
  nlohmann::json root_;
  std::string problem_;
};

// A FileRecord as entries write it: {"path", "sha256"}.
nlohmann::json FileJson(const FileRecord& file);
// Reads one back from `path`.path and `path`.sha256, both required.
FileRecord ReadFile(BodyReader& reader, const std::string& path);

// The path of an array item's key: Path("answers", 3, "n") is "answers.3.n";
// an empty key names the item itself ("answers.3").
std::string Path(std::string_view array, size_t index, std::string_view key);

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_LEDGER_ENTRY_READER_H_
