// The codec of the entries that set a ledger up: genesis, source, seal.
#include <map>
#include <tuple>

#include "harness/ledger/entries.h"
#include "harness/ledger/entry_reader.h"

namespace unseen {

using json = nlohmann::json;
using internal::BodyReader;
using internal::Path;

// --- ledger (genesis) ---

std::string EncodeFields(const GenesisBody& b) {
  // "format" is the ledger's own (Ledger::Create adds it).
  const json j = {{"ledger_id", b.ledger_id}, {"row_digest_format", b.row_digest_format}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, GenesisBody* b) {
  BodyReader r(entry, GenesisBody::kKind);
  b->ledger_id = r.Required<std::string>("ledger_id");
  b->row_digest_format = r.Optional<int>("row_digest_format", 1);
  b->format = r.Optional<int>("format", kLedgerFormatVersion);
  return r.Finish();
}

Result<std::unique_ptr<Ledger>> CreateLedger(const std::string& path, std::string_view actor,
                                             const GenesisBody& genesis) {
  return Ledger::Create(path, actor, EncodeFields(genesis));
}

// --- source ---

std::string EncodeFields(const SourceBody& b) {
  // SourceInfo's JSON form belongs to harness/data; the entry adds where the
  // file was found.
  json j = json::parse(SourceToJson(b.source));
  if (b.absolute_path) j["file"]["absolute_path"] = *b.absolute_path;
  return j.dump();
}

namespace {

// SourceInfo's JSON form (SourceToJson), every key required.
SourceInfo ReadSource(BodyReader& r) {
  SourceInfo s;
  s.path = r.Required<std::string>("file.path");
  s.file_sha256 = r.RequiredDigest("file.sha256");
  s.file_size = r.Required<uint64_t>("file.size");
  const std::string delimiter = r.Required<std::string>("delimiter");
  if (delimiter.size() == 1) {
    s.delimiter = delimiter[0];
  } else {
    r.Fail("'delimiter' should be one character");
  }
  s.rows = r.Required<uint64_t>("rows");
  const size_t columns = r.ArraySize("columns", /*required=*/true);
  for (size_t i = 0; i < columns; ++i) {
    ColumnInfo c;
    c.name = r.Required<std::string>(Path("columns", i, "name"));
    c.type = ColumnTypeFromName(r.Required<std::string>(Path("columns", i, "type")));
    c.role = ColumnRoleFromName(r.Required<std::string>(Path("columns", i, "role")));
    s.columns.push_back(std::move(c));
  }
  Result<TaskKind> task = ParseTaskKind(r.Required<std::string>("task"));
  if (task.ok()) {
    s.task = *task;
  } else {
    r.Fail("'task' should be classification or regression");
  }
  s.row_digest_format = r.Required<int>("row_digest_format");
  s.merkle_root = r.RequiredDigest("merkle_root");
  return s;
}

}  // namespace

Status DecodeBody(const Entry& entry, SourceBody* b) {
  BodyReader r(entry, SourceBody::kKind);
  b->source = ReadSource(r);
  b->absolute_path.reset();
  if (r.Present("file.absolute_path")) {
    b->absolute_path = r.Required<std::string>("file.absolute_path");
  }
  return r.Finish();
}

// --- seal ---

namespace {

json KeyJson(const KeyInfo& k) {
  json j = {{"source", k.source}, {"key_check", k.key_check_hex}};
  if (k.source == "passphrase") {
    j["salt"] = k.salt_hex;
    j["scrypt"] = {{"N", k.scrypt.n}, {"r", k.scrypt.r}, {"p", k.scrypt.p}};
  }
  return j;
}

KeyInfo ReadKey(BodyReader& r) {
  KeyInfo k;
  k.source = r.Required<std::string>("key.source");
  k.key_check_hex = r.Required<std::string>("key.key_check");
  if (k.source == "passphrase") {
    k.salt_hex = r.Required<std::string>("key.salt");
    k.scrypt.n = r.Required<uint64_t>("key.scrypt.N");
    k.scrypt.r = r.Required<uint32_t>("key.scrypt.r");
    k.scrypt.p = r.Required<uint32_t>("key.scrypt.p");
  }
  return k;
}

json NullOr(const std::optional<uint64_t>& v) { return v ? json(*v) : json(nullptr); }

}  // namespace

std::string EncodeFields(const SealBody& b) {
  const SealBody::Holdout& h = b.holdout;
  const SealBody::Dev& d = b.dev;
  json budget = {{"queries", b.budget_queries}};
  if (b.budget_half_width > 0) {
    budget["half_width"] = b.budget_half_width;
    budget["delta"] = b.budget_delta;
  }
  json j = {
      {"source_entry", b.source_entry},
      {"strategy", b.strategy},
      {"fraction", b.fraction},
      {"seed", b.seed},
      {"requested_holdout", b.requested_holdout},
      {"split_note", b.split_note},
      {"holdout",
       {{"rows", h.rows},
        {"row_set", ToHex(h.row_set)},
        {"sealed_rows", ToHex(h.sealed_rows)},
        {"sealed_digests", ToHex(h.sealed_digests)},
        {"sealed_summary", ToHex(h.sealed_summary)},
        {"cipher", h.cipher},
        {"compression", h.compression},
        {"encoding", h.encoding}}},
      {"dev",
       {{"rows", d.rows},
        {"row_set", ToHex(d.row_set)},
        {"row_digests", ToHex(d.row_digests)},
        {"content_digests", ToHex(d.content_digests)},
        {"summary", json::parse(RowsSummaryToJson(d.summary))},
        {"file",
         {{"path", d.file_path}, {"sha256", ToHex(d.file_sha256)}, {"size", d.file_size}}}}},
      {"key", KeyJson(b.key)},
      {"cross_duplicates", {{"moved_to_dev", b.cross_duplicates_moved_to_dev}}},
      {"violations", {{"group", NullOr(b.group_violations)}, {"time", NullOr(b.time_violations)}}},
      {"budget", budget}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, SealBody* b) {
  BodyReader r(entry, SealBody::kKind);
  b->source_entry = r.Optional<int64_t>("source_entry");
  b->strategy = r.Required<std::string>("strategy");
  b->fraction = r.Required<double>("fraction");
  b->seed = r.Required<uint64_t>("seed");
  b->requested_holdout = r.Optional<uint64_t>("requested_holdout");
  b->split_note = r.Optional<std::string>("split_note");
  SealBody::Holdout& h = b->holdout;
  h.rows = r.Required<uint64_t>("holdout.rows");
  h.row_set = r.RequiredDigest("holdout.row_set");
  h.sealed_rows = r.RequiredDigest("holdout.sealed_rows");
  h.sealed_digests = r.RequiredDigest("holdout.sealed_digests");
  h.sealed_summary = r.RequiredDigest("holdout.sealed_summary");
  h.cipher = r.Optional<std::string>("holdout.cipher");
  h.compression = r.Optional<std::string>("holdout.compression");
  h.encoding = r.Optional<std::string>("holdout.encoding", "csv");
  SealBody::Dev& d = b->dev;
  d.rows = r.Required<uint64_t>("dev.rows");
  d.row_set = r.RequiredDigest("dev.row_set");
  d.row_digests = r.RequiredDigest("dev.row_digests");
  d.content_digests = r.RequiredDigest("dev.content_digests");
  if (std::optional<json> summary = r.Nullable<json>("dev.summary", /*required=*/true)) {
    Result<RowsSummary> parsed = RowsSummaryFromJson(summary->dump(), /*columns=*/0);
    if (parsed.ok()) {
      d.summary = std::move(*parsed);
    } else {
      r.Fail("'dev.summary': " + parsed.status().message());
    }
  }
  d.file_path = r.Required<std::string>("dev.file.path");
  d.file_sha256 = r.RequiredDigest("dev.file.sha256");
  d.file_size = r.Required<uint64_t>("dev.file.size");
  b->key = ReadKey(r);
  b->cross_duplicates_moved_to_dev = r.Optional<bool>("cross_duplicates.moved_to_dev");
  b->group_violations = r.Nullable<uint64_t>("violations.group");
  b->time_violations = r.Nullable<uint64_t>("violations.time");
  b->budget_queries = r.Required<uint64_t>("budget.queries");
  b->budget_half_width = r.Optional<double>("budget.half_width", 0.0);
  b->budget_delta = r.Optional<double>("budget.delta", 0.05);
  return r.Finish();
}

// --- equality ---

bool operator==(const FileRecord& a, const FileRecord& b) {
  return std::tie(a.path, a.sha256) == std::tie(b.path, b.sha256);
}

bool operator==(const KeyInfo& a, const KeyInfo& b) {
  return std::tie(a.source, a.scrypt.n, a.scrypt.r, a.scrypt.p, a.salt_hex, a.key_check_hex) ==
         std::tie(b.source, b.scrypt.n, b.scrypt.r, b.scrypt.p, b.salt_hex, b.key_check_hex);
}

bool operator==(const GenesisBody& a, const GenesisBody& b) {
  return std::tie(a.ledger_id, a.row_digest_format, a.format) ==
         std::tie(b.ledger_id, b.row_digest_format, b.format);
}

bool operator==(const SourceBody& a, const SourceBody& b) {
  return SourceToJson(a.source) == SourceToJson(b.source) && a.absolute_path == b.absolute_path;
}

namespace {

auto Tie(const SealBody& s) {
  const SealBody::Holdout& h = s.holdout;
  const SealBody::Dev& d = s.dev;
  return std::tie(s.source_entry, s.strategy, s.fraction, s.seed, s.requested_holdout, s.split_note,
                  h.rows, h.row_set, h.sealed_rows, h.sealed_digests, h.sealed_summary, h.cipher,
                  h.compression, h.encoding, d.rows, d.row_set, d.row_digests, d.content_digests,
                  d.file_path, d.file_sha256, d.file_size, s.key,
                  s.cross_duplicates_moved_to_dev, s.group_violations, s.time_violations,
                  s.budget_queries, s.budget_half_width, s.budget_delta);
}

}  // namespace

bool operator==(const SealBody& a, const SealBody& b) {
  return Tie(a) == Tie(b) && RowsSummaryToJson(a.dev.summary) == RowsSummaryToJson(b.dev.summary);
}

}  // namespace unseen
