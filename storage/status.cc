#include "storage/status.h"

namespace unseen {

const char* StatusCodeName(StatusCode code) {
  switch (code) {
    case StatusCode::kOk: return "OK";
    case StatusCode::kInvalidArgument: return "InvalidArgument";
    case StatusCode::kNotFound: return "NotFound";
    case StatusCode::kAlreadyExists: return "AlreadyExists";
    case StatusCode::kFailedPrecondition: return "FailedPrecondition";
    case StatusCode::kCorruption: return "Corruption";
    case StatusCode::kIOError: return "IOError";
    case StatusCode::kSealViolation: return "SealViolation";
    case StatusCode::kRefused: return "Refused";
    case StatusCode::kWrongKey: return "WrongKey";
    case StatusCode::kInternal: return "Internal";
  }
  return "Unknown";
}

const std::string& Status::message() const {
  static const std::string kEmpty;
  return rep_ ? rep_->message : kEmpty;
}

std::string Status::ToString() const {
  if (ok()) return "OK";
  return std::string(StatusCodeName(rep_->code)) + ": " + rep_->message;
}

}  // namespace unseen
