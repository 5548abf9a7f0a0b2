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

ColumnType ColumnTypeFromName(std::string_view name) {
  return name == "numeric" ? ColumnType::kNumeric : ColumnType::kCategorical;
}

ColumnRole ColumnRoleFromName(std::string_view name) {
  if (name == "target") return ColumnRole::kTarget;
  if (name == "id") return ColumnRole::kId;
  if (name == "group") return ColumnRole::kGroup;
  if (name == "time") return ColumnRole::kTime;
  return ColumnRole::kFeature;
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

}  // namespace unseen
