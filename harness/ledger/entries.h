// The entry codec: one typed body per ledger entry kind, with one encoder
// (to the fields JSON that Ledger::Append canonicalises) and one decoder
// (from a stored Entry). Writers and readers go through it, so a kind's
// name and the names, types and defaults of its fields live here only.
// Plain values and free functions; thread-compatible.
//
// Everything below is written to disk: never rename a kind or a field,
// never change a field's JSON type; only add fields, with a default for
// ledgers written before them.
//
// Decoding. A malformed body (not JSON, a missing required key, a value of
// the wrong type, a bad hex digest) gives Corruption("entry N (kind): what
// is wrong"); no exception escapes. A key is required when the code that
// read the kind before this codec required it (or the kind had no reader);
// every other key keeps the default that code used when it is absent, and
// is type-checked when present. The struct comments say which is which.
//
// Usage:
//   FitBody fit;
//   fit.model = "m1";
//   ...
//   UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger, actor, fit, blobs));
//
//   UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<FitBody>> fits, ReadEntries<FitBody>(*ledger));
//   for (const Decoded<FitBody>& f : fits) Use(f.entry.seq, f.body.model);
#ifndef UNSEEN_HARNESS_LEDGER_ENTRIES_H_
#define UNSEEN_HARNESS_LEDGER_ENTRIES_H_

#include <cstdint>
#include <map>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "harness/bounds/thresholdout.h"
#include "harness/data/source.h"
#include "storage/digest.h"
#include "storage/ledger.h"
#include "storage/seal_crypto.h"
#include "storage/status.h"

