// Pipeline spec: the TOML file that names a pipeline's transforms, its
// learner, the parameter grid (any array value is a grid axis) and how a
// candidate is selected inside dev. Parsing and grid expansion are pure
// functions of their inputs; thread-safe. Format: docs/pipelines.md.
#ifndef UNSEEN_HARNESS_PIPELINE_SPEC_H_
#define UNSEEN_HARNESS_PIPELINE_SPEC_H_

#include <cstdint>
#include <map>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "storage/status.h"

namespace unseen {

// A place in the spec file, 1-based (0 when unknown).
struct SpecPosition {
  int line = 0;
  int column = 0;
};

// "FILE:LINE:COL: " to start a message about `pos` in a spec ("FILE:LINE: "
// without a column, "FILE:1:1: " when the position is unknown).
std::string SpecWhere(const std::string& file, SpecPosition pos);

// One [[transform]] or the [learner]: its kind and parameters. A parameter
// may hold an array (a grid axis; for `columns`, a list of lists) and a
// nested table becomes a nested JSON object (a learner's `base`).
struct StepSpec {
  std::string kind;
  nlohmann::json params = nlohmann::json::object();
  int line = 0;  // the table's header (or inline table) line
  int column = 0;
  // Where each key stands: "kind", "l2", "base.kind" (dotted for nested tables).
  std::map<std::string, SpecPosition> keys;
};

// The [select] table. Neither folds nor validation: the caller's default
// (5 folds). An empty metric: the caller's default for the task.
struct SelectSpec {
  std::optional<int> folds;
  std::optional<double> validation;
  std::string metric;
  uint64_t seed = 0;
  int line = 0;
};

struct PipelineSpec {
  std::vector<StepSpec> transforms;
  StepSpec learner;
  std::optional<SelectSpec> select;
  std::string path;  // the file name used in messages
};

// One point of the grid: scalar parameters only.
struct Candidate {
  std::vector<StepSpec> transforms;
  StepSpec learner;
  // The grid point, e.g. {"learner.l2": 0.1, "transform[1].degree": 2};
  // an empty object when the spec has no grid.
  nlohmann::json settings = nlohmann::json::object();
};

// The metrics [select] accepts.
const std::vector<std::string>& SpecMetrics();

// Reads and parses the spec at `path`. NotFound/IOError if it cannot be
// read; otherwise as ParseSpecText with name = path.
Result<PipelineSpec> ParseSpecFile(const std::string& path);

// Parses spec text; `name` labels messages. InvalidArgument
// "NAME:LINE:COL: what; expected ..." for TOML syntax, an unknown
// top-level or [select] key, a missing or non-string `kind`, a missing
// [learner], a date/time value, an empty grid axis, both folds and
// validation, folds < 2, validation outside (0, 1), an unknown metric or a
// negative seed. Kinds and parameters are checked by ValidateSpec.
Result<PipelineSpec> ParseSpecText(const std::string& text, const std::string& name);

// The cartesian product of every grid axis. Axes are ordered transform[0],
// transform[1], ..., then the learner; within a step by key name (nested
// keys depth-first); the last axis varies fastest. No axes: one candidate.
// A blend spec has no axes (its `members` list is one value).
std::vector<Candidate> ExpandGrid(const PipelineSpec& spec);

// The number of candidates ExpandGrid would return (saturates at UINT64_MAX).
uint64_t GridSize(const PipelineSpec& spec);

// The most candidates ValidateSpec accepts.
constexpr uint64_t kMaxSpecCandidates = 10000;

// Checks every candidate's kinds and parameters with MakeTransform and
// MakeLearner, and the names in each `columns` against `columns` (the
// source's feature columns; an empty list skips that check; names that an
// earlier onehot, poly or pca step produces are accepted). InvalidArgument
// "NAME:LINE:COL: ..." pointing at the offending key (or the step's table
// when no key is to blame); also for more than kMaxSpecCandidates. A blend
// spec (learner kind "blend", harness/pipeline/blend.h) is checked by
// ReadBlendSpec instead: its members are frozen models, not learners.
Status ValidateSpec(const PipelineSpec& spec, const std::vector<std::string>& columns);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_SPEC_H_
