// `fit` for a blend spec: weights over frozen models, fitted on a carved
// partition of dev that none of the members read.
//
// Steps: read the blend table; refuse a multiclass source; find the
// partition and the members; the lineage guard (a tainted member, or a member
// whose lineage read any row of the partition, refuses the fit with a
// `refusal` entry); load the data and keep only the partition's rows; apply
// every member to them; cross-validate the contributions inside the
// partition; fit the final weights on all of its rows; freeze the blend.
#include <map>
#include <set>

#include "harness/sampling/folds.h"
#include "harness/pipeline/blend.h"
#include "harness/ledger/entries.h"
#include "harness/workflow/carve.h"
#include "harness/workflow/fit_steps.h"
#include "harness/ledger/models.h"

namespace unseen::internal {

namespace {

using json = nlohmann::json;

constexpr int kDefaultFolds = 5;
constexpr size_t kShownRows = 5;
constexpr int kMaxLineageDepth = 16;

using Member = LoadedModel;

// The loss the contributions are measured in: [select] metric, else mse
// for regression and brier for classification.
Result<Metric> BlendMetric(const PipelineSpec& spec, LearnTask task) {
  Metric metric = task == LearnTask::kRegression ? Metric::kMse : Metric::kBrier;
  if (!spec.select || spec.select->metric.empty()) return metric;
  const std::string where = SpecWhere(spec.path, {spec.select->line, 0});
  UNSEEN_ASSIGN_OR_RETURN(metric, ParseMetric(spec.select->metric));
  Status ok = CheckMetric(metric, task, task == LearnTask::kClassification ? 2 : 0);
  if (!ok.ok()) return Status::InvalidArgument(where + ok.message());
  if (!LowerIsBetter(metric)) {
    return Status::InvalidArgument(
        where + "blend: contributions are differences of a loss; " + "expected metric = " +
        (task == LearnTask::kRegression ? "mse or mae" : "brier, log_loss or error_rate"));
  }
  return metric;
}

Result<std::vector<Member>> LoadMembers(const Ledger& ledger, const PipelineSpec& spec,
                                        const BlendSpec& b) {
  std::vector<Member> out;
  for (const std::string& name : b.members) {
    Result<LoadedModel> model = LoadModel(ledger, name);
    if (!model.ok()) {
      std::string msg = model.status().message();
      if (msg.rfind("--model: ", 0) == 0) msg = msg.substr(9);
      if (!model.status().IsNotFound()) return model.status();
      return Status::NotFound(SpecWhere(spec.path, b.members_at) + "blend: " + msg);
    }
    out.push_back(std::move(*model));
  }
  return out;
}

// The rows read by the fit entry `seq` and, for a blend, by its members'
// fits, recursively.
Result<RowSet> LineageRows(const Ledger& ledger, const std::map<int64_t, FitBody>& fits,
                           int64_t seq, int depth) {
  auto it = fits.find(seq);
  if (it == fits.end() || depth > kMaxLineageDepth) {
    return Status::Corruption("fit entry " + std::to_string(seq) +
                              " is missing or nested too deep");
  }
  const FitBody& fit = it->second;
  if (!fit.rows_read) {
    return Status::Corruption("entry " + std::to_string(seq) +
                              " (fit): key 'rows_read' is missing");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(*fit.rows_read));
  UNSEEN_ASSIGN_OR_RETURN(RowSet rows, RowSet::Deserialize(bytes));
  if (fit.blend) {
    for (const BlendMemberRecord& m : fit.blend->members) {
      UNSEEN_ASSIGN_OR_RETURN(RowSet more, LineageRows(ledger, fits, m.fit_entry, depth + 1));
      rows = rows.Or(more);
    }
  }
  return rows;
}

std::string RowList(const std::vector<uint32_t>& rows) {
  std::string out;
  for (size_t i = 0; i < rows.size() && i < kShownRows; ++i) {
    out += (i ? ", " : "") + std::to_string(rows[i]);
  }
  return out;
}

// The lineage guard. Refused (with a refusal entry) when a member is tainted
// or read rows of the partition.
Status CheckLineage(const FitRequest& req, const std::vector<Member>& members,
                    const NamedPartition& part, Ledger* ledger) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<FitBody>> entries, ReadEntries<FitBody>(*ledger));
  std::map<int64_t, FitBody> fits;
  for (Decoded<FitBody>& f : entries) fits[f.entry.seq] = std::move(f.body);
  std::string problems;
  json details = json::array();
  for (const Member& m : members) {
    if (m.summary.tainted) {
      problems += (problems.empty() ? "" : "; ") + ("member '" + m.summary.name + "' is tainted");
      details.push_back({{"member", m.summary.name}, {"tainted", true}});
      continue;
    }
    UNSEEN_ASSIGN_OR_RETURN(RowSet rows, LineageRows(*ledger, fits, m.summary.fit_entry, 0));
    RowSet shared = rows.And(part.rows);
    if (shared.Empty()) continue;
    std::vector<uint32_t> v = shared.ToVector();
    v.resize(std::min(v.size(), kShownRows));
    problems +=
        (problems.empty() ? "" : "; ") +
        ("member '" + m.summary.name + "' was fitted on " + std::to_string(shared.Cardinality()) +
         " of its rows (first source rows: " + RowList(v) + ")");
    details.push_back({{"member", m.summary.name},
                       {"rows_in_partition", shared.Cardinality()},
                       {"first_rows", v}});
  }
  if (problems.empty()) return Status::OK();
  Status reason = Status::Refused(
      "blend " + req.name + " on partition '" + part.name + "': " + problems +
      "; a blend's weights must be fitted on rows none of its members read (refit the members "
      "with `fit --exclude " +
      part.name + "`)");
  return RefuseFit(req, ledger, reason,
                   {{"model", req.name}, {"partition", part.name}, {"members", details}});
}