namespace unseen {

// --- Entry kinds (written to disk: never rename) ---------------------------
inline constexpr std::string_view kKindLedger = "ledger";  // genesis, written by Ledger::Create
inline constexpr std::string_view kKindSource = "source";
inline constexpr std::string_view kKindSeal = "seal";
inline constexpr std::string_view kKindPartition = "partition";
inline constexpr std::string_view kKindExport = "export";
inline constexpr std::string_view kKindSelect = "select";
inline constexpr std::string_view kKindFit = "fit";
inline constexpr std::string_view kKindApply = "apply";
inline constexpr std::string_view kKindScore = "score";
inline constexpr std::string_view kKindEval = "eval";
inline constexpr std::string_view kKindBudget = "budget";
inline constexpr std::string_view kKindRefusal = "refusal";
inline constexpr std::string_view kKindExposure = "exposure";

// --- Pieces several bodies share (written to disk) -------------------------

// A file a step read or wrote: {"path", "sha256"}.
struct FileRecord {
  std::string path;
  Digest256 sha256{};
};

// How the seal key was obtained; kept in the seal entry (never the key).
// {"source", "key_check"} and, for "passphrase", {"salt", "scrypt": {"N", "r", "p"}}.
struct KeyInfo {
  std::string source = "key-file";  // "key-file" or "passphrase"
  ScryptParams scrypt;              // for "passphrase"
  std::string salt_hex;             // for "passphrase"
  std::string key_check_hex;        // KeyCheck(key, ledger_id)
};

// --- Bodies, one per kind (written to disk) --------------------------------

// "ledger": the genesis entry. Required: ledger_id.
struct GenesisBody {
  static constexpr std::string_view kKind = kKindLedger;
  std::string ledger_id;      // 32 hex digits, random
  int row_digest_format = 2;  // absent: 1
  // Added by Ledger::Create, not by the encoder; read back by the decoder.
  int format = kLedgerFormatVersion;
};

// "source": the registered file. The source's own fields are SourceInfo's
// JSON form (SourceToJson in harness/data/source.h), every key required.
// Format 2 stores no per-row digest and no figure over rows here: the
// Merkle root is the source's one commitment to its rows.
struct SourceBody {
  static constexpr std::string_view kKind = kKindSource;
  SourceInfo source;
  std::optional<std::string> absolute_path;  // "file.absolute_path"; absent: source.path
};

// "seal". Required: strategy, fraction, seed, holdout.{rows, row_set,
// sealed_rows, sealed_digests, sealed_summary}, dev.{rows, row_set,
// row_digests, content_digests, summary}, dev.file.{path, sha256, size},
// key.{source, key_check} (and salt, scrypt.{N, r, p} for a passphrase),
// budget.queries. Defaults: holdout.encoding "csv" (seals
// before the encoding had a name), budget.half_width 0, budget.delta 0.05.
// The rest are never read back; absent, they take the zero value.
struct SealBody {
  static constexpr std::string_view kKind = kKindSeal;
  int64_t source_entry = 0;
  std::string strategy;
  double fraction = 0;
  uint64_t seed = 0;
  uint64_t requested_holdout = 0;
  std::string split_note;
  struct Holdout {
    uint64_t rows = 0;
    Digest256 row_set{}, sealed_rows{};
    // Sealed like the rows (AES-256-GCM under the key): the holdout rows' digests
    // (HoldoutDigests, harness/ledger/sealed_figures.h) and the figures over every
    // source row (RowsSummary).
    Digest256 sealed_digests{}, sealed_summary{};
    std::string cipher;       // "AES-256-GCM"
    std::string compression;  // "zstd"
    std::string encoding = "csv";
  } holdout;
  struct Dev {
    uint64_t rows = 0;
    Digest256 row_set{};
    std::string file_path;  // "file": where seal wrote the development rows
    Digest256 file_sha256{};
    uint64_t file_size = 0;
    // Plain: the development rows' row digests and content digests (16 bytes a row, in row
    // order); content_digests equals row_digests when the source has no id column.
    Digest256 row_digests{}, content_digests{};
    RowsSummary summary;  // "summary": the figures over the development rows
  } dev;
  KeyInfo key;
  // "cross_duplicates": {"moved_to_dev"}. How many rows were exact duplicates across the cut is
  // sealed (SealedFigures, harness/ledger/sealed_figures.h): with the dev rows' multiplicities,
  // the counts would tell which contents, labels included, the holdout holds.
  bool cross_duplicates_moved_to_dev = false;
  std::optional<uint64_t> group_violations;    // "violations.group"; null: no group column
  std::optional<uint64_t> time_violations;     // "violations.time"; null: no time column
  uint64_t budget_queries = 0;
  // Written only when positive, and then with budget_delta; 0: no half-width limit.
  double budget_half_width = 0;
  double budget_delta = 0.05;
};

// "partition": a carved share of dev. Required: name, strategy, fraction,
// seed, row_set. Others absent: zero, parents empty, labels_from none.
struct PartitionBody {
  static constexpr std::string_view kKind = kKindPartition;
  std::string name;
  std::string strategy;  // "random", "stratified" or "group"
  double fraction = 0;
  uint64_t seed = 0;
  uint64_t rows = 0;
  uint64_t dev_rows = 0;
  uint64_t requested = 0;
  std::string note;
  Digest256 row_set{};
  struct LabelsFrom {  // the file the group or class labels came from
    std::string path;
    Digest256 sha256{};
    std::string column;
  };
  std::optional<LabelsFrom> labels_from;  // null: a random carve read no file
  std::vector<int64_t> parents;
  std::string summary;
};

// "export": dev rows written for training elsewhere. Required: row_set.
struct ExportBody {
  static constexpr std::string_view kKind = kKindExport;
  FileRecord out;
  uint64_t rows = 0;
  Digest256 row_set{};                    // the rows exported (the dev set)
  std::optional<std::string> row_column;  // the added row-number column; null: none
  struct Fold {
    std::string path;
    Digest256 sha256{};
    uint64_t rows = 0;
    Digest256 row_set{};
  };
  std::vector<Fold> folds;
  uint64_t seed = 0;
  std::vector<int64_t> parents;
  std::string summary;
};

// "select": the comparison of a spec's candidates. Read back only for
// lineage, which tolerated any key missing: every key is optional.
struct SelectBody {
  static constexpr std::string_view kKind = kKindSelect;
  std::string model;
  std::string metric;
  std::string selection;  // "k-fold" or "validation"
  int folds = 0;
  uint64_t seed = 0;
  std::vector<Digest256> fold_row_sets;
  std::optional<Digest256> rows_read;
  // One object per candidate: {"settings", "fold_scores", "mean"}.
  nlohmann::json candidates = nlohmann::json::array();
  uint64_t chosen = 0;
  std::vector<int64_t> parents;
  std::string summary;
};

// One member of a blend, as its fit entry lists it.
struct BlendMemberRecord {
  std::string name;
  Digest256 model_digest{};
  int64_t fit_entry = 0;  // required when a blend is present
  double weight = 0;
  double loss_without = 0;
  double contribution = 0;
};

// "fit": a frozen model. Required: model, model_digest, and for a blend
// blend.members[].fit_entry. Defaults as the model listing read them:
// learner "", rows 0, candidates_compared 1, parents empty, tainted false,
// holdout_rows_read 0; rows_read may be absent (lineage then reads no rows).
struct FitBody {
  static constexpr std::string_view kKind = kKindFit;
  std::string model;
  Digest256 model_digest{};
  Digest256 spec{};  // the spec blob
  FileRecord data;   // the file the rows were read from
  std::optional<Digest256> rows_read;
  uint64_t rows = 0;
  std::vector<int64_t> parents;
  uint64_t candidates_compared = 1;
  nlohmann::json settings = nlohmann::json::object();  // the chosen candidate's settings
  std::string learner;
  struct Blend {
    std::vector<BlendMemberRecord> members;
    double intercept = 0;
    bool nonnegative = false;
    struct Partition {
      std::string name;
      int64_t entry = 0;
      Digest256 row_set{};
    } partition;
    // {"metric", "selection", "folds", "seed", "loss_all", "fold_loss_all", "fold_row_sets"}
    nlohmann::json contributions = nlohmann::json::object();
  };
  std::optional<Blend> blend;
  struct Excluded {  // fit --exclude
    std::string partition;
    int64_t entry = 0;
    Digest256 row_set{};
    uint64_t rows_dropped = 0;
  };
  std::optional<Excluded> excluded;
  uint64_t holdout_rows_read = 0;
  bool tainted = false;
  std::string summary;
};

// "apply": a frozen model applied to data (predict). Every key required.
struct ApplyBody {
  static constexpr std::string_view kKind = kKindApply;
  std::string model;
  Digest256 model_digest{};
  FileRecord data;
  uint64_t rows = 0;
  FileRecord output;
  std::vector<int64_t> parents;
  std::string summary;
};

// "score": predictions made elsewhere, scored on exported rows. Every key required.
struct ScoreBody {
  static constexpr std::string_view kKind = kKindScore;
  std::string name;
  FileRecord predictions;
  uint64_t rows = 0;
  Digest256 rows_read{};
  std::string metric;
  double value = 0;
  std::vector<int64_t> parents;  // the export entries
  std::string summary;
};

// One holdout answer as an eval entry records it (the answers array).
// Mirrors workflow/eval.h's EvalAnswer field for field, except: the
// answer's assumptions are not stored; `repeated` is repeat_of.has_value();
// code_length and ladder_max_submissions are stored here only.
// Required: model_digest, metric, method, delta, n, estimate, lower, upper,
// step, range, range_source, outside_range, reveals_before,
// log_transcript, log_hypotheses, repeat_of (null for a reveal), contaminated.
// Defaults (answers before the Ladder and Thresholdout): mode "plain",
// improved false, leader "", ladder_step 0, tau 0. Absent: model and kind
// "", queries 0, taints empty, code_length and ladder_max_submissions none.
struct EvalAnswerRecord {
  std::string model;
  std::string kind;  // "frozen" or "external"
  Digest256 model_digest{};
  std::string metric, method;
  double delta = 0;  // the ledger's delta, shared by every answer
  uint64_t n = 0;
  double estimate = 0, lower = 0, upper = 0;  // as shown: on the reveal grid
  double step = 0;
  double range_lo = 0, range_hi = 1;  // "range": [lo, hi]
  std::string range_source;
  // The question's target range (regression) and probability floor (log
  // loss): two ranges of one width are different questions.
  double target_lo = 0, target_hi = 0, prob_floor = 0;
  bool outside_range = false;  // plain answers on mse, mae: some value was clipped
  uint64_t queries = 0;
  // The accounting (harness/bounds/accounting.h): this answer's number j
  // among the ledger's answers, ln(delta / delta_j), the answers shown
  // before the question was asked and their code length L, the question's
  // code length, and log_hypotheses = log_share + log_question: the
  // interval's level is delta * exp(-log_hypotheses).
  uint64_t answer_index = 0;
  double log_share = 0;
  uint64_t reveals_before = 0;
  double log_transcript = 0;
  double log_question = 0;  // the question's code length Q_j (accounting.h)
  double log_hypotheses = 0;
  std::optional<int64_t> repeat_of;  // the eval entry answered from; none: a reveal
  bool contaminated = false;
  std::vector<std::string> taints;
  std::string mode = "plain";  // "plain", "ladder" or "thresholdout"
  bool improved = false;
  std::string leader;
  double ladder_step = 0;
  double tau = 0;
  // The code length of what this answer showed, in nats (ln R for a plain
  // answer); written on reveals only.
  std::optional<double> code_length;
  // The Ladder's k, written on its reveals only.
  std::optional<uint64_t> ladder_max_submissions;

