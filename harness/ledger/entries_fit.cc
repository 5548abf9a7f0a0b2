// The codec of the entries that freeze models: select and fit.
#include <tuple>

#include "harness/ledger/entries.h"
#include "harness/ledger/entry_reader.h"

namespace unseen {

using json = nlohmann::json;
using internal::BodyReader;
using internal::FileJson;
using internal::Path;

namespace {

json HexList(const std::vector<Digest256>& digests) {
  json out = json::array();
  for (const Digest256& d : digests) out.push_back(ToHex(d));
  return out;
}

}  // namespace

// --- select ---

std::string EncodeFields(const SelectBody& b) {
  json j = {{"model", b.model},
            {"metric", b.metric},
            {"selection", b.selection},
            {"folds", b.folds},
            {"seed", b.seed},
            {"fold_row_sets", HexList(b.fold_row_sets)},
            {"candidates", b.candidates},
            {"chosen", b.chosen},
            {"parents", b.parents},
            {"summary", b.summary}};
  if (b.rows_read) j["rows_read"] = ToHex(*b.rows_read);
  return j.dump();
}

Status DecodeBody(const Entry& entry, SelectBody* b) {
  BodyReader r(entry, SelectBody::kKind);
  b->model = r.Optional<std::string>("model");
  b->metric = r.Optional<std::string>("metric");
  b->selection = r.Optional<std::string>("selection");
  b->folds = r.Optional<int>("folds");
  b->seed = r.Optional<uint64_t>("seed");
  b->fold_row_sets.clear();
  const size_t folds = r.ArraySize("fold_row_sets", /*required=*/false);
  for (size_t i = 0; i < folds; ++i) {
    b->fold_row_sets.push_back(r.RequiredDigest(Path("fold_row_sets", i, "")));
  }
  b->rows_read = r.NullableDigest("rows_read");
  b->candidates = r.Optional<json>("candidates", json::array());
  b->chosen = r.Optional<uint64_t>("chosen");
  b->parents = r.Optional<std::vector<int64_t>>("parents");
  b->summary = r.Optional<std::string>("summary");
  return r.Finish();
}

// --- fit ---

namespace {

json BlendJson(const FitBody::Blend& b) {
  json members = json::array();
  for (const BlendMemberRecord& m : b.members) {
    members.push_back({{"name", m.name},
                       {"model_digest", ToHex(m.model_digest)},
                       {"fit_entry", m.fit_entry},
                       {"weight", m.weight},
                       {"loss_without", m.loss_without},
                       {"contribution", m.contribution}});
  }
  return {{"members", members},
          {"intercept", b.intercept},
          {"nonnegative", b.nonnegative},
          {"partition",
           {{"name", b.partition.name},
            {"entry", b.partition.entry},
            {"row_set", ToHex(b.partition.row_set)}}},
          {"contributions", b.contributions}};
}

// Only the members' fit entries were read back before (the blend lineage
// guard); the rest keeps zero values when absent.
FitBody::Blend ReadBlend(BodyReader& r) {
  FitBody::Blend b;
  const size_t n = r.ArraySize("blend.members", /*required=*/false);
  for (size_t i = 0; i < n; ++i) {
    BlendMemberRecord m;
    m.name = r.Optional<std::string>(Path("blend.members", i, "name"));
    m.model_digest = r.OptionalDigest(Path("blend.members", i, "model_digest"));
    m.fit_entry = r.Required<int64_t>(Path("blend.members", i, "fit_entry"));
    m.weight = r.Optional<double>(Path("blend.members", i, "weight"));
    m.loss_without = r.Optional<double>(Path("blend.members", i, "loss_without"));
    m.contribution = r.Optional<double>(Path("blend.members", i, "contribution"));
    b.members.push_back(std::move(m));
  }
  b.intercept = r.Optional<double>("blend.intercept");
  b.nonnegative = r.Optional<bool>("blend.nonnegative");
  b.partition.name = r.Optional<std::string>("blend.partition.name");
  b.partition.entry = r.Optional<int64_t>("blend.partition.entry");
  b.partition.row_set = r.OptionalDigest("blend.partition.row_set");
  b.contributions = r.Optional<json>("blend.contributions", json::object());
  return b;
}

FitBody::Excluded ReadExcluded(BodyReader& r) {
  FitBody::Excluded e;
  e.partition = r.Optional<std::string>("excluded.partition");
  e.entry = r.Optional<int64_t>("excluded.entry");
  e.row_set = r.OptionalDigest("excluded.row_set");
  e.rows_dropped = r.Optional<uint64_t>("excluded.rows_dropped");
  return e;
}

}  // namespace

std::string EncodeFields(const FitBody& b) {
  json j = {{"model", b.model},
            {"model_digest", ToHex(b.model_digest)},
            {"spec", ToHex(b.spec)},
            {"data", FileJson(b.data)},
            {"rows", b.rows},
            {"parents", b.parents},
            {"candidates_compared", b.candidates_compared},
            {"settings", b.settings},
            {"learner", b.learner},
            {"holdout_rows_read", b.holdout_rows_read},
            {"tainted", b.tainted},
            {"summary", b.summary}};
  if (b.rows_read) j["rows_read"] = ToHex(*b.rows_read);
  if (b.blend) j["blend"] = BlendJson(*b.blend);
  if (b.excluded) {
    j["excluded"] = {{"partition", b.excluded->partition},
                     {"entry", b.excluded->entry},
                     {"row_set", ToHex(b.excluded->row_set)},
                     {"rows_dropped", b.excluded->rows_dropped}};
  }
  return j.dump();
}

Status DecodeBody(const Entry& entry, FitBody* b) {
  BodyReader r(entry, FitBody::kKind);
  b->model = r.Required<std::string>("model");
  b->model_digest = r.RequiredDigest("model_digest");
  b->spec = r.OptionalDigest("spec");
  b->data.path = r.Optional<std::string>("data.path");
  b->data.sha256 = r.OptionalDigest("data.sha256");
  b->rows_read = r.NullableDigest("rows_read");
  b->rows = r.Optional<uint64_t>("rows");
  b->parents = r.Optional<std::vector<int64_t>>("parents");
  b->candidates_compared = r.Optional<uint64_t>("candidates_compared", 1);
  b->settings = r.Optional<json>("settings", json::object());
  b->learner = r.Optional<std::string>("learner");
  b->blend.reset();
  if (r.Has("blend")) b->blend = ReadBlend(r);
  b->excluded.reset();
  if (r.Has("excluded")) b->excluded = ReadExcluded(r);
  b->holdout_rows_read = r.Optional<uint64_t>("holdout_rows_read");
  b->tainted = r.Optional<bool>("tainted");
  b->summary = r.Optional<std::string>("summary");
  return r.Finish();
}

// --- equality ---

bool operator==(const SelectBody& a, const SelectBody& b) {
  return std::tie(a.model, a.metric, a.selection, a.folds, a.seed, a.fold_row_sets, a.rows_read,
                  a.candidates, a.chosen, a.parents, a.summary) ==
         std::tie(b.model, b.metric, b.selection, b.folds, b.seed, b.fold_row_sets, b.rows_read,
                  b.candidates, b.chosen, b.parents, b.summary);
}

bool operator==(const BlendMemberRecord& a, const BlendMemberRecord& b) {
  return std::tie(a.name, a.model_digest, a.fit_entry, a.weight, a.loss_without, a.contribution) ==
         std::tie(b.name, b.model_digest, b.fit_entry, b.weight, b.loss_without, b.contribution);
}

bool operator==(const FitBody::Blend& a, const FitBody::Blend& b) {
  return std::tie(a.members, a.intercept, a.nonnegative, a.partition.name, a.partition.entry,
                  a.partition.row_set, a.contributions) ==
         std::tie(b.members, b.intercept, b.nonnegative, b.partition.name, b.partition.entry,
                  b.partition.row_set, b.contributions);
}

bool operator==(const FitBody::Excluded& a, const FitBody::Excluded& b) {
  return std::tie(a.partition, a.entry, a.row_set, a.rows_dropped) ==
         std::tie(b.partition, b.entry, b.row_set, b.rows_dropped);
}

bool operator==(const FitBody& a, const FitBody& b) {
  return std::tie(a.model, a.model_digest, a.spec, a.data, a.rows_read, a.rows, a.parents,
                  a.candidates_compared, a.settings, a.learner, a.blend, a.excluded,
                  a.holdout_rows_read, a.tainted, a.summary) ==
         std::tie(b.model, b.model_digest, b.spec, b.data, b.rows_read, b.rows, b.parents,
                  b.candidates_compared, b.settings, b.learner, b.blend, b.excluded,
                  b.holdout_rows_read, b.tainted, b.summary);
}

}  // namespace unseen