// Each member's score on the rows of `x`, one column per member.
Result<Eigen::MatrixXd> MemberScores(const Ledger& ledger, const std::vector<Member>& members,
                                     const Frame& x, LearnTask task, const std::string& where) {
  Eigen::MatrixXd scores(static_cast<Eigen::Index>(x.rows()),
                         static_cast<Eigen::Index>(members.size()));
  for (size_t i = 0; i < members.size(); ++i) {
    const ModelSummary& s = members[i].summary;
    const FrozenModel& member = *members[i].model;
    if (member.task() != task) {
      return Status::InvalidArgument(where + "blend: member '" + s.name +
                                     "' was fitted for another task");
    }
    UNSEEN_ASSIGN_OR_RETURN(Predictions p, member.Predict(x));
    Result<Eigen::VectorXd> score = MemberScore(p, task);
    if (!score.ok()) {
      return Status::InvalidArgument(where + "blend: member '" + s.name + "' (" + s.learner + ") " +
                                     score.status().message());
    }
    scores.col(static_cast<Eigen::Index>(i)) = *score;
  }
  return scores;
}

struct ContributionFolds {
  std::vector<int> fold;
  int k = 0;
  bool validation_only = false;
  uint64_t seed = 0;
};

Result<ContributionFolds> AssignContributionFolds(const PipelineSpec& spec, const LoadedData& d,
                                                  LearnTask task, const std::string& partition) {
  ContributionFolds f;
  f.seed = spec.select ? spec.select->seed : 0;
  std::vector<int> labels;
  if (task == LearnTask::kClassification) {
    for (Eigen::Index i = 0; i < d.target.size(); ++i)
      labels.push_back(static_cast<int>(d.target(i)));
  }
  Result<std::vector<int>> fold = Status::Internal("unset");
  if (spec.select && spec.select->validation) {
    f.k = 2;
    f.validation_only = true;
    fold = AssignValidation(d.rows(), *spec.select->validation, f.seed, d.groups);
  } else {
    f.k = spec.select && spec.select->folds ? *spec.select->folds : kDefaultFolds;
    fold = AssignFolds(d.rows(), f.k, f.seed, labels, d.groups);
  }
  if (!fold.ok()) {
    return Status::InvalidArgument(SpecWhere(spec.path, {spec.select ? spec.select->line : 1, 0}) +
                                   "blend contributions inside partition '" + partition + "' (" +
                                   std::to_string(d.rows()) + " rows): " + fold.status().message() +
                                   "; expected fewer [select] folds or a larger partition");
  }
  f.fold = std::move(*fold);
  return f;
}

}  // namespace