  // A reveal showed something new; a repeat was answered from an earlier entry.
  bool reveal() const { return !repeat_of.has_value(); }
};

// Thresholdout's settings and the digest of its sealed secret state
// ("thresholdout-state" blob). All required when present.
struct EvalThresholdout {
  ThresholdoutParams params;  // {"tau", "threshold", "sigma", "m", "budget", "beta"}
  Digest256 state{};
  uint64_t run_start = 0;    // the answer_index of the run's first answer
  uint64_t run_answers = 0;  // the run's answers up to and including this entry's
};

// Which protections held while an external predictor ran
// ("confinement": {"filesystem": true, "network": false, ...}; names in
// harness/evaluate/confine.h). Absent (entries before confinement): empty.
using ConfinementRecord = std::map<std::string, bool>;

// The external predictor of an `eval --command`: its identity, and the
// protections in force when it ran (written only when known).
struct EvalExternal {
  std::string name;
  std::string command;
  std::vector<FileRecord> attached;
  double timeout_seconds = 0;
  ConfinementRecord confinement;
};

// "eval": one batch of holdout answers. Required: answers (see
// EvalAnswerRecord). Defaults: queries_spent 0; thresholdout none (absent
// in entries before Thresholdout, null after). Others absent: zero, none.
//
// Writing (workflow/eval.cc): one EvalAnswerRecord per model in batch
// order, from its EvalAnswer plus code_length on a reveal (and
// ladder_max_submissions on a Ladder reveal); the batch totals; parents =
// the frozen models' fit entries; then AppendEntry(ledger, actor, body,
// blobs), with the thresholdout-state blob, if any, in `blobs`.
//
// Reading: ReadEntries<EvalBody>(ledger) gives the past answers, each
// answer's entry being entry.seq. A repeat is answered from the record
// whose reveal() matches (model_digest, metric, method, delta, range); the
// Ladder resumes from the reveals whose mode is "ladder" for the metric
// (ladder_step, ladder_max_submissions, estimate, leader); Thresholdout
// from the last body whose thresholdout is set; adaptivity sums code_length
// over the reveals before a model's fit entry.
struct EvalBody {
  static constexpr std::string_view kKind = kKindEval;
  std::vector<EvalAnswerRecord> answers;
  std::optional<EvalThresholdout> thresholdout;
  std::optional<EvalExternal> external;
  uint64_t queries_spent = 0;  // questions new in this batch
  uint64_t queries_total = 0;
  uint64_t budget = 0;
  double log_hypotheses = 0;
  uint64_t holdout_rows = 0;
  std::vector<int64_t> parents;
  std::optional<std::string> accept_contamination;  // null: not accepted
  std::string summary;
};

// "budget": a raise of the holdout query budget. Required: add_queries.
struct BudgetBody {
  static constexpr std::string_view kKind = kKindBudget;
  uint64_t add_queries = 0;
  uint64_t budget_before = 0;
  uint64_t budget_after = 0;
  uint64_t queries_used = 0;
  std::string reason;
  std::vector<int64_t> parents;
  std::string summary;
};

// "refusal": a command the guard refused. Every key required.
struct RefusalBody {
  static constexpr std::string_view kKind = kKindRefusal;
  std::string command;  // the refused command: "fit", "predict", "score", "eval"
  int code = 0;         // its StatusCode (storage/status.h; written to disk there too)
  std::string reason;
  nlohmann::json details = nlohmann::json::object();  // what the refused data held
  std::string summary;
};

// "exposure": a model that was applied to the holdout (or an external
// predictor that received its features) and then failed: no answer was
// shown, but the predictor saw `holdout_rows_sent` rows' features and the
// kind of failure (value-free, `reason`) was shown. Appended in its own
// transaction after the eval's is rolled back (RecordExposure, ledger/
// exposure.h). Every key required except confinement (absent: not an
// external predictor, or it never started).
struct ExposureBody {
  static constexpr std::string_view kKind = kKindExposure;
  std::string command = "eval";
  std::string model;
  std::string model_kind;  // "model_kind": "frozen" or "external"
  Digest256 model_digest{};
  uint64_t holdout_rows_sent = 0;  // rows whose features left this process
  std::string reason;              // the value-free message shown
  ConfinementRecord confinement;
  std::string summary;
};

// --- Encoding ---------------------------------------------------------------

// The kind's own fields as a JSON object text (keys sorted), ready for
// Ledger::Append. The ledger adds seq, kind, time, actor, tool and blobs.
// May throw nlohmann::json::type_error for text that is not UTF-8;
// AppendEntry catches it.
std::string EncodeFields(const GenesisBody& body);
std::string EncodeFields(const SourceBody& body);
std::string EncodeFields(const SealBody& body);
std::string EncodeFields(const PartitionBody& body);
std::string EncodeFields(const ExportBody& body);
std::string EncodeFields(const SelectBody& body);
std::string EncodeFields(const FitBody& body);
std::string EncodeFields(const ApplyBody& body);
std::string EncodeFields(const ScoreBody& body);
std::string EncodeFields(const EvalBody& body);
std::string EncodeFields(const BudgetBody& body);
std::string EncodeFields(const RefusalBody& body);
std::string EncodeFields(const ExposureBody& body);

// --- Decoding ---------------------------------------------------------------

// Fills *body from `entry`. Corruption("entry N (kind): ...") if the entry
// is of another kind or its body is malformed; *body is then unspecified.
Status DecodeBody(const Entry& entry, GenesisBody* body);
Status DecodeBody(const Entry& entry, SourceBody* body);
Status DecodeBody(const Entry& entry, SealBody* body);
Status DecodeBody(const Entry& entry, PartitionBody* body);
Status DecodeBody(const Entry& entry, ExportBody* body);
Status DecodeBody(const Entry& entry, SelectBody* body);
Status DecodeBody(const Entry& entry, FitBody* body);
Status DecodeBody(const Entry& entry, ApplyBody* body);
Status DecodeBody(const Entry& entry, ScoreBody* body);
Status DecodeBody(const Entry& entry, EvalBody* body);
Status DecodeBody(const Entry& entry, BudgetBody* body);
Status DecodeBody(const Entry& entry, RefusalBody* body);
Status DecodeBody(const Entry& entry, ExposureBody* body);

// An entry with its decoded body.
template <typename Body>
struct Decoded {
  Entry entry;  // seq, hash, the stored body text
  Body body;
};

// DecodeBody as a value. Errors as DecodeBody.
template <typename Body>
Result<Body> DecodeEntry(const Entry& entry) {
  Body body;
  UNSEEN_RETURN_IF_ERROR(DecodeBody(entry, &body));
  return body;
}

// Every entry of Body's kind, in ledger order, decoded. Corruption naming
// the first malformed one; the ledger's own errors as Ledger::EntriesOfKind.
template <typename Body>
Result<std::vector<Decoded<Body>>> ReadEntries(const Ledger& ledger) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> entries, ledger.EntriesOfKind(Body::kKind));
  std::vector<Decoded<Body>> out;
  out.reserve(entries.size());
  for (Entry& e : entries) {
    Decoded<Body> d;
    UNSEEN_RETURN_IF_ERROR(DecodeBody(e, &d.body));
    d.entry = std::move(e);
    out.push_back(std::move(d));
  }
  return out;
}

