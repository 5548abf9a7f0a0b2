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
    cols.push_back(
        {{"name", c.name}, {"type", ColumnTypeName(c.type)}, {"role", ColumnRoleName(c.role)}});
  }
  json j = {{"file", {{"path", s.path}, {"sha256", ToHex(s.file_sha256)}, {"size", s.file_size}}},
            {"delimiter", std::string(1, s.delimiter)},
            {"rows", s.rows},
            {"columns", cols},
            {"task", TaskKindName(s.task)},
            {"row_digest_format", s.row_digest_format},
            {"merkle_root", ToHex(s.merkle_root)}};
  return j.dump();
}

RowsSummary SummaryOfSource(const SourceInfo& s) {
  RowsSummary r;
  r.rows = s.rows;
  for (const ColumnInfo& c : s.columns) r.missing.push_back(c.missing);
  r.task = s.task;
  r.target = s.target;
  return r;
}

std::string RowsSummaryToJson(const RowsSummary& s) {
  json target;
  if (s.task == TaskKind::kClassification) {
    target["classes"] = s.target.classes;
  } else {
    target = {{"min", s.target.min}, {"max", s.target.max}, {"mean", s.target.mean}};
  }
  return json{{"rows", s.rows}, {"missing", s.missing}, {"target", target}}.dump();
}

Result<RowsSummary> RowsSummaryFromJson(std::string_view text, size_t columns) {
  const json j = json::parse(text, nullptr, /*allow_exceptions=*/false);
  auto bad = [](const std::string& what) {
    return Status::InvalidArgument("row summary: " + what);
  };
  if (!j.is_object()) return bad("expected a JSON object");
  RowsSummary s;
  if (!j.contains("rows") || !j["rows"].is_number_unsigned()) return bad("'rows': expected a count");
  s.rows = j["rows"].get<uint64_t>();
  if (!j.contains("missing") || !j["missing"].is_array() ||
      (columns != 0 && j["missing"].size() != columns)) {
    return bad("'missing': expected one count per column (" + std::to_string(columns) + ")");
  }
  for (const json& m : j["missing"]) {
    if (!m.is_number_unsigned()) return bad("'missing': expected counts");
    s.missing.push_back(m.get<uint64_t>());
  }
  if (!j.contains("target") || !j["target"].is_object()) return bad("'target': expected an object");
  const json& t = j["target"];
  if (t.contains("classes")) {
    if (!t["classes"].is_object()) return bad("'target.classes': expected an object");
    s.task = TaskKind::kClassification;
    for (const auto& [label, count] : t["classes"].items()) {
      if (!count.is_number_unsigned()) return bad("'target.classes': expected counts");
      s.target.classes[label] = count.get<uint64_t>();
    }
  } else {
    for (const char* k : {"min", "max", "mean"}) {
      if (!t.contains(k) || !t[k].is_number()) {
        return bad(std::string("'target.") + k + "': expected a number");
      }
    }
    s.task = TaskKind::kRegression;
    s.target.min = t["min"].get<double>();
    s.target.max = t["max"].get<double>();
    s.target.mean = t["mean"].get<double>();
  }
  return s;
}

}  // namespace unseen