Result<FitReport> FitBlend(const FitRequest& req, const LedgerState& st, const PipelineSpec& spec,
                           Ledger* ledger) {
  // 1. The blend table, the task, the metric, the partition, the members.
  UNSEEN_ASSIGN_OR_RETURN(BlendSpec b, ReadBlendSpec(spec));
  if (!req.exclude.empty()) {
    return Status::InvalidArgument("--exclude: a blend reads only the rows of its partition ('" +
                                   b.partition + "'); expected no --exclude");
  }
  const bool classification = st.source.task == TaskKind::kClassification;
  const LearnTask task = classification ? LearnTask::kClassification : LearnTask::kRegression;
  const std::vector<std::string> labels = ClassLabels(st.source);
  if (classification && labels.size() != 2) {
    return Status::InvalidArgument(
        SpecWhere(spec.path, b.learner_at) + "blend: the source has " +
        std::to_string(labels.size()) +
        " classes; a blend combines regression values or, for two classes, the probability of "
        "the second class, so it needs a regression or a binary classification source");
  }
  UNSEEN_ASSIGN_OR_RETURN(Metric metric, BlendMetric(spec, task));
  Result<NamedPartition> found = FindPartition(*ledger, b.partition);
  if (!found.ok()) {
    return Status::NotFound(SpecWhere(spec.path, b.partition_at) +
                            "blend: " + found.status().message());
  }
  const NamedPartition& part = *found;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Member> members, LoadMembers(*ledger, spec, b));

  // 2. The guard, before any data is read.
  UNSEEN_RETURN_IF_ERROR(CheckLineage(req, members, part, ledger));

  // 3. The partition's rows of the data, and every member's score on them.
  std::string data;
  UNSEEN_ASSIGN_OR_RETURN(LoadedData all, LoadFitData(req, st, ledger, &data));
  std::vector<size_t> keep;
  for (size_t i = 0; i < all.source_rows.size(); ++i) {
    if (part.rows.Contains(all.source_rows[i])) keep.push_back(i);
  }
  if (keep.empty()) {
    return Status::InvalidArgument(
        data + ": holds none of the " + std::to_string(part.rows.Cardinality()) +
        " rows of partition '" + part.name + "'; expected the dev file (--data)");
  }
  LoadedData d = SelectRows(all, keep);
  const std::string where = SpecWhere(spec.path, b.members_at);
  UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd scores,
                          MemberScores(*ledger, members, d.features, task, where));

  // 4. Contributions by cross-validation inside the partition; final weights on all of it.
  UNSEEN_ASSIGN_OR_RETURN(ContributionFolds folds,
                          AssignContributionFolds(spec, d, task, part.name));
  UNSEEN_ASSIGN_OR_RETURN(BlendContributions contrib,
                          CrossValidateBlend(scores, d.target, folds.fold, folds.k,
                                             folds.validation_only, b.nonnegative, metric, task));
  UNSEEN_ASSIGN_OR_RETURN(LinearWeights weights, FitLinearWeights(scores, d.target, b.nonnegative));

  FitReport report;
  report.name = req.name;
  report.rows = d.rows();
  report.metric = MetricName(metric);
  report.selection = folds.validation_only ? "validation" : "k-fold";
  report.folds = folds.k;
  BlendReport br;
  br.partition = part.name;
  br.nonnegative = b.nonnegative;
  br.intercept = weights.intercept;
  br.loss_all = contrib.loss_all;
  json member_json = json::array();  // the frozen model's members
  FitBody::Blend blend;               // and the fit entry's
  for (size_t i = 0; i < members.size(); ++i) {
    const ModelSummary& s = members[i].summary;
    BlendMemberReport m{s.name,
                        s.digest,
                        s.fit_entry,
                        weights.weights(static_cast<Eigen::Index>(i)),
                        contrib.loss_without[i],
                        contrib.contribution[i]};
    member_json.push_back({{"name", m.name},
                           {"model_digest", ToHex(m.digest)},
                           {"fit_entry", m.fit_entry},
                           {"weight", m.weight},
                           {"loss_without", m.loss_without},
                           {"contribution", m.contribution}});
    blend.members.push_back(
        {m.name, m.digest, m.fit_entry, m.weight, m.loss_without, m.contribution});
    br.members.push_back(m);
  }

  // 5. The frozen blend and its fit entry.
  json partition_json = {
      {"name", part.name}, {"entry", part.entry_seq}, {"row_set", ToHex(part.row_set)}};
  json contributions_json = {{"metric", report.metric},
                             {"selection", report.selection},
                             {"folds", folds.k},
                             {"seed", folds.seed},
                             {"loss_all", contrib.loss_all},
                             {"fold_loss_all", contrib.fold_loss_all}};
  json model = FrozenModelHeader(st, req.name);
  model["settings"] = json::object();
  model["blend"] = {{"task", classification ? "classification" : "regression"},
                    {"classes", classification ? 2 : 0},
                    {"positive_class", classification ? json(labels[1]) : json(nullptr)},
                    {"nonnegative", b.nonnegative},
                    {"intercept", weights.intercept},
                    {"members", member_json},
                    {"partition", partition_json},
                    {"rows", report.rows},
                    {"contributions", contributions_json}};
  UNSEEN_ASSIGN_OR_RETURN(std::string model_text, CanonicalJson(model.dump()));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef model_ref, ledger->PutBlob("model", model_text));
  UNSEEN_ASSIGN_OR_RETURN(std::string spec_text, ReadSpecBytes(req.spec_path));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef spec_ref, ledger->PutBlob("spec", spec_text));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef rows_ref, ledger->PutBlob("row-set", d.rows_read.Serialize()));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef part_ref, ledger->PutBlob("row-set", part.rows.Serialize()));
  std::vector<BlobRef> blobs = {model_ref, spec_ref, rows_ref, part_ref};
  json fold_digests = json::array();
  for (const RowSet& s : FoldRowSets(d, folds.fold, folds.k)) {
    UNSEEN_ASSIGN_OR_RETURN(BlobRef r, ledger->PutBlob("row-set", s.Serialize()));
    blobs.push_back(r);
    fold_digests.push_back(ToHex(r.digest));
  }
  // The entry's contributions name the fold row sets too; the frozen model's do not.
  contributions_json["fold_row_sets"] = fold_digests;
  blend.intercept = weights.intercept;
  blend.nonnegative = b.nonnegative;
  blend.partition = {part.name, part.entry_seq, part.row_set};
  blend.contributions = contributions_json;
  report.model_digest = model_ref.digest;
  FitBody fit;
  fit.model = req.name;
  fit.model_digest = model_ref.digest;
  fit.spec = spec_ref.digest;
  fit.data = {data, d.file_sha256};
  fit.rows_read = rows_ref.digest;
  fit.rows = report.rows;
  for (const Member& m : members) fit.parents.push_back(m.summary.fit_entry);
  fit.parents.push_back(part.entry_seq);
  fit.candidates_compared = 1;
  fit.learner = kBlendKind;
  fit.blend = std::move(blend);
  fit.summary = "froze blend " + req.name + " of " + std::to_string(members.size()) +
                " members on partition " + part.name + " (" + std::to_string(report.rows) +
                " rows)";
  UNSEEN_ASSIGN_OR_RETURN(Entry fe, AppendEntry(ledger, req.actor, fit, blobs));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  report.blend = std::move(br);
  report.head = fe.hash;
  return report;
}

}  // namespace unseen::internal
