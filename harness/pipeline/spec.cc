#include "harness/pipeline/spec.h"

#include <toml++/toml.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <set>
#include <sstream>
#include <utility>

#include "harness/pipeline/blend.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/transform.h"

namespace unseen {

namespace {

using nlohmann::json;

std::string Where(const std::string& file, SpecPosition pos) {
  if (pos.line <= 0) return file + ":1:1: ";
  if (pos.column <= 0) return file + ":" + std::to_string(pos.line) + ": ";
  return file + ":" + std::to_string(pos.line) + ":" + std::to_string(pos.column) + ": ";
}

std::string KeyName(const toml::key& k) { return std::string(k.str()); }

SpecPosition PositionOf(const toml::source_region& r) {
  return {static_cast<int>(r.begin.line), static_cast<int>(r.begin.column)};
}

Status ErrorAt(const std::string& file, SpecPosition pos, const std::string& what) {
  return Status::InvalidArgument(Where(file, pos) + what);
}

std::string Join(const std::vector<std::string>& items, const std::string& sep) {
  std::string out;
  for (size_t i = 0; i < items.size(); ++i) out += (i ? sep : "") + items[i];
  return out;
}

std::string TypeName(const toml::node& n) {
  switch (n.type()) {
    case toml::node_type::string:
      return "a string";
    case toml::node_type::integer:
      return "an integer";
    case toml::node_type::floating_point:
      return "a float";
    case toml::node_type::boolean:
      return "a boolean";
    case toml::node_type::array:
      return "an array";
    case toml::node_type::table:
      return "a table";
    default:
      return "a date/time";
  }
}

// A table's entries in file order (toml++ iterates them by key).
std::vector<std::pair<const toml::key*, const toml::node*>> InFileOrder(const toml::table& t) {
  std::vector<std::pair<const toml::key*, const toml::node*>> out;
  for (auto&& [k, v] : t) out.emplace_back(&k, &v);
  std::stable_sort(out.begin(), out.end(), [](const auto& a, const auto& b) {
    const auto &pa = a.first->source().begin, &pb = b.first->source().begin;
    return pa.line != pb.line ? pa.line < pb.line : pa.column < pb.column;
  });
  return out;
}

class SpecParser {
 public:
  explicit SpecParser(std::string file) : file_(std::move(file)) {}

  Result<PipelineSpec> Parse(const toml::table& root) {
    PipelineSpec spec;
    spec.path = file_;
    bool have_learner = false;
    for (const auto& [key, node] : InFileOrder(root)) {
      SpecPosition at = PositionOf(key->source());
      const std::string k = KeyName(*key);
      if (k == "transform") {
        const toml::array* a = node->as_array();
        if (a == nullptr || (!a->empty() && !a->is_array_of_tables())) {
          return ErrorAt(file_, at,
                         "'transform' must be [[transform]] tables, got " + TypeName(*node));
        }
        for (const toml::node& t : *a) {
          UNSEEN_ASSIGN_OR_RETURN(StepSpec step, Step(*t.as_table(), "[[transform]]"));
          spec.transforms.push_back(std::move(step));
        }
      } else if (k == "learner") {
        if (!node->is_table()) {
          return ErrorAt(file_, at,
                         "'learner' must be a single [learner] table, got " + TypeName(*node));
        }
        UNSEEN_ASSIGN_OR_RETURN(spec.learner, Step(*node->as_table(), "[learner]"));
        have_learner = true;
      } else if (k == "select") {
        if (!node->is_table()) {
          return ErrorAt(file_, at, "'select' must be a [select] table, got " + TypeName(*node));
        }
        UNSEEN_ASSIGN_OR_RETURN(SelectSpec select, Select(*node->as_table()));
        spec.select = select;
      } else {
        return ErrorAt(
            file_, at,
            "unknown top-level key '" + k + "'; expected [[transform]], [learner] or [select]");
      }
    }
    if (!have_learner) {
      return ErrorAt(file_, {1, 1},
                     "no [learner] table; expected one naming the final model, e.g. "
                     "[learner] kind = \"ridge\"");
    }
    return spec;
  }