// Appends `body` as an entry of its kind referring to `blobs` (each already
// stored). InvalidArgument if a text field is not UTF-8; otherwise as
// Ledger::Append. REQUIRES: an open transaction on *ledger.
template <typename Body>
Result<Entry> AppendEntry(Ledger* ledger, std::string_view actor, const Body& body,
                          const std::vector<BlobRef>& blobs = {}) {
  std::string fields;
  try {
    fields = EncodeFields(body);
  } catch (const nlohmann::json::exception& e) {
    return Status::InvalidArgument(std::string(Body::kKind) + " entry: " + e.what());
  }
  return ledger->Append(Body::kKind, actor, fields, blobs);
}

// Creates a ledger whose genesis entry carries `genesis` (Ledger::Create;
// errors as there).
Result<std::unique_ptr<Ledger>> CreateLedger(const std::string& path, std::string_view actor,
                                             const GenesisBody& genesis);

// --- Reading any entry -------------------------------------------------------

// What the ledger adds to every body.
struct EntryStamp {
  std::string time;  // UTC, ISO-8601
  std::string actor;
  std::string tool;  // "unseen VERSION"
};
// Corruption("entry N (kind): ...") if a stamp field is missing or not text.
Result<EntryStamp> DecodeStamp(const Entry& entry);

