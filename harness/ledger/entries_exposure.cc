// The codec of the `exposure` entry: a failure on the holdout, recorded.
#include <tuple>

#include "harness/ledger/entries.h"
#include "harness/ledger/entry_reader.h"

namespace unseen {

using json = nlohmann::json;
using internal::BodyReader;

std::string EncodeFields(const ExposureBody& b) {
  json j = {{"command", b.command},
            {"model", b.model},
            {"model_kind", b.model_kind},
            {"model_digest", ToHex(b.model_digest)},
            {"holdout_rows_sent", b.holdout_rows_sent},
            {"reason", b.reason},
            {"summary", b.summary}};
  if (!b.confinement.empty()) j["confinement"] = b.confinement;
  return j.dump();
}

Status DecodeBody(const Entry& entry, ExposureBody* b) {
  BodyReader r(entry, ExposureBody::kKind);
  b->command = r.Required<std::string>("command");
  b->model = r.Required<std::string>("model");
  b->model_kind = r.Required<std::string>("model_kind");
  b->model_digest = r.RequiredDigest("model_digest");
  b->holdout_rows_sent = r.Required<uint64_t>("holdout_rows_sent");
  b->reason = r.Required<std::string>("reason");
  b->confinement = r.Optional<ConfinementRecord>("confinement");
  b->summary = r.Required<std::string>("summary");
  return r.Finish();
}

bool operator==(const ExposureBody& a, const ExposureBody& b) {
  return std::tie(a.command, a.model, a.model_kind, a.model_digest, a.holdout_rows_sent, a.reason,
                  a.confinement, a.summary) == std::tie(b.command, b.model, b.model_kind,
                                                        b.model_digest, b.holdout_rows_sent,
                                                        b.reason, b.confinement, b.summary);
}

}  // namespace unseen
