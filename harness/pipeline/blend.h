// Blend: a least-squares combination of the predictions of several frozen
// models (its members), with an intercept and optionally non-negative
// weights. Regression blends combine predicted values; binary classification
// blends combine the members' probabilities of class 1 and clip the result to
// [0, 1]. This unit holds the blend's spec table, its arithmetic and the
// cross-validated contribution of each member; loading members from a ledger
// is harness/workflow/blend_fit.cc. Pure functions; thread-safe. Internal to
// harness/ (uses Eigen types). Format: docs/pipelines.md, "Blends".
#ifndef UNSEEN_HARNESS_PIPELINE_BLEND_H_
#define UNSEEN_HARNESS_PIPELINE_BLEND_H_

#include <Eigen/Dense>
#include <string>
#include <vector>

#include "harness/pipeline/metrics.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/nnls.h"
#include "harness/pipeline/spec.h"
#include "storage/status.h"

namespace unseen {

// The learner kind of a blend spec.
inline constexpr const char* kBlendKind = "blend";

// The [learner] table of a blend:
//   kind = "blend"
//   members = ["ridge-a", "knn-b"]   # at least two distinct frozen models
//   nonnegative = true               # [false]
//   partition = "blendset"           # the carved partition the weights are fitted on
struct BlendSpec {
  std::vector<std::string> members;
  bool nonnegative = false;
  std::string partition;
  SpecPosition learner_at, members_at, partition_at;
};

// Reads the blend table of `spec` (whose learner kind is "blend").
// InvalidArgument "SPEC:LINE:COL: ..." for a [[transform]] (a blend takes
// none: its members carry their own pipelines), a missing or empty
// `members`, a member that is not a non-empty string or is named twice,
// fewer than two members, a missing or non-string `partition`, a
// non-boolean `nonnegative`, an array anywhere else (no grids in a blend) or
// an unknown key.
Result<BlendSpec> ReadBlendSpec(const PipelineSpec& spec);

// A member's score for blending: regression, its predicted value;
// classification, its probability of class 1. FailedPrecondition when a
// classifier gives no probabilities (pocket) or not two classes of them.
Result<Eigen::VectorXd> MemberScore(const Predictions& p, LearnTask task);

// The blend's predictions from member scores (rows x members, in member
// order): s = intercept + scores * weights. Regression: value = s.
// Classification (two classes): p = s clipped to [0, 1] is the probability of
// class 1, proba = [1 - p, p], value = 1 if p >= 0.5 else 0.
Predictions BlendPredictions(const LinearWeights& weights, const Eigen::MatrixXd& scores,
                             LearnTask task);

// What cross-validation inside the blend partition says about each member.
struct BlendContributions {
  double loss_all = 0;                // mean validation loss of the blend of all members
  std::vector<double> fold_loss_all;  // per validation fold
  std::vector<double> loss_without;   // per member: mean loss of the blend refitted without it
  std::vector<double> contribution;   // per member: loss_without - loss_all
};

// For each validation fold f (rows with fold[i] == f, f = 0..k-1; with
// `validation_only`, only f = 1 of a two-way split), fits the weights on the
// other rows with every member, and with each member left out in turn, and
// scores the blend on fold f with `metric` (a loss: lower is better). A
// member whose contribution is positive made the blend better on held-out
// rows. InvalidArgument if sizes disagree, the metric is not a loss, or a
// fold has no rows on either side.
Result<BlendContributions> CrossValidateBlend(const Eigen::MatrixXd& scores,
                                              const Eigen::VectorXd& y,
                                              const std::vector<int>& fold, int k,
                                              bool validation_only, bool nonnegative, Metric metric,
                                              LearnTask task);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_BLEND_H_