 private:
  Result<StepSpec> Step(const toml::table& t, const std::string& what) {
    StepSpec step;
    SpecPosition at = PositionOf(t.source());
    step.line = at.line;
    step.column = at.column;
    const toml::node* kind = t.get("kind");
    if (kind == nullptr) {
      std::string expected = what == "[[transform]]" ? "one of " + Join(TransformKinds(), ", ")
                                                     : "the learner's kind, e.g. \"ridge\"";
      return ErrorAt(file_, at, what + " table has no 'kind'; expected kind = " + expected);
    }
    for (const auto& [key, node] : InFileOrder(t)) {
      step.keys[KeyName(*key)] = PositionOf(key->source());
    }
    if (!kind->is_string() || kind->as_string()->get().empty()) {
      return ErrorAt(file_, step.keys["kind"],
                     "'kind' must be a non-empty string, got " + TypeName(*kind));
    }
    step.kind = kind->as_string()->get();
    for (const auto& [key, node] : InFileOrder(t)) {
      if (KeyName(*key) == "kind") continue;
      UNSEEN_ASSIGN_OR_RETURN(step.params[KeyName(*key)], Value(*node, KeyName(*key), &step));
    }
    return step;
  }

  // A parameter value as JSON; nested table keys are recorded as "a.b".
  Result<json> Value(const toml::node& n, const std::string& path, StepSpec* step) {
    SpecPosition at = step->keys[path];
    switch (n.type()) {
      case toml::node_type::string:
        return json(n.as_string()->get());
      case toml::node_type::integer:
        return json(n.as_integer()->get());
      case toml::node_type::boolean:
        return json(n.as_boolean()->get());
      case toml::node_type::floating_point: {
        double v = n.as_floating_point()->get();
        if (!std::isfinite(v)) return ErrorAt(file_, at, "'" + path + "' must be a finite number");
        return json(v);
      }
      case toml::node_type::array: {
        const toml::array& a = *n.as_array();
        if (a.empty()) {
          return ErrorAt(file_, at,
                         "'" + path +
                             "' is an empty array; expected a value or a non-empty "
                             "list of grid values");
        }
        json out = json::array();
        for (const toml::node& e : a) {
          UNSEEN_ASSIGN_OR_RETURN(json v, Value(e, path, step));
          out.push_back(std::move(v));
        }
        return out;
      }
      case toml::node_type::table: {
        json out = json::object();
        for (const auto& [key, node] : InFileOrder(*n.as_table())) {
          std::string sub = path + "." + KeyName(*key);
          if (step->keys.count(sub) == 0) step->keys[sub] = PositionOf(key->source());
          UNSEEN_ASSIGN_OR_RETURN(out[KeyName(*key)], Value(*node, sub, step));
        }
        return out;
      }
      default:
        return ErrorAt(file_, at,
                       "'" + path +
                           "' is a date/time; expected a number, string, "
                           "boolean, array or table");
    }
  }

  Result<SelectSpec> Select(const toml::table& t) {
    SelectSpec s;
    s.line = PositionOf(t.source()).line;
    SpecPosition folds_at, validation_at;
    for (const auto& [key, node] : InFileOrder(t)) {
      SpecPosition at = PositionOf(key->source());
      const std::string k = KeyName(*key);
      if (k == "folds") {
        if (!node->is_integer())
          return ErrorAt(file_, at, "'folds' must be an integer, got " + TypeName(*node));
        int64_t v = node->as_integer()->get();
        if (v < 2 || v > 1000000) {
          return ErrorAt(file_, at, "'folds' is " + std::to_string(v) + "; expected at least 2");
        }
        s.folds = static_cast<int>(v);
        folds_at = at;
      } else if (k == "validation") {
        if (!node->is_number())
          return ErrorAt(file_, at, "'validation' must be a fraction, got " + TypeName(*node));
        double v = node->is_integer() ? static_cast<double>(node->as_integer()->get())
                                      : node->as_floating_point()->get();
        if (!(v > 0 && v < 1)) {
          std::string got =
              node->is_integer() ? std::to_string(node->as_integer()->get()) : json(v).dump();
          return ErrorAt(
              file_, at,
              "'validation' is " + got + "; expected a fraction strictly between 0 and 1");
        }
        s.validation = v;
        validation_at = at;
      } else if (k == "metric") {
        const std::vector<std::string>& metrics = SpecMetrics();
        if (!node->is_string() ||
            std::find(metrics.begin(), metrics.end(), node->as_string()->get()) == metrics.end()) {
          std::string got =
              node->is_string() ? "'" + node->as_string()->get() + "'" : TypeName(*node);
          return ErrorAt(file_, at,
                         "unknown metric " + got + "; expected one of " + Join(metrics, ", "));
        }
        s.metric = node->as_string()->get();
      } else if (k == "seed") {
        if (!node->is_integer() || node->as_integer()->get() < 0) {
          return ErrorAt(file_, at, "'seed' must be a non-negative integer");
        }
        s.seed = static_cast<uint64_t>(node->as_integer()->get());
      } else {
        return ErrorAt(
            file_, at,
            "unknown key '" + k + "' in [select]; expected folds, validation, metric or seed");
      }
    }
    if (s.folds && s.validation) {
      bool validation_later =
          validation_at.line > folds_at.line ||
          (validation_at.line == folds_at.line && validation_at.column > folds_at.column);
      return ErrorAt(file_, validation_later ? validation_at : folds_at,
                     "[select] has both 'folds' and 'validation'; expected one of them");
    }
    return s;
  }

