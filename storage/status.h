// Status and Result<T>: the one error vocabulary of unseen's libraries.
//
// A Status is cheap when OK (a null pointer) and otherwise carries a code and
// a message. Result<T> is either a value or a non-OK Status. Both are
// [[nodiscard]]. Thread-compatible: distinct objects may be used from distinct
// threads without synchronisation.
#ifndef UNSEEN_STORAGE_STATUS_H_
#define UNSEEN_STORAGE_STATUS_H_

#include <memory>
#include <optional>
#include <string>
#include <utility>

namespace unseen {

// Codes are written to the ledger (refusal entries) and map to exit codes:
// written to disk, do not renumber; append new values only.
enum class StatusCode : int {
  kOk = 0,
  kInvalidArgument = 1,     // bad input or usage (exit 2)
  kNotFound = 2,            // a named thing does not exist (exit 2)
  kAlreadyExists = 3,       // refusing to overwrite (exit 2)
  kFailedPrecondition = 4,  // the ledger is not in a state that allows this (exit 1)
  kCorruption = 5,          // integrity failure: chain, digest, damaged blob (exit 3)
  kIOError = 6,             // the operating system failed us (exit 4)
  kSealViolation = 7,       // an unauthorised read of the holdout (exit 1)
  kRefused = 8,             // a guard refused: leakage, contamination, budget (exit 1)
  kWrongKey = 9,            // the key does not open this ledger's holdout (exit 2)
  kInternal = 10,           // a bug (exit 4)
};

class [[nodiscard]] Status {
 public:
  // An OK status.
  Status() noexcept = default;
  Status(const Status& other) { *this = other; }
  Status& operator=(const Status& other) {
    if (this != &other) rep_ = other.rep_ ? std::make_unique<Rep>(*other.rep_) : nullptr;
    return *this;
  }
  Status(Status&&) noexcept = default;
  Status& operator=(Status&&) noexcept = default;

  static Status OK() { return Status(); }
  static Status InvalidArgument(std::string msg) { return {StatusCode::kInvalidArgument, std::move(msg)}; }
  static Status NotFound(std::string msg) { return {StatusCode::kNotFound, std::move(msg)}; }
  static Status AlreadyExists(std::string msg) { return {StatusCode::kAlreadyExists, std::move(msg)}; }
  static Status FailedPrecondition(std::string msg) {
    return {StatusCode::kFailedPrecondition, std::move(msg)};
  }
  static Status Corruption(std::string msg) { return {StatusCode::kCorruption, std::move(msg)}; }
  static Status IOError(std::string msg) { return {StatusCode::kIOError, std::move(msg)}; }
  static Status SealViolation(std::string msg) { return {StatusCode::kSealViolation, std::move(msg)}; }
  static Status Refused(std::string msg) { return {StatusCode::kRefused, std::move(msg)}; }
  static Status WrongKey(std::string msg) { return {StatusCode::kWrongKey, std::move(msg)}; }
  static Status Internal(std::string msg) { return {StatusCode::kInternal, std::move(msg)}; }

  bool ok() const { return rep_ == nullptr; }
  StatusCode code() const { return rep_ ? rep_->code : StatusCode::kOk; }
  // The message without the code name; empty when OK.
  const std::string& message() const;

  bool IsInvalidArgument() const { return code() == StatusCode::kInvalidArgument; }
  bool IsNotFound() const { return code() == StatusCode::kNotFound; }
  bool IsAlreadyExists() const { return code() == StatusCode::kAlreadyExists; }
  bool IsFailedPrecondition() const { return code() == StatusCode::kFailedPrecondition; }
  bool IsCorruption() const { return code() == StatusCode::kCorruption; }
  bool IsIOError() const { return code() == StatusCode::kIOError; }
  bool IsSealViolation() const { return code() == StatusCode::kSealViolation; }
  bool IsRefused() const { return code() == StatusCode::kRefused; }
  bool IsWrongKey() const { return code() == StatusCode::kWrongKey; }

  // "OK", or "Code: message".
  std::string ToString() const;

 private:
  struct Rep {
    StatusCode code;
    std::string message;
  };
  Status(StatusCode code, std::string msg)
      : rep_(std::make_unique<Rep>(Rep{code, std::move(msg)})) {}
  std::unique_ptr<Rep> rep_;
};

// The name of a code, e.g. "Corruption".
const char* StatusCodeName(StatusCode code);

// Either a value of type T or a non-OK Status.
template <typename T>
class [[nodiscard]] Result {
 public:
  Result(T value) : value_(std::move(value)) {}  // NOLINT: implicit by design
  // REQUIRES: !status.ok()
  Result(Status status) : status_(std::move(status)) {  // NOLINT: implicit by design
    if (status_.ok()) status_ = Status::Internal("Result constructed from an OK status");
  }

  bool ok() const { return value_.has_value(); }
  const Status& status() const { return status_; }
  // REQUIRES: ok()
  T& value() & { return *value_; }
  const T& value() const& { return *value_; }
  T&& value() && { return std::move(*value_); }
  T* operator->() { return &*value_; }
  const T* operator->() const { return &*value_; }
  T& operator*() & { return *value_; }
  const T& operator*() const& { return *value_; }

 private:
  std::optional<T> value_;
  Status status_;
};

}  // namespace unseen

#define UNSEEN_CONCAT_INNER_(a, b) a##b
#define UNSEEN_CONCAT_(a, b) UNSEEN_CONCAT_INNER_(a, b)

// Returns early from the enclosing function when `expr` (a Status) is not OK. The temporary is
// named by line, so that a lambda inside `expr` may use the macro too.
#define UNSEEN_RETURN_IF_ERROR(expr) \
  UNSEEN_RETURN_IF_ERROR_IMPL_(UNSEEN_CONCAT_(unseen_status_, __LINE__), expr)
#define UNSEEN_RETURN_IF_ERROR_IMPL_(tmp, expr) \
  do {                                          \
    ::unseen::Status tmp = (expr);              \
    if (!tmp.ok()) return tmp;                  \
  } while (0)
// Declares `lhs` from a Result<T> expression, or returns its Status.
#define UNSEEN_ASSIGN_OR_RETURN(lhs, expr) \
  UNSEEN_ASSIGN_OR_RETURN_IMPL_(UNSEEN_CONCAT_(unseen_result_, __LINE__), lhs, expr)
#define UNSEEN_ASSIGN_OR_RETURN_IMPL_(tmp, lhs, expr) \
  auto tmp = (expr);                                  \
  if (!tmp.ok()) return tmp.status();                 \
  lhs = std::move(tmp).value()

#endif  // UNSEEN_STORAGE_STATUS_H_
