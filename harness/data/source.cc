#include "harness/data/source.h"

#include <nlohmann/json.hpp>

namespace unseen {

using json = nlohmann::json;

const char* ColumnTypeName(ColumnType t) {
  return t == ColumnType::kNumeric ? "numeric" : "categorical";
}

const char* ColumnRoleName(ColumnRole r) {
  switch (r) {
    case ColumnRole::kFeature: return "feature";
    case ColumnRole::kTarget: return "target";
    case ColumnRole::kId: return "id";
    case ColumnRole::kGroup: return "group";
    case ColumnRole::kTime: return "time";
  }
  return "feature";
}

const char* TaskKindName(TaskKind t) {
  return t == TaskKind::kClassification ? "classification" : "regression";
}

Result<TaskKind> ParseTaskKind(std::string_view name) {
  if (name == "classification") return TaskKind::kClassification;
  if (name == "regression") return TaskKind::kRegression;
  return Status::InvalidArgument("--task: expected classification, regression or auto, got '" +
                                 std::string(name) + "'");
}

std::optional<size_t> SourceInfo::ColumnOf(ColumnRole role) const {
  for (size_t i = 0; i < columns.size(); ++i) {
    if (columns[i].role == role) return i;
  }
  return std::nullopt;
}

std::optional<size_t> SourceInfo::ColumnNamed(const std::string& name) const {
  for (size_t i = 0; i < columns.size(); ++i) {
    if (columns[i].name == name) return i;
  }
  return std::nullopt;
}

std::string SourceToJson(const SourceInfo& s) {
  json cols = json::array();
  for (const ColumnInfo& c : s.columns) {
    cols.push_back({{"name", c.name}, {"type", ColumnTypeName(c.type)},
                    {"role", ColumnRoleName(c.role)}, {"missing", c.missing}});
  }
  json target;
  if (s.task == TaskKind::kClassification) {
    target["classes"] = s.target.classes;
  } else {
    target = {{"min", s.target.min}, {"max", s.target.max}, {"mean", s.target.mean}};
  }
  json j = {{"file", {{"path", s.path}, {"sha256", ToHex(s.file_sha256)}, {"size", s.file_size}}},
            {"delimiter", std::string(1, s.delimiter)},
            {"rows", s.rows},
            {"columns", cols},
            {"task", TaskKindName(s.task)},
            {"target", target},
            {"row_digest_format", s.row_digest_format},
            {"merkle_root", ToHex(s.merkle_root)}};
  return j.dump();
}

namespace {

ColumnRole RoleFromName(const std::string& n) {
  if (n == "target") return ColumnRole::kTarget;
  if (n == "id") return ColumnRole::kId;
  if (n == "group") return ColumnRole::kGroup;
  if (n == "time") return ColumnRole::kTime;
  return ColumnRole::kFeature;
}

}  // namespace

Result<SourceInfo> SourceFromJson(const std::string& text) {
  SourceInfo s;
  try {
    json j = json::parse(text);
    s.path = j.at("file").at("path").get<std::string>();
    UNSEEN_ASSIGN_OR_RETURN(s.file_sha256, Digest256FromHex(j.at("file").at("sha256").get<std::string>()));
    s.file_size = j.at("file").at("size").get<uint64_t>();
    std::string delim = j.at("delimiter").get<std::string>();
    if (delim.size() != 1) return Status::Corruption("source entry: bad delimiter");
    s.delimiter = delim[0];
    s.rows = j.at("rows").get<uint64_t>();
    for (const json& c : j.at("columns")) {
      ColumnInfo ci;
      ci.name = c.at("name").get<std::string>();
      ci.type = c.at("type").get<std::string>() == "numeric" ? ColumnType::kNumeric
                                                             : ColumnType::kCategorical;
      ci.role = RoleFromName(c.at("role").get<std::string>());
      ci.missing = c.at("missing").get<uint64_t>();
      s.columns.push_back(ci);
    }
    UNSEEN_ASSIGN_OR_RETURN(s.task, ParseTaskKind(j.at("task").get<std::string>()));
    const json& t = j.at("target");
    if (s.task == TaskKind::kClassification) {
      s.target.classes = t.at("classes").get<std::map<std::string, uint64_t>>();
    } else {
      s.target.min = t.at("min").get<double>();
      s.target.max = t.at("max").get<double>();
      s.target.mean = t.at("mean").get<double>();
    }
    s.row_digest_format = j.at("row_digest_format").get<int>();
    UNSEEN_ASSIGN_OR_RETURN(s.merkle_root, Digest256FromHex(j.at("merkle_root").get<std::string>()));
  } catch (const std::exception& e) {
    return Status::Corruption(std::string("source entry is malformed: ") + e.what());
  }
  return s;
}

}  // namespace unseen