  std::string file_;
};

// --- grid ---

struct Axis {
  int step;  // index into transforms, or -1 for the learner
  std::vector<std::string> path;
  std::string name;  // "transform[1].degree", "learner.base.depth"
  json values;
};

bool IsAxis(const std::string& key, const json& v) {
  if (!v.is_array()) return false;
  if (key != "columns") return true;
  return std::any_of(v.begin(), v.end(), [](const json& e) { return e.is_array(); });
}

void CollectAxes(const json& params, int step, const std::string& prefix,
                 std::vector<std::string>* path, std::vector<Axis>* out) {
  for (const auto& item : params.items()) {
    path->push_back(item.key());
    if (IsAxis(item.key(), item.value())) {
      out->push_back({step, *path, prefix + "." + Join(*path, "."), item.value()});
    } else if (item.value().is_object()) {
      CollectAxes(item.value(), step, prefix, path, out);
    }
    path->pop_back();
  }
}

std::vector<Axis> Axes(const PipelineSpec& spec) {
  std::vector<Axis> axes;
  std::vector<std::string> path;
  for (size_t i = 0; i < spec.transforms.size(); ++i) {
    CollectAxes(spec.transforms[i].params, static_cast<int>(i),
                "transform[" + std::to_string(i) + "]", &path, &axes);
  }
  // A blend has no grid: its `members` list is one value (ReadBlendSpec
  // refuses arrays anywhere else).
  if (spec.learner.kind != kBlendKind)
    CollectAxes(spec.learner.params, -1, "learner", &path, &axes);
  return axes;
}

void SetAt(json* params, const std::vector<std::string>& path, const json& value) {
  json* p = params;
  for (size_t i = 0; i + 1 < path.size(); ++i) p = &(*p)[path[i]];
  (*p)[path.back()] = value;
}

}  // namespace

std::string SpecWhere(const std::string& file, SpecPosition pos) { return Where(file, pos); }

const std::vector<std::string>& SpecMetrics() {
  static const auto* metrics = new std::vector<std::string>{
      "error_rate", "accuracy", "balanced_accuracy", "log_loss", "brier", "auc", "mse", "mae"};
  return *metrics;
}

Result<PipelineSpec> ParseSpecText(const std::string& text, const std::string& name) {
  try {
    toml::table root = toml::parse(std::string_view(text), std::string_view(name));
    return SpecParser(name).Parse(root);
  } catch (const toml::parse_error& e) {
    return ErrorAt(name, PositionOf(e.source()),
                   "TOML syntax error: " + std::string(e.description()));
  } catch (const std::exception& e) {
    return Status::Internal(name + ": " + e.what());
  }
}

Result<PipelineSpec> ParseSpecFile(const std::string& path) {
  std::ifstream in(path, std::ios::binary);
  if (!in) return Status::NotFound(path + ": cannot open the spec file");
  std::ostringstream text;
  text << in.rdbuf();
  if (in.bad()) return Status::IOError(path + ": read failed");
  return ParseSpecText(text.str(), path);
}

uint64_t GridSize(const PipelineSpec& spec) {
  uint64_t n = 1;
  for (const Axis& a : Axes(spec)) {
    uint64_t k = a.values.size();
    n = n > UINT64_MAX / k ? UINT64_MAX : n * k;
  }
  return n;
}

std::vector<Candidate> ExpandGrid(const PipelineSpec& spec) {
  std::vector<Axis> axes = Axes(spec);
  std::vector<size_t> at(axes.size(), 0);
  std::vector<Candidate> out;
  while (true) {
    Candidate c{spec.transforms, spec.learner, json::object()};
    for (size_t a = 0; a < axes.size(); ++a) {
      const json& v = axes[a].values[at[a]];
      StepSpec& step =
          axes[a].step < 0 ? c.learner : c.transforms[static_cast<size_t>(axes[a].step)];
      SetAt(&step.params, axes[a].path, v);
      c.settings[axes[a].name] = v;
    }
    out.push_back(std::move(c));
    // Odometer: the last axis turns fastest.
    size_t a = axes.size();
    while (a > 0 && ++at[a - 1] == axes[a - 1].values.size()) at[--a] = 0;
    if (a == 0) break;
  }
  return out;
}

namespace {

// Where to point for an error from MakeTransform/MakeLearner: the key whose
// name the message quotes (the deepest one), else the step's table.
SpecPosition Blame(const StepSpec& step, const std::string& message) {
  SpecPosition best{step.line, step.column};
  size_t best_len = 0;
  for (const auto& [path, pos] : step.keys) {
    if (path == "kind") continue;
    std::string last = path.substr(path.rfind('.') == std::string::npos ? 0 : path.rfind('.') + 1);
    if (message.find("'" + last + "'") != std::string::npos && path.size() > best_len) {
      best = pos;
      best_len = path.size();
    }
  }
  return best;
}

SpecPosition KeyOrTable(const StepSpec& step, const std::string& key) {
  auto it = step.keys.find(key);
  return it != step.keys.end() ? it->second : SpecPosition{step.line, step.column};
}

// The column names a step may mention: the source's, plus those that
// earlier steps can produce ("c=value" after onehot of c, products after
// poly, "pcN" after pca).
class ColumnUniverse {
 public:
  explicit ColumnUniverse(const std::vector<std::string>& columns)
      : names_(columns.begin(), columns.end()) {}

