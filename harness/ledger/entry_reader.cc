#include "harness/ledger/entry_reader.h"

#include <cstdlib>
#include <limits>

namespace unseen::internal {

using json = nlohmann::json;

bool ReadValue(const json& j, std::string* out) {
  if (!j.is_string()) return false;
  *out = j.get<std::string>();
  return true;
}

bool ReadValue(const json& j, bool* out) {
  if (!j.is_boolean()) return false;
  *out = j.get<bool>();
  return true;
}

bool ReadValue(const json& j, double* out) {
  // nlohmann writes a NaN or an infinity as null; such a body was written so, not damaged.
  if (j.is_null()) {
    *out = std::numeric_limits<double>::quiet_NaN();
    return true;
  }
  if (!j.is_number()) return false;
  *out = j.get<double>();
  return true;
}

bool ReadValue(const json& j, uint64_t* out) {
  if (!j.is_number_unsigned()) return false;
  *out = j.get<uint64_t>();
  return true;
}

bool ReadValue(const json& j, uint32_t* out) {
  uint64_t v = 0;
  if (!ReadValue(j, &v) || v > std::numeric_limits<uint32_t>::max()) return false;
  *out = static_cast<uint32_t>(v);
  return true;
}

bool ReadValue(const json& j, int64_t* out) {
  if (j.is_number_unsigned()) {
    if (j.get<uint64_t>() > static_cast<uint64_t>(std::numeric_limits<int64_t>::max())) {
      return false;
    }
  } else if (!j.is_number_integer()) {
    return false;
  }
  *out = j.get<int64_t>();
  return true;
}

bool ReadValue(const json& j, int* out) {
  int64_t v = 0;
  if (!ReadValue(j, &v) || v < std::numeric_limits<int>::min() ||
      v > std::numeric_limits<int>::max()) {
    return false;
  }
  *out = static_cast<int>(v);
  return true;
}

bool ReadValue(const json& j, json* out) {
  *out = j;
  return true;
}

const char* TypeName(const std::string*) { return "text"; }
const char* TypeName(const bool*) { return "true or false"; }
const char* TypeName(const double*) { return "a number"; }
const char* TypeName(const uint64_t*) { return "an unsigned integer"; }
const char* TypeName(const uint32_t*) { return "an unsigned 32-bit integer"; }
const char* TypeName(const int64_t*) { return "an integer"; }
const char* TypeName(const int*) { return "a 32-bit integer"; }
const char* TypeName(const json*) { return "a JSON value"; }

std::string Path(std::string_view array, size_t index, std::string_view key) {
  std::string p = std::string(array) + "." + std::to_string(index);
  if (!key.empty()) p += "." + std::string(key);
  return p;
}

json FileJson(const FileRecord& f) { return {{"path", f.path}, {"sha256", ToHex(f.sha256)}}; }

FileRecord ReadFile(BodyReader& r, const std::string& path) {
  return {r.Required<std::string>(path + ".path"), r.RequiredDigest(path + ".sha256")};
}

BodyReader::BodyReader(const Entry& entry, std::string_view kind) : entry_(entry) {
  if (entry.kind != kind) {
    Fail("expected a " + std::string(kind) + " entry");
    return;
  }
  // No exception leaves the parser: a body that does not parse is a problem like any other.
  root_ = json::parse(entry.body, nullptr, /*allow_exceptions=*/false);
  if (root_.is_discarded()) {
    Fail("the body is not JSON");
  } else if (!root_.is_object()) {
    Fail("the body is not a JSON object");
  }
}

const json* BodyReader::Find(std::string_view path, bool required) {
  if (!problem_.empty()) return nullptr;
  const json* at = &root_;
  size_t start = 0;
  while (true) {
    const size_t dot = path.find('.', start);
    const std::string_view step =
        path.substr(start, dot == std::string_view::npos ? std::string_view::npos : dot - start);
    const std::string_view parent = path.substr(0, start == 0 ? 0 : start - 1);
    if (at->is_object()) {
      auto it = at->find(std::string(step));
      if (it == at->end()) {
        if (required) Fail("key '" + std::string(path) + "' is missing");
        return nullptr;
      }
      at = &*it;
    } else if (at->is_array()) {
      char* end = nullptr;
      const std::string index(step);
      const unsigned long i = std::strtoul(index.c_str(), &end, 10);
      if (index.empty() || *end != '\0' || i >= at->size()) {
        if (required) Fail("key '" + std::string(path) + "' is missing");
        return nullptr;
      }
      at = &(*at)[i];
    } else {
      WrongType(parent, "an object");
      return nullptr;
    }
    if (dot == std::string_view::npos) return at;
    start = dot + 1;
  }
}

Digest256 BodyReader::DigestAt(const json& j, std::string_view path) {
  if (!j.is_string()) {
    WrongType(path, "a SHA-256 digest in hex");
    return {};
  }
  Result<Digest256> d = Digest256FromHex(j.get<std::string>());
  if (!d.ok()) {
    Fail("'" + std::string(path) + "' is not a SHA-256 digest: " + d.status().message());
    return {};
  }
  return *d;
}

Digest256 BodyReader::RequiredDigest(std::string_view path) {
  const json* j = Find(path, /*required=*/true);
  return j == nullptr ? Digest256{} : DigestAt(*j, path);
}

Digest256 BodyReader::OptionalDigest(std::string_view path) {
  const json* j = Find(path, /*required=*/false);
  return j == nullptr ? Digest256{} : DigestAt(*j, path);
}

std::optional<Digest256> BodyReader::NullableDigest(std::string_view path) {
  const json* j = Find(path, /*required=*/false);
  if (j == nullptr || j->is_null()) return std::nullopt;
  return DigestAt(*j, path);
}

bool BodyReader::Has(std::string_view path) {
  const json* j = Find(path, /*required=*/false);
  return j != nullptr && !j->is_null();
}

bool BodyReader::Present(std::string_view path) {
  return Find(path, /*required=*/false) != nullptr;
}

size_t BodyReader::ArraySize(std::string_view path, bool required) {
  const json* j = Find(path, required);
  if (j == nullptr) return 0;
  if (!j->is_array()) {
    WrongType(path, "an array");
    return 0;
  }
  return j->size();
}

void BodyReader::Fail(std::string what) {
  if (problem_.empty()) problem_ = std::move(what);
}

void BodyReader::WrongType(std::string_view path, const char* expected) {
  Fail("'" + std::string(path) + "' should be " + expected);
}

Status BodyReader::Finish() const {
  if (problem_.empty()) return Status::OK();
  return Status::Corruption("entry " + std::to_string(entry_.seq) + " (" + entry_.kind +
                            "): " + problem_);
}

}  // namespace unseen::internal
