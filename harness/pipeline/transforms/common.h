// Shared machinery of the transform kinds: parameter checking, column
// resolution and the Transform base that composes FittedParams/LoadFitted.
// Internal to harness/pipeline. Stateless helpers are thread-safe; a
// TransformBase is as thread-safe as Transform (Apply is const).
#ifndef UNSEEN_HARNESS_PIPELINE_TRANSFORMS_COMMON_H_
#define UNSEEN_HARNESS_PIPELINE_TRANSFORMS_COMMON_H_

#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/frame.h"
#include "harness/pipeline/transform.h"
#include "storage/status.h"

namespace unseen::internal {

// Reads the scalar parameters of one transform kind. Every failure is
// InvalidArgument "transform 'KIND': parameter 'NAME' ..." so that the spec
// checker can point at the offending key (it looks for the quoted name).
class TransformParams {
 public:
  TransformParams(std::string kind, const nlohmann::json& params);

  // OK if `params` is null or an object whose keys are all in `allowed`.
  Status CheckKnown(const std::vector<std::string>& allowed) const;
  bool Has(const std::string& name) const;
  // A string among `choices`, or `def` when absent.
  Result<std::string> Choice(const std::string& name, const std::vector<std::string>& choices,
                             const std::string& def) const;
  // An integer in [lo, hi], or `def` when absent. Floats are mistyped.
  Result<int64_t> Int(const std::string& name, int64_t def, int64_t lo, int64_t hi) const;
  // Any number (integer or float), or `def` when absent.
  Result<double> Number(const std::string& name, double def) const;
  Result<bool> Bool(const std::string& name, bool def) const;
  // The optional `columns` list: distinct, non-empty column names; empty
  // result when absent (meaning "every applicable column").
  Result<std::vector<std::string>> Columns() const;
  // InvalidArgument "transform 'KIND': parameter 'NAME' WHAT".
  Status Error(const std::string& name, const std::string& what) const;
  const nlohmann::json& Get(const std::string& name) const;

 private:
  std::string kind_;
  nlohmann::json params_;
};

// Which column type a transform acts on.
enum class ColumnNeed { kNumeric, kCategorical, kAny };

// The columns a transform acts on: `requested` (each must exist in `frame`
// and have the needed type) or, when empty, every column of `frame` of the
// needed type, in frame order. InvalidArgument naming the column otherwise.
Result<std::vector<std::string>> ResolveColumns(const std::string& kind, const Frame& frame,
                                                const std::vector<std::string>& requested,
                                                ColumnNeed need);

// Index of the fitted column `name` in `in`, checked for type; InvalidArgument
// "transform 'KIND': column 'NAME' ..." when missing or of the wrong type.
Result<size_t> FindColumn(const std::string& kind, const Frame& in, const std::string& name,
                          ColumnNeed need);

// InvalidArgument if two columns of `out` share a name (a produced column
// colliding with an existing one).
Status CheckUniqueNames(const std::string& kind, const Frame& out);

// `in` without the columns at `removed`, with `block` inserted where the
// first removed column stood (at the end when `removed` is empty).
Frame ReplaceColumns(const Frame& in, const std::vector<size_t>& removed,
                     std::vector<FrameColumn> block);

// Quotes a list for messages: "a, b, c" (at most `limit` items, then "...").
std::string JoinNames(const std::vector<std::string>& names, size_t limit = 20);

// Mean and population variance (ddof = 0) of the non-NaN values; count = 0
// when there are none (mean and var are then 0).
struct Moments {
  size_t count = 0;
  double mean = 0;
  double var = 0;
};
Moments ColumnMoments(const std::vector<double>& values);

// The Transform plumbing every kind shares. A kind implements Configure
// (parameter checking, also run by LoadFitted), Fit, Apply, and SaveState /
// LoadState for its fitted constants. FittedParams is
//   {"kind": K, "params": {...}, "state": {...}}   ("state" only once fitted).
class TransformBase : public Transform {
 public:
  explicit TransformBase(std::string kind) : kind_(std::move(kind)) {}
  std::string kind() const override { return kind_; }
  nlohmann::json FittedParams() const override;
  // InvalidArgument for a different kind, bad params or a malformed state.
  Status LoadFitted(const nlohmann::json& fitted) override;
  // Checks and stores `params` (null means none). Called by MakeTransform.
  Status Configure(const nlohmann::json& params);

 protected:
  // Reads the kind's parameters from `reader` into members.
  virtual Status ConfigureParams(const TransformParams& reader) = 0;
  virtual nlohmann::json SaveState() const = 0;
  // May throw nlohmann::json::exception on a malformed state (caught by LoadFitted).
  virtual Status LoadState(const nlohmann::json& state) = 0;
  // FailedPrecondition unless Fit or LoadFitted succeeded.
  Status CheckFitted() const;
  Status Invalid(const std::string& what) const;  // "transform 'KIND': WHAT"
  void MarkFitted() { fitted_ = true; }

  std::string kind_;
  nlohmann::json params_ = nlohmann::json::object();
  bool fitted_ = false;
};

// Factories of the kinds (each file under transforms/ defines one or two).
std::unique_ptr<TransformBase> NewImpute();
std::unique_ptr<TransformBase> NewStandardize();
std::unique_ptr<TransformBase> NewMinMax();
std::unique_ptr<TransformBase> NewOneHot();
std::unique_ptr<TransformBase> NewPoly();
std::unique_ptr<TransformBase> NewPca();
std::unique_ptr<TransformBase> NewSelectVariance();
std::unique_ptr<TransformBase> NewSelectTopK();

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_PIPELINE_TRANSFORMS_COMMON_H_