  bool Known(const std::string& name) const {
    if (names_.count(name) > 0) return true;
    for (const std::string& p : onehot_prefixes_) {
      if (name.size() > p.size() && name.compare(0, p.size(), p) == 0) return true;
    }
    if (pca_ && name.size() > 2 && name.compare(0, 2, "pc") == 0 &&
        name.find_first_not_of("0123456789", 2) == std::string::npos) {
      return true;
    }
    return poly_ && KnownProduct(name);
  }

  // Records what step `kind` acting on `named` (empty: all) may produce.
  void After(const std::string& kind, const std::vector<std::string>& named) {
    if (kind == "onehot") {
      for (const std::string& n : named.empty() ? All() : named) onehot_prefixes_.insert(n + "=");
    }
    poly_ = poly_ || kind == "poly";
    pca_ = pca_ || kind == "pca";
  }

  std::vector<std::string> All() const { return {names_.begin(), names_.end()}; }

 private:
  // "a*b^2": every factor, without its power, is a known name.
  bool KnownProduct(const std::string& name) const {
    size_t start = 0;
    bool any = false;
    while (start <= name.size()) {
      size_t end = name.find('*', start);
      std::string factor =
          name.substr(start, end == std::string::npos ? std::string::npos : end - start);
      size_t hat = factor.rfind('^');
      if (hat != std::string::npos && hat + 1 < factor.size() &&
          factor.find_first_not_of("0123456789", hat + 1) == std::string::npos) {
        factor.resize(hat);
      }
      if (factor.empty() || (names_.count(factor) == 0 && !OneHotName(factor))) return false;
      any = true;
      if (end == std::string::npos) break;
      start = end + 1;
    }
    return any;
  }
  bool OneHotName(const std::string& name) const {
    for (const std::string& p : onehot_prefixes_) {
      if (name.size() > p.size() && name.compare(0, p.size(), p) == 0) return true;
    }
    return false;
  }

