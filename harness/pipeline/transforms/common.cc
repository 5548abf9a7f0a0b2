#include "harness/pipeline/transforms/common.h"

#include <cmath>
#include <set>
#include <utility>

namespace unseen::internal {

using nlohmann::json;

TransformParams::TransformParams(std::string kind, const json& params)
    : kind_(std::move(kind)), params_(params.is_null() ? json::object() : params) {}

Status TransformParams::Error(const std::string& name, const std::string& what) const {
  return Status::InvalidArgument("transform '" + kind_ + "': parameter '" + name + "' " + what);
}

Status TransformParams::CheckKnown(const std::vector<std::string>& allowed) const {
  if (!params_.is_object()) {
    return Status::InvalidArgument("transform '" + kind_ +
                                   "': parameters must be a table of name = value");
  }
  for (const auto& item : params_.items()) {
    bool known = false;
    for (const std::string& a : allowed) known = known || a == item.key();
    if (!known) {
      std::string expected = allowed.empty() ? "none" : "one of " + JoinNames(allowed);
      return Status::InvalidArgument("transform '" + kind_ + "': unknown parameter '" + item.key() +
                                     "'; expected " + expected);
    }
  }
  return Status::OK();
}

bool TransformParams::Has(const std::string& name) const { return params_.contains(name); }

const json& TransformParams::Get(const std::string& name) const { return params_.at(name); }

Result<std::string> TransformParams::Choice(const std::string& name,
                                            const std::vector<std::string>& choices,
                                            const std::string& def) const {
  if (!Has(name)) return def;
  const json& v = params_.at(name);
  if (v.is_string()) {
    for (const std::string& c : choices) {
      if (v.get<std::string>() == c) return c;
    }
  }
  return Error(name, "must be one of " + JoinNames(choices) + ", got " + v.dump());
}

Result<int64_t> TransformParams::Int(const std::string& name, int64_t def, int64_t lo,
                                     int64_t hi) const {
  if (!Has(name)) return def;
  const json& v = params_.at(name);
  if (!v.is_number_integer()) return Error(name, "must be an integer, got " + v.dump());
  int64_t x = v.is_number_unsigned() && v.get<uint64_t>() > static_cast<uint64_t>(INT64_MAX)
                  ? INT64_MAX
                  : v.get<int64_t>();
  if (x < lo || x > hi) {
    return Error(name, "must be between " + std::to_string(lo) + " and " + std::to_string(hi) +
                           ", got " + v.dump());
  }
  return x;
}

Result<double> TransformParams::Number(const std::string& name, double def) const {
  if (!Has(name)) return def;
  const json& v = params_.at(name);
  if (!v.is_number()) return Error(name, "must be a number, got " + v.dump());
  return v.get<double>();
}

Result<bool> TransformParams::Bool(const std::string& name, bool def) const {
  if (!Has(name)) return def;
  const json& v = params_.at(name);
  if (!v.is_boolean()) return Error(name, "must be true or false, got " + v.dump());
  return v.get<bool>();
}

Result<std::vector<std::string>> TransformParams::Columns() const {
  std::vector<std::string> out;
  if (!Has("columns")) return out;
  const json& v = params_.at("columns");
  if (!v.is_array() || v.empty()) {
    return Error("columns", "must be a non-empty list of column names, got " + v.dump());
  }
  std::set<std::string> seen;
  for (const json& e : v) {
    if (!e.is_string() || e.get<std::string>().empty()) {
      return Error("columns", "must list column names as strings, got " + e.dump());
    }
    if (!seen.insert(e.get<std::string>()).second) {
      return Error("columns", "names column '" + e.get<std::string>() + "' twice");
    }
    out.push_back(e.get<std::string>());
  }
  return out;
}

namespace {

bool Fits(const FrameColumn& c, ColumnNeed need) {
  switch (need) {
    case ColumnNeed::kNumeric:
      return c.numeric;
    case ColumnNeed::kCategorical:
      return !c.numeric;
    case ColumnNeed::kAny:
      return true;
  }
  return false;
}

const char* NeedWord(ColumnNeed need) {
  return need == ColumnNeed::kNumeric ? "numeric" : "categorical";
}

}  // namespace

Result<std::vector<std::string>> ResolveColumns(const std::string& kind, const Frame& frame,
                                                const std::vector<std::string>& requested,
                                                ColumnNeed need) {
  std::vector<std::string> out;
  if (requested.empty()) {
    for (const FrameColumn& c : frame.columns) {
      if (Fits(c, need)) out.push_back(c.name);
    }
    return out;
  }
  for (const std::string& name : requested) {
    UNSEEN_ASSIGN_OR_RETURN(size_t index, FindColumn(kind, frame, name, need));
    (void)index;
    out.push_back(name);
  }
  return out;
}

Result<size_t> FindColumn(const std::string& kind, const Frame& in, const std::string& name,
                          ColumnNeed need) {
  int index = in.Find(name);
  if (index < 0) {
    return Status::InvalidArgument("transform '" + kind + "': column '" + name +
                                   "' is not in the data; expected one of " +
                                   JoinNames(in.Names()));
  }
  const FrameColumn& c = in.columns[static_cast<size_t>(index)];
  if (!Fits(c, need)) {
    return Status::InvalidArgument("transform '" + kind + "': column '" + name + "' is " +
                                   (c.numeric ? "numeric" : "categorical") + "; expected a " +
                                   NeedWord(need) + " column");
  }
  return static_cast<size_t>(index);
}

Status CheckUniqueNames(const std::string& kind, const Frame& out) {
  std::set<std::string> seen;
  for (const FrameColumn& c : out.columns) {
    if (!seen.insert(c.name).second) {
      return Status::InvalidArgument("transform '" + kind + "': produces column '" + c.name +
                                     "', which already exists; rename the input column");
    }
  }
  return Status::OK();
}

Frame ReplaceColumns(const Frame& in, const std::vector<size_t>& removed,
                     std::vector<FrameColumn> block) {
  std::set<size_t> gone(removed.begin(), removed.end());
  size_t at = gone.empty() ? in.cols() : *gone.begin();
  Frame out;
  out.columns.reserve(in.cols() - gone.size() + block.size());
  for (size_t i = 0; i <= in.cols(); ++i) {
    if (i == at) {
      for (FrameColumn& b : block) out.columns.push_back(std::move(b));
    }
    if (i < in.cols() && gone.count(i) == 0) out.columns.push_back(in.columns[i]);
  }
  return out;
}

std::string JoinNames(const std::vector<std::string>& names, size_t limit) {
  std::string out;
  for (size_t i = 0; i < names.size() && i < limit; ++i) {
    if (i > 0) out += ", ";
    out += names[i];
  }
  if (names.size() > limit) out += ", ...";
  return out;
}

Moments ColumnMoments(const std::vector<double>& values) {
  Moments m;
  double sum = 0;
  for (double v : values) {
    if (std::isnan(v)) continue;
    sum += v;
    ++m.count;
  }
  if (m.count == 0) return m;
  m.mean = sum / static_cast<double>(m.count);
  // Two passes: the mean first, then squared deviations (no cancellation).
  double ss = 0;
  for (double v : values) {
    if (!std::isnan(v)) ss += (v - m.mean) * (v - m.mean);
  }
  m.var = ss / static_cast<double>(m.count);
  return m;
}

// --- TransformBase ---

json TransformBase::FittedParams() const {
  json out = {{"kind", kind_}, {"params", params_}};
  if (fitted_) out["state"] = SaveState();
  return out;
}

Status TransformBase::Configure(const json& params) {
  TransformParams reader(kind_, params);
  UNSEEN_RETURN_IF_ERROR(ConfigureParams(reader));
  params_ = params.is_null() ? json::object() : params;
  return Status::OK();
}

Status TransformBase::LoadFitted(const json& fitted) {
  try {
    if (!fitted.is_object() || !fitted.contains("kind") || fitted.at("kind") != kind_) {
      return Invalid("fitted parameters are not those of a '" + kind_ + "' transform");
    }
    UNSEEN_RETURN_IF_ERROR(Configure(fitted.value("params", json::object())));
    if (!fitted.contains("state")) {
      return Invalid("fitted parameters have no \"state\" (the transform was never fitted)");
    }
    fitted_ = false;
    UNSEEN_RETURN_IF_ERROR(LoadState(fitted.at("state")));
    fitted_ = true;
    return Status::OK();
  } catch (const json::exception& e) {
    fitted_ = false;
    return Invalid(std::string("malformed fitted parameters: ") + e.what());
  }
}

Status TransformBase::CheckFitted() const {
  if (fitted_) return Status::OK();
  return Status::FailedPrecondition("transform '" + kind_ +
                                    "': Apply before Fit; fit it on its training rows first");
}

Status TransformBase::Invalid(const std::string& what) const {
  return Status::InvalidArgument("transform '" + kind_ + "': " + what);
}

}  // namespace unseen::internal