// One line saying what an entry did, from its decoded body: the genesis,
// source and seal entries describe themselves; the other kinds carry their
// own "summary" (an unknown kind's summary text if it has one, else "").
// Corruption as DecodeBody.
Result<std::string> SummarizeEntry(const Entry& entry);

// --- Equality, field by field (the round-trip tests use it) ------------------
// SourceInfo has no equality of its own: two are equal when SourceToJson is.
bool operator==(const FileRecord& a, const FileRecord& b);
bool operator==(const KeyInfo& a, const KeyInfo& b);
bool operator==(const GenesisBody& a, const GenesisBody& b);
bool operator==(const SourceBody& a, const SourceBody& b);
bool operator==(const SealBody& a, const SealBody& b);
bool operator==(const PartitionBody::LabelsFrom& a, const PartitionBody::LabelsFrom& b);
bool operator==(const PartitionBody& a, const PartitionBody& b);
bool operator==(const ExportBody::Fold& a, const ExportBody::Fold& b);
bool operator==(const ExportBody& a, const ExportBody& b);
bool operator==(const SelectBody& a, const SelectBody& b);
bool operator==(const BlendMemberRecord& a, const BlendMemberRecord& b);
bool operator==(const FitBody::Blend& a, const FitBody::Blend& b);
bool operator==(const FitBody::Excluded& a, const FitBody::Excluded& b);
bool operator==(const FitBody& a, const FitBody& b);
bool operator==(const ApplyBody& a, const ApplyBody& b);
bool operator==(const ScoreBody& a, const ScoreBody& b);
bool operator==(const EvalAnswerRecord& a, const EvalAnswerRecord& b);
bool operator==(const EvalThresholdout& a, const EvalThresholdout& b);
bool operator==(const EvalExternal& a, const EvalExternal& b);
bool operator==(const EvalBody& a, const EvalBody& b);
bool operator==(const BudgetBody& a, const BudgetBody& b);
bool operator==(const RefusalBody& a, const RefusalBody& b);
bool operator==(const ExposureBody& a, const ExposureBody& b);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_ENTRIES_H_