  std::set<std::string> names_;
  std::set<std::string> onehot_prefixes_;
  bool poly_ = false;
  bool pca_ = false;
};

// The strings named by a `columns` value (a list, or a grid of lists).
std::vector<std::string> NamedColumns(const json& v) {
  std::vector<std::string> out;
  if (!v.is_array()) return out;
  for (const json& e : v) {
    if (e.is_string()) out.push_back(e.get<std::string>());
    if (e.is_array()) {
      for (const json& n : e) {
        if (n.is_string()) out.push_back(n.get<std::string>());
      }
    }
  }
  return out;
}

Status CheckColumns(const PipelineSpec& spec, const std::vector<std::string>& columns) {
  if (columns.empty()) return Status::OK();
  ColumnUniverse universe(columns);
  for (size_t i = 0; i < spec.transforms.size(); ++i) {
    const StepSpec& step = spec.transforms[i];
    std::vector<std::string> named;
    if (step.params.contains("columns")) named = NamedColumns(step.params.at("columns"));
    for (const std::string& name : named) {
      if (!universe.Known(name)) {
        return ErrorAt(spec.path, KeyOrTable(step, "columns"),
                       "transform[" + std::to_string(i) + "] (" + step.kind +
                           "): unknown column '" + name + "'; expected one of " +
                           Join(universe.All(), ", "));
      }
    }
    universe.After(step.kind, named);
  }
  return Status::OK();
}

Status CheckKinds(const PipelineSpec& spec) {
  const std::vector<std::string>& kinds = TransformKinds();
  for (size_t i = 0; i < spec.transforms.size(); ++i) {
    const StepSpec& step = spec.transforms[i];
    if (std::find(kinds.begin(), kinds.end(), step.kind) == kinds.end()) {
      return ErrorAt(
          spec.path, KeyOrTable(step, "kind"),
          "unknown transform kind '" + step.kind + "'; expected one of " + Join(kinds, ", "));
    }
  }
  if (spec.learner.kind.empty()) {
    return ErrorAt(spec.path, {spec.learner.line, spec.learner.column},
                   "the learner has no kind; expected [learner] kind = \"...\"");
  }
  std::vector<std::string> learners = LearnerKinds();
  learners.push_back(kBlendKind);
  if (std::find(learners.begin(), learners.end(), spec.learner.kind) == learners.end()) {
    return ErrorAt(spec.path, KeyOrTable(spec.learner, "kind"),
                   "unknown learner kind '" + spec.learner.kind + "'; expected one of " +
                       Join(learners, ", "));
  }
  return Status::OK();
}

std::string GridPoint(const Candidate& c) {
  return c.settings.empty() ? "" : " (grid point " + c.settings.dump() + ")";
}

Status CheckCandidate(const PipelineSpec& spec, const Candidate& c) {
  for (size_t i = 0; i < c.transforms.size(); ++i) {
    const StepSpec& step = c.transforms[i];
    Result<std::unique_ptr<Transform>> t = MakeTransform(step.kind, step.params);
    if (!t.ok()) {
      const std::string& m = t.status().message();
      return ErrorAt(spec.path, Blame(spec.transforms[i], m),
                     "transform[" + std::to_string(i) + "]: " + m + GridPoint(c));
    }
  }
  Result<std::unique_ptr<Learner>> l = MakeLearner(c.learner.kind, c.learner.params);
  if (!l.ok()) {
    const std::string& m = l.status().message();
    return ErrorAt(spec.path, Blame(spec.learner, m), "learner: " + m + GridPoint(c));
  }
  return Status::OK();
}

}  // namespace

Status ValidateSpec(const PipelineSpec& spec, const std::vector<std::string>& columns) {
  try {
    UNSEEN_RETURN_IF_ERROR(CheckKinds(spec));
    if (spec.learner.kind == kBlendKind) return ReadBlendSpec(spec).status();
    UNSEEN_RETURN_IF_ERROR(CheckColumns(spec, columns));
    uint64_t size = GridSize(spec);
    if (size > kMaxSpecCandidates) {
      std::vector<Axis> axes = Axes(spec);
      const StepSpec& step =
          axes[0].step < 0 ? spec.learner : spec.transforms[static_cast<size_t>(axes[0].step)];
      return ErrorAt(spec.path, KeyOrTable(step, Join(axes[0].path, ".")),
                     "the grid has " + std::to_string(size) + " candidates; expected at most " +
                         std::to_string(kMaxSpecCandidates));
    }
    for (const Candidate& c : ExpandGrid(spec)) UNSEEN_RETURN_IF_ERROR(CheckCandidate(spec, c));
    return Status::OK();
  } catch (const std::exception& e) {
    return Status::Internal(spec.path + ": validating the spec: " + e.what());
  }
}

}  // namespace unseen
