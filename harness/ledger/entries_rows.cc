// The codec of the entries about development rows and data brought in:
// partition, export, apply, score.
#include <tuple>

#include "harness/ledger/entries.h"
#include "harness/ledger/entry_reader.h"

namespace unseen {

using json = nlohmann::json;
using internal::BodyReader;
using internal::FileJson;
using internal::Path;
using internal::ReadFile;

// --- partition ---

std::string EncodeFields(const PartitionBody& b) {
  json labels_from = nullptr;
  if (b.labels_from) {
    labels_from = {{"path", b.labels_from->path},
                   {"sha256", ToHex(b.labels_from->sha256)},
                   {"column", b.labels_from->column}};
  }
  const json j = {{"name", b.name},
                  {"strategy", b.strategy},
                  {"fraction", b.fraction},
                  {"seed", b.seed},
                  {"rows", b.rows},
                  {"dev_rows", b.dev_rows},
                  {"requested", b.requested},
                  {"note", b.note},
                  {"row_set", ToHex(b.row_set)},
                  {"labels_from", labels_from},
                  {"parents", b.parents},
                  {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, PartitionBody* b) {
  BodyReader r(entry, PartitionBody::kKind);
  b->name = r.Required<std::string>("name");
  b->strategy = r.Required<std::string>("strategy");
  b->fraction = r.Required<double>("fraction");
  b->seed = r.Required<uint64_t>("seed");
  b->rows = r.Optional<uint64_t>("rows");
  b->dev_rows = r.Optional<uint64_t>("dev_rows");
  b->requested = r.Optional<uint64_t>("requested");
  b->note = r.Optional<std::string>("note");
  b->row_set = r.RequiredDigest("row_set");
  b->labels_from.reset();
  if (r.Has("labels_from")) {
    b->labels_from = PartitionBody::LabelsFrom{r.Optional<std::string>("labels_from.path"),
                                               r.OptionalDigest("labels_from.sha256"),
                                               r.Optional<std::string>("labels_from.column")};
  }
  b->parents = r.Optional<std::vector<int64_t>>("parents");
  b->summary = r.Optional<std::string>("summary");
  return r.Finish();
}

// --- export ---

std::string EncodeFields(const ExportBody& b) {
  json folds = json::array();
  for (const ExportBody::Fold& f : b.folds) {
    folds.push_back({{"path", f.path},
                     {"sha256", ToHex(f.sha256)},
                     {"rows", f.rows},
                     {"row_set", ToHex(f.row_set)}});
  }
  const json j = {{"out", FileJson(b.out)},
                  {"rows", b.rows},
                  {"row_set", ToHex(b.row_set)},
                  {"row_column", b.row_column ? json(*b.row_column) : json(nullptr)},
                  {"folds", folds},
                  {"seed", b.seed},
                  {"parents", b.parents},
                  {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, ExportBody* b) {
  BodyReader r(entry, ExportBody::kKind);
  b->out.path = r.Optional<std::string>("out.path");
  b->out.sha256 = r.OptionalDigest("out.sha256");
  b->rows = r.Optional<uint64_t>("rows");
  b->row_set = r.RequiredDigest("row_set");
  b->row_column = r.Nullable<std::string>("row_column");
  b->folds.clear();
  const size_t n = r.ArraySize("folds", /*required=*/false);
  for (size_t i = 0; i < n; ++i) {
    ExportBody::Fold f;
    f.path = r.Optional<std::string>(Path("folds", i, "path"));
    f.sha256 = r.OptionalDigest(Path("folds", i, "sha256"));
    f.rows = r.Optional<uint64_t>(Path("folds", i, "rows"));
    f.row_set = r.OptionalDigest(Path("folds", i, "row_set"));
    b->folds.push_back(std::move(f));
  }
  b->seed = r.Optional<uint64_t>("seed");
  b->parents = r.Optional<std::vector<int64_t>>("parents");
  b->summary = r.Optional<std::string>("summary");
  return r.Finish();
}

// --- apply ---

std::string EncodeFields(const ApplyBody& b) {
  const json j = {{"model", b.model},
                  {"model_digest", ToHex(b.model_digest)},
                  {"data", FileJson(b.data)},
                  {"rows", b.rows},
                  {"output", FileJson(b.output)},
                  {"parents", b.parents},
                  {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, ApplyBody* b) {
  BodyReader r(entry, ApplyBody::kKind);
  b->model = r.Required<std::string>("model");
  b->model_digest = r.RequiredDigest("model_digest");
  b->data = ReadFile(r, "data");
  b->rows = r.Required<uint64_t>("rows");
  b->output = ReadFile(r, "output");
  b->parents = r.Required<std::vector<int64_t>>("parents");
  b->summary = r.Required<std::string>("summary");
  return r.Finish();
}

// --- score ---

std::string EncodeFields(const ScoreBody& b) {
  const json j = {{"name", b.name},
                  {"predictions", FileJson(b.predictions)},
                  {"rows", b.rows},
                  {"rows_read", ToHex(b.rows_read)},
                  {"metric", b.metric},
                  {"value", b.value},
                  {"parents", b.parents},
                  {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, ScoreBody* b) {
  BodyReader r(entry, ScoreBody::kKind);
  b->name = r.Required<std::string>("name");
  b->predictions = ReadFile(r, "predictions");
  b->rows = r.Required<uint64_t>("rows");
  b->rows_read = r.RequiredDigest("rows_read");
  b->metric = r.Required<std::string>("metric");
  b->value = r.Required<double>("value");
  b->parents = r.Required<std::vector<int64_t>>("parents");
  b->summary = r.Required<std::string>("summary");
  return r.Finish();
}

// --- equality ---

bool operator==(const PartitionBody::LabelsFrom& a, const PartitionBody::LabelsFrom& b) {
  return std::tie(a.path, a.sha256, a.column) == std::tie(b.path, b.sha256, b.column);
}

bool operator==(const PartitionBody& a, const PartitionBody& b) {
  return std::tie(a.name, a.strategy, a.fraction, a.seed, a.rows, a.dev_rows, a.requested, a.note,
                  a.row_set, a.labels_from, a.parents, a.summary) ==
         std::tie(b.name, b.strategy, b.fraction, b.seed, b.rows, b.dev_rows, b.requested, b.note,
                  b.row_set, b.labels_from, b.parents, b.summary);
}

bool operator==(const ExportBody::Fold& a, const ExportBody::Fold& b) {
  return std::tie(a.path, a.sha256, a.rows, a.row_set) ==
         std::tie(b.path, b.sha256, b.rows, b.row_set);
}

bool operator==(const ExportBody& a, const ExportBody& b) {
  return std::tie(a.out, a.rows, a.row_set, a.row_column, a.folds, a.seed, a.parents, a.summary) ==
         std::tie(b.out, b.rows, b.row_set, b.row_column, b.folds, b.seed, b.parents, b.summary);
}

bool operator==(const ApplyBody& a, const ApplyBody& b) {
  return std::tie(a.model, a.model_digest, a.data, a.rows, a.output, a.parents, a.summary) ==
         std::tie(b.model, b.model_digest, b.data, b.rows, b.output, b.parents, b.summary);
}

bool operator==(const ScoreBody& a, const ScoreBody& b) {
  return std::tie(a.name, a.predictions, a.rows, a.rows_read, a.metric, a.value, a.parents,
                  a.summary) == std::tie(b.name, b.predictions, b.rows, b.rows_read, b.metric,
                                         b.value, b.parents, b.summary);
}

}  // namespace unseen
