// `fit` for a blend spec, as named steps (workflow/fit_steps.h): weights
// over frozen models, fitted on a carved partition of dev that none of the
// members read. A tainted member, or one whose lineage read any row of the
// partition, refuses the fit with a `refusal` entry before any data is read.
#include <map>

#include "harness/ledger/entries.h"
#include "harness/ledger/models.h"
#include "harness/pipeline/blend.h"
#include "harness/sampling/folds.h"
#include "harness/workflow/carve.h"
#include "harness/workflow/fit_steps.h"

namespace unseen::internal {

namespace {

using json = nlohmann::json;

constexpr int kDefaultFolds = 5;
constexpr size_t kShownRows = 5;
constexpr int kMaxLineageDepth = 16;

using Member = StoredModel;  // built only once the lineage guard has passed (MemberScores)

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
    Result<StoredModel> model = FindModel(ledger, name);
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

// Each member's score on the rows of `x`, one column per member.
Result<Eigen::MatrixXd> MemberScores(const Ledger& ledger, const std::vector<Member>& members,
                                     const Frame& x, LearnTask task, const std::string& where) {
  Eigen::MatrixXd scores(static_cast<Eigen::Index>(x.rows()),
                         static_cast<Eigen::Index>(members.size()));
  for (size_t i = 0; i < members.size(); ++i) {
    const ModelSummary& s = members[i].summary;
    UNSEEN_ASSIGN_OR_RETURN(std::shared_ptr<FrozenModel> built,
                            BuildModel(ledger, members[i].json));
    const FrozenModel& member = *built;
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

Result<ContributionFolds> AssignContributionFolds(const PipelineSpec& spec, const AdmittedData& d,
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

// Everything the blend path knows beyond the FitRun, step by step.
struct BlendState {
  BlendSpec table;
  bool classification = false;
  LearnTask task = LearnTask::kRegression;
  std::vector<std::string> labels;  // the source's classes
  Metric metric = Metric::kMse;     // the loss contributions are measured in
  NamedPartition part;
  std::vector<Member> members;
  Eigen::MatrixXd scores;  // each member's score on the partition's rows
  ContributionFolds folds;
  BlendContributions contrib;
  LinearWeights weights;
  json member_json = json::array();  // the frozen model's members
  FitBody::Blend record;             // and the fit entry's
};

// The blend table, the task and the metric; a blend reads only its
// partition's rows and combines one score per member, so --exclude and a
// multiclass source are refused.
Status ReadBlendTable(FitRun* run, BlendState* b) {
  const PipelineSpec& spec = run->spec;
  UNSEEN_ASSIGN_OR_RETURN(b->table, ReadBlendSpec(spec));
  if (!run->req->exclude.empty()) {
    return Status::InvalidArgument("--exclude: a blend reads only the rows of its partition ('" +
                                   b->table.partition + "'); expected no --exclude");
  }
  b->classification = run->st.source.task == TaskKind::kClassification;
  b->task = b->classification ? LearnTask::kClassification : LearnTask::kRegression;
  b->labels = ClassLabels(run->st.source);
  if (b->classification && b->labels.size() != 2) {
    return Status::InvalidArgument(
        SpecWhere(spec.path, b->table.learner_at) + "blend: the source has " +
        std::to_string(b->labels.size()) +
        " classes; a blend combines regression values or, for two classes, the probability of "
        "the second class, so it needs a regression or a binary classification source");
  }
  UNSEEN_ASSIGN_OR_RETURN(b->metric, BlendMetric(spec, b->task));
  return Status::OK();
}

// The partition the weights are fitted on, and the frozen members.
Status FindPartitionAndMembers(FitRun* run, BlendState* b) {
  Result<NamedPartition> found = FindPartition(*run->ledger, b->table.partition);
  if (!found.ok()) {
    return Status::NotFound(SpecWhere(run->spec.path, b->table.partition_at) +
                            "blend: " + found.status().message());
  }
  b->part = std::move(*found);
  UNSEEN_ASSIGN_OR_RETURN(b->members, LoadMembers(*run->ledger, run->spec, b->table));
  return Status::OK();
}

// The lineage guard. Refused (with a refusal entry) when a member is tainted
// or read rows of the partition.
Status CheckLineage(FitRun* run, const BlendState& b) {
  const Ledger& ledger = *run->ledger;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<FitBody>> entries, ReadEntries<FitBody>(ledger));
  std::map<int64_t, FitBody> fits;
  for (Decoded<FitBody>& f : entries) fits[f.entry.seq] = std::move(f.body);
  std::string problems;
  json details = json::array();
  for (const Member& m : b.members) {
    if (m.summary.tainted) {
      problems += (problems.empty() ? "" : "; ") + ("member '" + m.summary.name + "' is tainted");
      details.push_back({{"member", m.summary.name}, {"tainted", true}});
      continue;
    }
    UNSEEN_ASSIGN_OR_RETURN(RowSet rows, LineageRows(ledger, fits, m.summary.fit_entry, 0));
    RowSet shared = rows.And(b.part.rows);
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
  const std::string& name = run->req->name;
  Status reason = Status::Refused(
      "blend " + name + " on partition '" + b.part.name + "': " + problems +
      "; a blend's weights must be fitted on rows none of its members read (refit the members "
      "with `fit --exclude " +
      b.part.name + "`)");
  return RefuseFit(run, reason,
                   {{"model", name}, {"partition", b.part.name}, {"members", details}});
}

// The data, matched against the sealed holdout, cut to the partition's rows.
Status LoadPartitionRows(FitRun* run, const BlendState& b) {
  UNSEEN_ASSIGN_OR_RETURN(AdmittedData all, AdmitFitData(run));
  std::vector<size_t> keep;
  for (size_t i = 0; i < all.source_rows.size(); ++i) {
    if (b.part.rows.Contains(all.source_rows[i])) keep.push_back(i);
  }
  if (keep.empty()) {
    return Status::InvalidArgument(
        run->data_path + ": holds none of the " + std::to_string(b.part.rows.Cardinality()) +
        " rows of partition '" + b.part.name + "'; expected the dev file (--data)");
  }
  run->data = SelectRows(all, keep);
  return Status::OK();
}

// Every member's score on the partition's rows; each member's contribution
// by cross-validation inside the partition; the final weights on all of it.
Status WeighMembers(FitRun* run, BlendState* b) {
  const AdmittedData& d = run->data;
  const std::string where = SpecWhere(run->spec.path, b->table.members_at);
  UNSEEN_ASSIGN_OR_RETURN(b->scores,
                          MemberScores(*run->ledger, b->members, d.features, b->task, where));
  UNSEEN_ASSIGN_OR_RETURN(b->folds, AssignContributionFolds(run->spec, d, b->task, b->part.name));
  UNSEEN_ASSIGN_OR_RETURN(b->contrib, CrossValidateBlend(b->scores, d.target, b->folds.fold,
                                                         b->folds.k, b->folds.validation_only,
                                                         b->table.nonnegative, b->metric, b->task));
  UNSEEN_ASSIGN_OR_RETURN(b->weights, FitLinearWeights(b->scores, d.target, b->table.nonnegative));
  return Status::OK();
}

// The report, and each member's weight and contribution as the frozen model
// and the fit entry record them.
void ReportWeights(FitRun* run, BlendState* b) {
  FitReport& report = run->report;
  report.name = run->req->name;
  report.rows = run->data.rows();
  report.metric = MetricName(b->metric);
  report.selection = b->folds.validation_only ? "validation" : "k-fold";
  report.folds = b->folds.k;
  BlendReport br;
  br.partition = b->part.name;
  br.nonnegative = b->table.nonnegative;
  br.intercept = b->weights.intercept;
  br.loss_all = b->contrib.loss_all;
  for (size_t i = 0; i < b->members.size(); ++i) {
    const ModelSummary& s = b->members[i].summary;
    BlendMemberReport m{s.name,
                        s.digest,
                        s.fit_entry,
                        b->weights.weights(static_cast<Eigen::Index>(i)),
                        b->contrib.loss_without[i],
                        b->contrib.contribution[i]};
    b->member_json.push_back({{"name", m.name},
                              {"model_digest", ToHex(m.digest)},
                              {"fit_entry", m.fit_entry},
                              {"weight", m.weight},
                              {"loss_without", m.loss_without},
                              {"contribution", m.contribution}});
    b->record.members.push_back(
        {m.name, m.digest, m.fit_entry, m.weight, m.loss_without, m.contribution});
    br.members.push_back(m);
  }
  report.blend = std::move(br);
}

// The contributions as the frozen model records them; the fit entry adds
// the fold row sets.
json ContributionsJson(const FitRun& run, const BlendState& b) {
  return {{"metric", run.report.metric},
          {"selection", run.report.selection},
          {"folds", b.folds.k},
          {"seed", b.folds.seed},
          {"loss_all", b.contrib.loss_all},
          {"fold_loss_all", b.contrib.fold_loss_all}};
}

// The frozen blend: the weights, the members, the partition and the contributions.
json BlendModel(const FitRun& run, const BlendState& b) {
  const NamedPartition& part = b.part;
  json partition_json = {
      {"name", part.name}, {"entry", part.entry_seq}, {"row_set", ToHex(part.row_set)}};
  json model = FrozenModelHeader(run.st, run.req->name);
  model["settings"] = json::object();
  model["blend"] = {{"task", b.classification ? "classification" : "regression"},
                    {"classes", b.classification ? 2 : 0},
                    {"positive_class", b.classification ? json(b.labels[1]) : json(nullptr)},
                    {"nonnegative", b.table.nonnegative},
                    {"intercept", b.weights.intercept},
                    {"members", b.member_json},
                    {"partition", partition_json},
                    {"rows", run.report.rows},
                    {"contributions", ContributionsJson(run, b)}};
  return model;
}

// Stores the partition's and each contribution fold's row sets (after the
// blobs every fit stores) and completes the entry's blend record.
Result<std::vector<BlobRef>> PutBlendBlobs(FitRun* run, BlendState* b) {
  std::vector<BlobRef> blobs;
  UNSEEN_ASSIGN_OR_RETURN(BlobRef part_ref,
                          run->ledger->PutBlob("row-set", b->part.rows.Serialize()));
  blobs.push_back(part_ref);
  json fold_digests = json::array();
  for (const RowSet& s : FoldRowSets(run->data, b->folds.fold, b->folds.k)) {
    UNSEEN_ASSIGN_OR_RETURN(BlobRef r, run->ledger->PutBlob("row-set", s.Serialize()));
    blobs.push_back(r);
    fold_digests.push_back(ToHex(r.digest));
  }
  FitBody::Blend& record = b->record;
  record.intercept = b->weights.intercept;
  record.nonnegative = b->table.nonnegative;
  record.partition = {b->part.name, b->part.entry_seq, b->part.row_set};
  // The entry's contributions name the fold row sets too; the frozen model's do not.
  record.contributions = ContributionsJson(*run, *b);
  record.contributions["fold_row_sets"] = fold_digests;
  return blobs;
}

// The frozen blend, its blobs and its fit entry, then the commit.
Status FreezeBlend(FitRun* run, BlendState* b) {
  UNSEEN_ASSIGN_OR_RETURN(FitBlobs fit_blobs, PutFitBlobs(run, BlendModel(*run, *b)));
  UNSEEN_ASSIGN_OR_RETURN(std::vector<BlobRef> more, PutBlendBlobs(run, b));
  std::vector<BlobRef> blobs = {fit_blobs.model, fit_blobs.spec, fit_blobs.rows_read};
  blobs.insert(blobs.end(), more.begin(), more.end());
  FitBody fit = FitEntryBody(*run, fit_blobs);
  for (const Member& m : b->members) fit.parents.push_back(m.summary.fit_entry);
  fit.parents.push_back(b->part.entry_seq);
  fit.candidates_compared = 1;
  fit.learner = kBlendKind;
  fit.blend = std::move(b->record);
  fit.summary = "froze blend " + run->req->name + " of " + std::to_string(b->members.size()) +
                " members on partition " + b->part.name + " (" + std::to_string(run->report.rows) +
                " rows)";
  return RecordFit(run, fit, blobs);
}

}  // namespace

Status FitBlend(FitRun* run) {
  BlendState b;
  // 1. The blend table, the task, the metric, the partition, the members.
  UNSEEN_RETURN_IF_ERROR(ReadBlendTable(run, &b));
  UNSEEN_RETURN_IF_ERROR(FindPartitionAndMembers(run, &b));
  // 2. The guard, before any data is read.
  UNSEEN_RETURN_IF_ERROR(CheckLineage(run, b));
  // 3. The partition's rows of the data.
  UNSEEN_RETURN_IF_ERROR(LoadPartitionRows(run, b));
  // 4. Every member's score on them; contributions by cross-validation
  // inside the partition; final weights on all of it.
  UNSEEN_RETURN_IF_ERROR(WeighMembers(run, &b));
  ReportWeights(run, &b);
  // 5. The frozen blend and its fit entry.
  return FreezeBlend(run, &b);
}

}  // namespace unseen::internal
