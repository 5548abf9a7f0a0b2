// The entry codec: for every kind, encode then decode gives the struct back;
// the encoded fields of a fixed struct are pinned as text (the on-disk form);
// and every malformed body decodes to Corruption naming the entry and its
// kind, without an exception.
#include "harness/ledger/entries.h"

#include <gtest/gtest.h>

#include <functional>
#include <nlohmann/json.hpp>
#include <string>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

using json = nlohmann::json;

constexpr int64_t kSeq = 7;

Digest256 D(uint8_t byte) {
  Digest256 d;
  d.fill(byte);
  return d;
}

std::string Hex(uint8_t byte) { return ToHex(D(byte)); }

// An entry as the ledger stores it: the kind's fields plus the ledger's own.
Entry Stored(std::string_view kind, const json& fields) {
  json body = fields;
  body["seq"] = kSeq;
  body["kind"] = std::string(kind);
  body["time"] = "2026-12-03T00:00:00Z";
  body["actor"] = "tester";
  body["tool"] = "unseen test";
  body["blobs"] = json::array();
  Entry e;
  e.seq = kSeq;
  e.kind = std::string(kind);
  e.body = body.dump();
  return e;
}

template <typename Body>
void ExpectRoundTrip(const Body& body) {
  Result<Body> back = DecodeEntry<Body>(Stored(Body::kKind, json::parse(EncodeFields(body))));
  ASSERT_OK(back);
  EXPECT_TRUE(*back == body) << EncodeFields(*back) << "\n" << EncodeFields(body);
  EXPECT_EQ(EncodeFields(*back), EncodeFields(body));
}

// Decodes `body`'s fields after `change`; returns the decoder's status.
template <typename Body>
Status DecodeChanged(const Body& body, const std::function<void(json&)>& change) {
  json fields = json::parse(EncodeFields(body));
  change(fields);
  Body out;
  Status s;
  EXPECT_NO_THROW(s = DecodeBody(Stored(Body::kKind, fields), &out));
  return s;
}

// Corruption that names entry 7, its kind and `what`.
template <typename Body>
void ExpectCorrupt(const Body& body, const std::function<void(json&)>& change,
                   const std::string& what) {
  Status s = DecodeChanged(body, change);
  EXPECT_TRUE(s.IsCorruption()) << s.ToString();
  const std::string prefix = "entry 7 (" + std::string(Body::kKind) + "): ";
  EXPECT_EQ(s.message().rfind(prefix, 0), 0u) << s.message();
  EXPECT_NE(s.message().find(what), std::string::npos) << s.message();
}

// --- samples: every field away from its default ------------------------------

GenesisBody SampleGenesis() {
  GenesisBody b;
  b.ledger_id = "00112233445566778899aabbccddeeff";
  b.row_digest_format = 1;
  return b;
}

SourceBody SampleSource() {
  SourceBody b;
  SourceInfo& s = b.source;
  s.path = "pears.csv";
  s.file_sha256 = D(0x01);
  s.file_size = 1234;
  s.delimiter = ';';
  s.rows = 10;
  // Format 2: no missing counts and no target figures in the source entry.
  s.columns = {{"id", ColumnType::kCategorical, ColumnRole::kId, 0},
               {"weight", ColumnType::kNumeric, ColumnRole::kFeature, 0},
               {"grade", ColumnType::kCategorical, ColumnRole::kTarget, 0}};
  s.task = TaskKind::kClassification;
  s.row_digest_format = 2;
  s.merkle_root = D(0x02);
  b.absolute_path = "/data/pears.csv";
  return b;
}

SealBody SampleSeal() {
  SealBody b;
  b.source_entry = 2;
  b.strategy = "random";
  b.fraction = 0.25;
  b.seed = 3;
  b.requested_holdout = 3;
  b.split_note = "a note";
  b.holdout.rows = 2;
  b.holdout.row_set = D(0x11);
  b.holdout.sealed_rows = D(0x12);
  b.holdout.sealed_digests = D(0x13);
  b.holdout.sealed_summary = D(0x16);
  b.holdout.cipher = "AES-256-GCM";
  b.holdout.compression = "zstd";
  b.holdout.encoding = "columns-1";
  b.dev.rows = 8;
  b.dev.row_set = D(0x14);
  b.dev.file_path = "dev.csv";
  b.dev.file_sha256 = D(0x15);
  b.dev.file_size = 456;
  b.dev.row_digests = D(0x17);
  b.dev.content_digests = D(0x18);
  b.dev.summary.rows = 8;
  b.dev.summary.missing = {0, 2, 0};
  b.dev.summary.target.classes = {{"A", 5}, {"B", 3}};
  b.key.source = "passphrase";
  b.key.scrypt = {16384, 4, 2};
  b.key.salt_hex = "abcd";
  b.key.key_check_hex = "beef";
  b.cross_duplicates_moved_to_dev = true;
  b.group_violations = 4;
  b.time_violations = 5;
  b.budget_queries = 50;
  b.budget_half_width = 0.1;
  b.budget_delta = 0.01;
  return b;
}

PartitionBody SamplePartition() {
  PartitionBody b;
  b.name = "blendrows";
  b.strategy = "stratified";
  b.fraction = 0.5;
  b.seed = 9;
  b.rows = 4;
  b.dev_rows = 8;
  b.requested = 4;
  b.note = "why";
  b.row_set = D(0x21);
  b.labels_from = PartitionBody::LabelsFrom{"pears.csv", D(0x22), "grade"};
  b.parents = {3};
  b.summary = "carved partition blendrows";
  return b;
}

ExportBody SampleExport() {
  ExportBody b;
  b.out = {"dev_all.csv", D(0x31)};
  b.rows = 8;
  b.row_set = D(0x32);
  b.row_column = "unseen_row";
  b.folds = {{"f/fold_1.csv", D(0x33), 4, D(0x34)}, {"f/fold_2.csv", D(0x35), 4, D(0x36)}};
  b.seed = 5;
  b.parents = {3};
  b.summary = "exported 8 dev rows in 2 folds";
  return b;
}

SelectBody SampleSelect() {
  SelectBody b;
  b.model = "m1";
  b.metric = "error_rate";
  b.selection = "k-fold";
  b.folds = 2;
  b.seed = 11;
  b.fold_row_sets = {D(0x41), D(0x42)};
  b.rows_read = D(0x43);
  b.candidates =
      json::array({{{"settings", {{"c", 1}}}, {"fold_scores", {0.5, 0.25}}, {"mean", 0.375}}});
  b.chosen = 1;
  b.parents = {3, 4};
  b.summary = "selected candidate 1";
  return b;
}

FitBody SampleFit() {
  FitBody b;
  b.model = "m1";
  b.model_digest = D(0x51);
  b.spec = D(0x52);
  b.data = {"dev.csv", D(0x53)};
  b.rows_read = D(0x54);
  b.rows = 8;
  b.parents = {3, 5};
  b.candidates_compared = 2;
  b.settings = {{"c", 1}};
  b.learner = "logistic";
  b.excluded = FitBody::Excluded{"blendrows", 4, D(0x55), 3};
  b.holdout_rows_read = 1;
  b.tainted = true;
  b.summary = "froze m1";
  return b;
}

FitBody SampleBlendFit() {
  FitBody b = SampleFit();
  b.excluded.reset();
  b.learner = "blend";
  FitBody::Blend blend;
  blend.members = {{"m1", D(0x56), 6, 0.75, 0.5, 0.125}, {"m2", D(0x57), 8, 0.25, 0.4, 0.0625}};
  blend.intercept = -0.5;
  blend.nonnegative = true;
  blend.partition = {"blendrows", 4, D(0x58)};
  blend.contributions = {{"metric", "brier"}, {"folds", 2}};
  b.blend = blend;
  return b;
}

ApplyBody SampleApply() {
  ApplyBody b;
  b.model = "m1";
  b.model_digest = D(0x61);
  b.data = {"new.csv", D(0x62)};
  b.rows = 5;
  b.output = {"pred.csv", D(0x63)};
  b.parents = {6};
  b.summary = "applied m1 to 5 rows";
  return b;
}

ScoreBody SampleScore() {
  ScoreBody b;
  b.name = "outside";
  b.predictions = {"p.csv", D(0x71)};
  b.rows = 8;
  b.rows_read = D(0x72);
  b.metric = "accuracy";
  b.value = 0.625;
  b.parents = {4, 5};
  b.summary = "scored outside";
  return b;
}

EvalAnswerRecord SampleAnswer() {
  EvalAnswerRecord a;
  a.model = "m1";
  a.kind = "frozen";
  a.model_digest = D(0x81);
  a.metric = "error_rate";
  a.method = "ladder";
  a.delta = 0.05;
  a.n = 2;
  a.estimate = 0.5;
  a.lower = 0.25;
  a.upper = 0.75;
  a.step = 0.001;
  a.range_lo = 0;
  a.range_hi = 1;
  a.range_source = "metric";
  a.target_lo = -1;
  a.target_hi = 2;
  a.prob_floor = 0.0001;
  a.outside_range = true;
  a.queries = 3;
  a.answer_index = 3;
  a.log_share = 1.0;
  a.reveals_before = 1;
  a.log_transcript = 0.5;
  a.log_question = 0.25;
  a.log_hypotheses = 1.5;
  a.contaminated = true;
  a.taints = {"it peeked"};
  a.mode = "ladder";
  a.improved = true;
  a.leader = "m1";
  a.ladder_step = 0.01;
  a.tau = 0.2;
  a.code_length = 4.5;
  a.ladder_max_submissions = 100;
  return a;
}

EvalBody SampleEval() {
  EvalBody b;
  EvalAnswerRecord repeat = SampleAnswer();
  repeat.repeat_of = 9;
  repeat.code_length.reset();
  repeat.ladder_max_submissions.reset();
  b.answers = {SampleAnswer(), repeat};
  b.thresholdout = EvalThresholdout{{0.25, 0.125, 0.0625, 100, 10, 0.05}, D(0x82), 2, 4};
  b.external = EvalExternal{"ext", "python3 predict.py", {{"model.bin", D(0x83)}}, 60};
  b.queries_spent = 1;
  b.queries_total = 3;
  b.budget = 100;
  b.log_hypotheses = 1.5;
  b.holdout_rows = 2;
  b.parents = {6};
  b.accept_contamination = "audit";
  b.summary = "evaluated m1";
  return b;
}

BudgetBody SampleBudget() {
  BudgetBody b;
  b.add_queries = 10;
  b.budget_before = 100;
  b.budget_after = 110;
  b.queries_used = 7;
  b.reason = "more models";
  b.parents = {3};
  b.summary = "raised the holdout budget";
  return b;
}

RefusalBody SampleRefusal() {
  RefusalBody b;
  b.command = "fit";
  b.code = 9;
  b.reason = "holdout rows";
  b.details = {{"holdout_rows", 2}, {"first_lines", {3, 4}}};
  b.summary = "fit refused: holdout rows";
  return b;
}

// --- round trips ---------------------------------------------------------------

TEST(EntriesTest, EveryKindRoundTrips) {
  ExpectRoundTrip(SampleGenesis());
  ExpectRoundTrip(SampleSource());
  ExpectRoundTrip(SampleSeal());
  ExpectRoundTrip(SamplePartition());
  ExpectRoundTrip(SampleExport());
  ExpectRoundTrip(SampleSelect());
  ExpectRoundTrip(SampleFit());
  ExpectRoundTrip(SampleBlendFit());
  ExpectRoundTrip(SampleApply());
  ExpectRoundTrip(SampleScore());
  ExpectRoundTrip(SampleEval());
  ExpectRoundTrip(SampleBudget());
  ExpectRoundTrip(SampleRefusal());
}

TEST(EntriesTest, OptionalPiecesRoundTripWhenAbsent) {
  SourceBody source = SampleSource();
  source.absolute_path.reset();
  source.source.task = TaskKind::kRegression;
  ExpectRoundTrip(source);
  SealBody seal = SampleSeal();
  seal.dev.summary.task = TaskKind::kRegression;  // a range and mean in place of classes
  seal.dev.summary.target = {{}, -1.5, 2.5, 0.25};
  seal.key = KeyInfo{};
  seal.key.key_check_hex = "beef";
  seal.group_violations.reset();
  seal.time_violations.reset();
  seal.budget_half_width = 0;
  seal.budget_delta = 0.05;  // recorded only with a half-width
  ExpectRoundTrip(seal);
  PartitionBody partition = SamplePartition();
  partition.labels_from.reset();
  ExpectRoundTrip(partition);
  ExportBody exported = SampleExport();
  exported.row_column.reset();
  exported.folds.clear();
  ExpectRoundTrip(exported);
  FitBody fit = SampleFit();
  fit.excluded.reset();
  fit.rows_read.reset();
  ExpectRoundTrip(fit);
  EvalBody eval = SampleEval();
  eval.thresholdout.reset();
  eval.external.reset();
  eval.accept_contamination.reset();
  ExpectRoundTrip(eval);
}

// --- the on-disk form ------------------------------------------------------------

TEST(EntriesTest, GenesisFieldsArePinned) {
  EXPECT_EQ(EncodeFields(SampleGenesis()),
            R"({"ledger_id":"00112233445566778899aabbccddeeff","row_digest_format":1})");
}

TEST(EntriesTest, SourceFieldsArePinned) {
  // Format 2: no digest lists, missing counts or target figures.
  const std::string expected =
      R"({"columns":[{"name":"id","role":"id","type":"categorical"},{"name":"weight",)"
      R"("role":"feature","type":"numeric"},{"name":"grade","role":"target",)"
      R"("type":"categorical"}],)"
      R"("delimiter":";","file":{"absolute_path":"/data/pears.csv","path":"pears.csv",)"
      R"("sha256":"0101010101010101010101010101010101010101010101010101010101010101",)"
      R"("size":1234},)"
      R"("merkle_root":"0202020202020202020202020202020202020202020202020202020202020202",)"
      R"("row_digest_format":2,"rows":10,"task":"classification"})";
  EXPECT_EQ(EncodeFields(SampleSource()), expected);
}

TEST(EntriesTest, SealFieldsArePinned) {
  const std::string expected =
      R"({"budget":{"delta":0.01,"half_width":0.1,"queries":50},)"
      R"("cross_duplicates":{"moved_to_dev":true},)"
      R"("dev":{"content_digests":"1818181818181818181818181818181818181818181818181818181818181818",)"
      R"("file":{"path":"dev.csv",)"
      R"("sha256":"1515151515151515151515151515151515151515151515151515151515151515",)"
      R"("size":456},)"
      R"("row_digests":"1717171717171717171717171717171717171717171717171717171717171717",)"
      R"("row_set":"1414141414141414141414141414141414141414141414141414141414141414",)"
      R"("rows":8,"summary":{"missing":[0,2,0],"rows":8,"target":{"classes":{"A":5,"B":3}}}},)"
      R"("fraction":0.25,"holdout":{"cipher":"AES-256-GCM","compression":"zstd",)"
      R"("encoding":"columns-1",)"
      R"("row_set":"1111111111111111111111111111111111111111111111111111111111111111","rows":2,)"
      R"("sealed_digests":"1313131313131313131313131313131313131313131313131313131313131313",)"
      R"("sealed_rows":"1212121212121212121212121212121212121212121212121212121212121212",)"
      R"("sealed_summary":"1616161616161616161616161616161616161616161616161616161616161616"},)"
      R"("key":{"key_check":"beef","salt":"abcd","scrypt":{"N":16384,"p":2,"r":4},)"
      R"("source":"passphrase"},"requested_holdout":3,"seed":3,"source_entry":2,)"
      R"("split_note":"a note","strategy":"random","violations":{"group":4,"time":5}})";
  EXPECT_EQ(EncodeFields(SampleSeal()), expected);
}

TEST(EntriesTest, PartitionFieldsArePinned) {
  const std::string expected =
      R"({"dev_rows":8,"fraction":0.5,"labels_from":{"column":"grade","path":"pears.csv",)"
      R"("sha256":"2222222222222222222222222222222222222222222222222222222222222222"},)"
      R"("name":"blendrows","note":"why","parents":[3],"requested":4,)"
      R"("row_set":"2121212121212121212121212121212121212121212121212121212121212121","rows":4,)"
      R"("seed":9,"strategy":"stratified","summary":"carved partition blendrows"})";
  EXPECT_EQ(EncodeFields(SamplePartition()), expected);
}

TEST(EntriesTest, ExportFieldsArePinned) {
  const std::string expected =
      R"({"folds":[{"path":"f/fold_1.csv",)"
      R"("row_set":"3434343434343434343434343434343434343434343434343434343434343434","rows":4,)"
      R"("sha256":"3333333333333333333333333333333333333333333333333333333333333333"},)"
      R"({"path":"f/fold_2.csv",)"
      R"("row_set":"3636363636363636363636363636363636363636363636363636363636363636","rows":4,)"
      R"("sha256":"3535353535353535353535353535353535353535353535353535353535353535"}],)"
      R"("out":{"path":"dev_all.csv",)"
      R"("sha256":"3131313131313131313131313131313131313131313131313131313131313131"},)"
      R"("parents":[3],"row_column":"unseen_row",)"
      R"("row_set":"3232323232323232323232323232323232323232323232323232323232323232","rows":8,)"
      R"("seed":5,"summary":"exported 8 dev rows in 2 folds"})";
  EXPECT_EQ(EncodeFields(SampleExport()), expected);
}

TEST(EntriesTest, SelectFieldsArePinned) {
  const std::string expected =
      R"({"candidates":[{"fold_scores":[0.5,0.25],"mean":0.375,"settings":{"c":1}}],"chosen":1,)"
      R"("fold_row_sets":["4141414141414141414141414141414141414141414141414141414141414141",)"
      R"("4242424242424242424242424242424242424242424242424242424242424242"],"folds":2,)"
      R"("metric":"error_rate","model":"m1","parents":[3,4],)"
      R"("rows_read":"4343434343434343434343434343434343434343434343434343434343434343",)"
      R"("seed":11,"selection":"k-fold","summary":"selected candidate 1"})";
  EXPECT_EQ(EncodeFields(SampleSelect()), expected);
}

TEST(EntriesTest, FitFieldsArePinned) {
  const std::string expected =
      R"({"candidates_compared":2,"data":{"path":"dev.csv",)"
      R"("sha256":"5353535353535353535353535353535353535353535353535353535353535353"},)"
      R"("excluded":{"entry":4,"partition":"blendrows",)"
      R"("row_set":"5555555555555555555555555555555555555555555555555555555555555555",)"
      R"("rows_dropped":3},"holdout_rows_read":1,"learner":"logistic","model":"m1",)"
      R"("model_digest":"5151515151515151515151515151515151515151515151515151515151515151",)"
      R"("parents":[3,5],"rows":8,)"
      R"("rows_read":"5454545454545454545454545454545454545454545454545454545454545454",)"
      R"("settings":{"c":1},)"
      R"("spec":"5252525252525252525252525252525252525252525252525252525252525252",)"
      R"("summary":"froze m1","tainted":true})";
  EXPECT_EQ(EncodeFields(SampleFit()), expected);
}

TEST(EntriesTest, BlendFitFieldsArePinned) {
  const std::string expected =
      R"({"blend":{"contributions":{"folds":2,"metric":"brier"},"intercept":-0.5,)"
      R"("members":[{"contribution":0.125,"fit_entry":6,"loss_without":0.5,)"
      R"("model_digest":"5656565656565656565656565656565656565656565656565656565656565656",)"
      R"("name":"m1","weight":0.75},{"contribution":0.0625,"fit_entry":8,"loss_without":0.4,)"
      R"("model_digest":"5757575757575757575757575757575757575757575757575757575757575757",)"
      R"("name":"m2","weight":0.25}],"nonnegative":true,"partition":{"entry":4,)"
      R"("name":"blendrows",)"
      R"("row_set":"5858585858585858585858585858585858585858585858585858585858585858"}},)"
      R"("candidates_compared":2,"data":{"path":"dev.csv",)"
      R"("sha256":"5353535353535353535353535353535353535353535353535353535353535353"},)"
      R"("holdout_rows_read":1,"learner":"blend","model":"m1",)"
      R"("model_digest":"5151515151515151515151515151515151515151515151515151515151515151",)"
      R"("parents":[3,5],"rows":8,)"
      R"("rows_read":"5454545454545454545454545454545454545454545454545454545454545454",)"
      R"("settings":{"c":1},)"
      R"("spec":"5252525252525252525252525252525252525252525252525252525252525252",)"
      R"("summary":"froze m1","tainted":true})";
  EXPECT_EQ(EncodeFields(SampleBlendFit()), expected);
}

TEST(EntriesTest, ApplyFieldsArePinned) {
  const std::string expected =
      R"({"data":{"path":"new.csv",)"
      R"("sha256":"6262626262626262626262626262626262626262626262626262626262626262"},)"
      R"("model":"m1",)"
      R"("model_digest":"6161616161616161616161616161616161616161616161616161616161616161",)"
      R"("output":{"path":"pred.csv",)"
      R"("sha256":"6363636363636363636363636363636363636363636363636363636363636363"},)"
      R"("parents":[6],"rows":5,"summary":"applied m1 to 5 rows"})";
  EXPECT_EQ(EncodeFields(SampleApply()), expected);
}

TEST(EntriesTest, ScoreFieldsArePinned) {
  const std::string expected =
      R"({"metric":"accuracy","name":"outside","parents":[4,5],"predictions":{"path":"p.csv",)"
      R"("sha256":"7171717171717171717171717171717171717171717171717171717171717171"},"rows":8,)"
      R"("rows_read":"7272727272727272727272727272727272727272727272727272727272727272",)"
      R"("summary":"scored outside","value":0.625})";
  EXPECT_EQ(EncodeFields(SampleScore()), expected);
}

TEST(EntriesTest, EvalFieldsArePinned) {
  const std::string answer =
      R"("answer_index":3,"code_length":4.5,"contaminated":true,"delta":0.05,)"
      R"("estimate":0.5,"improved":true,"kind":"frozen","ladder_max_submissions":100,)"
      R"("ladder_step":0.01,"leader":"m1","log_hypotheses":1.5,"log_question":0.25,)"
      R"("log_share":1.0,"log_transcript":0.5,"lower":0.25,"method":"ladder","metric":"error_rate","mode":"ladder",)"
      R"("model":"m1",)"
      R"("model_digest":"8181818181818181818181818181818181818181818181818181818181818181",)"
      R"("n":2,"outside_range":true,"prob_floor":0.0001,"queries":3,"range":[0.0,1.0],)"
      R"("range_source":"metric",)"
      R"("repeat_of":null,"reveals_before":1,"step":0.001,"taints":["it peeked"],)"
      R"("target_range":[-1.0,2.0],"tau":0.2,"upper":0.75)";
  const std::string repeat =
      R"("answer_index":3,"contaminated":true,"delta":0.05,"estimate":0.5,)"
      R"("improved":true,"kind":"frozen","ladder_step":0.01,"leader":"m1","log_hypotheses":1.5,)"
      R"("log_question":0.25,"log_share":1.0,)"
      R"("log_transcript":0.5,"lower":0.25,"method":"ladder","metric":"error_rate","mode":"ladder",)"
      R"("model":"m1",)"
      R"("model_digest":"8181818181818181818181818181818181818181818181818181818181818181",)"
      R"("n":2,"outside_range":true,"prob_floor":0.0001,"queries":3,"range":[0.0,1.0],)"
      R"("range_source":"metric",)"
      R"("repeat_of":9,"reveals_before":1,"step":0.001,"taints":["it peeked"],)"
      R"("target_range":[-1.0,2.0],"tau":0.2,)"
      R"("upper":0.75)";
  const std::string expected =
      R"({"accept_contamination":"audit","answers":[{)" + answer + "},{" + repeat +
      R"(}],"budget":100,"external":{"attached":[{"path":"model.bin",)"
      R"("sha256":"8383838383838383838383838383838383838383838383838383838383838383"}],)"
      R"("command":"python3 predict.py","name":"ext","timeout_seconds":60.0},"holdout_rows":2,)"
      R"("log_hypotheses":1.5,"parents":[6],"queries_spent":1,"queries_total":3,)"
      R"("summary":"evaluated m1","thresholdout":{"beta":0.05,"budget":10,"m":100,)"
      R"("run_answers":4,"run_start":2,"sigma":0.0625,)"
      R"("state":"8282828282828282828282828282828282828282828282828282828282828282","tau":0.25,)"
      R"("threshold":0.125}})";
  EXPECT_EQ(EncodeFields(SampleEval()), expected);
}

TEST(EntriesTest, BudgetFieldsArePinned) {
  const std::string expected =
      R"({"add_queries":10,"budget_after":110,"budget_before":100,"parents":[3],)"
      R"("queries_used":7,"reason":"more models","summary":"raised the holdout budget"})";
  EXPECT_EQ(EncodeFields(SampleBudget()), expected);
}

TEST(EntriesTest, RefusalFieldsArePinned) {
  const std::string expected =
      R"({"code":9,"command":"fit","details":{"first_lines":[3,4],"holdout_rows":2},)"
      R"("reason":"holdout rows","summary":"fit refused: holdout rows"})";
  EXPECT_EQ(EncodeFields(SampleRefusal()), expected);
}

// --- exposure, and the confinement an external predictor ran under ---------------

ExposureBody SampleExposure() {
  ExposureBody b;
  b.model = "ext";
  b.model_kind = "external";
  b.model_digest.fill(0x84);
  b.holdout_rows_sent = 100;
  b.reason = "external predictor 'ext' exited with a non-zero status";
  b.confinement = {{"filesystem", true}, {"network", false}};
  b.summary = "eval: external model 'ext' failed on the holdout";
  return b;
}

TEST(EntriesTest, ExposureRoundTripsAndItsFieldsArePinned) {
  ExpectRoundTrip(SampleExposure());
  ExposureBody frozen = SampleExposure();
  frozen.model_kind = "frozen";
  frozen.holdout_rows_sent = 0;
  frozen.confinement.clear();  // not written: no predictor ran
  ExpectRoundTrip(frozen);
  EXPECT_EQ(json::parse(EncodeFields(frozen)).count("confinement"), 0u);
  const std::string expected =
      R"({"command":"eval","confinement":{"filesystem":true,"network":false},)"
      R"("holdout_rows_sent":100,"model":"ext",)"
      R"("model_digest":"8484848484848484848484848484848484848484848484848484848484848484",)"
      R"("model_kind":"external",)"
      R"("reason":"external predictor 'ext' exited with a non-zero status",)"
      R"("summary":"eval: external model 'ext' failed on the holdout"})";
  EXPECT_EQ(EncodeFields(SampleExposure()), expected);
}

TEST(EntriesTest, MalformedExposure) {
  ExpectCorrupt(SampleExposure(), [](json& j) { j.erase("holdout_rows_sent"); },
                "key 'holdout_rows_sent' is missing");
  ExpectCorrupt(SampleExposure(), [](json& j) { j["confinement"]["network"] = "no"; },
                "confinement");
}

TEST(EntriesTest, EvalExternalConfinementIsWrittenOnlyWhenKnown) {
  EvalBody eval = SampleEval();
  // Entries before confinement have none, and keep their form (EvalFieldsArePinned).
  EXPECT_EQ(json::parse(EncodeFields(eval))["external"].count("confinement"), 0u);
  eval.external->confinement = {{"directory", true}, {"filesystem", false}};
  ExpectRoundTrip(eval);
  EXPECT_EQ(json::parse(EncodeFields(eval))["external"]["confinement"],
            json({{"directory", true}, {"filesystem", false}}));
}

// --- malformed bodies: Corruption naming the entry, never an exception ----------

TEST(EntriesTest, BodyThatIsNotAJsonObjectIsCorruption) {
  Entry e = Stored(kKindFit, json::object());
  FitBody fit;
  e.body = "{\"model\":";
  EXPECT_TRUE(DecodeBody(e, &fit).IsCorruption());
  e.body = "[1,2]";
  Status s = DecodeBody(e, &fit);
  EXPECT_TRUE(s.IsCorruption());
  EXPECT_EQ(s.message(), "entry 7 (fit): the body is not a JSON object");
}

TEST(EntriesTest, EntryOfAnotherKindIsCorruption) {
  Entry e = Stored(kKindSelect, json::parse(EncodeFields(SampleFit())));
  FitBody fit;
  Status s = DecodeBody(e, &fit);
  EXPECT_TRUE(s.IsCorruption());
  EXPECT_EQ(s.message(), "entry 7 (select): expected a fit entry");
}

TEST(EntriesTest, MalformedGenesis) {
  ExpectCorrupt(SampleGenesis(), [](json& j) { j.erase("ledger_id"); },
                "key 'ledger_id' is missing");
  ExpectCorrupt(SampleGenesis(), [](json& j) { j["ledger_id"] = 5; },
                "'ledger_id' should be text");
  ExpectCorrupt(SampleGenesis(), [](json& j) { j["row_digest_format"] = "1"; },
                "'row_digest_format' should be a 32-bit integer");
}

TEST(EntriesTest, MalformedSource) {
  // Format 2 has no digest lists, missing counts or target figures here; the keys it has are
  // checked as before.
  ExpectCorrupt(SampleSource(), [](json& j) { j.erase("merkle_root"); },
                "key 'merkle_root' is missing");
  ExpectCorrupt(SampleSource(), [](json& j) { j["file"].erase("sha256"); },
                "key 'file.sha256' is missing");
  ExpectCorrupt(SampleSource(), [](json& j) { j["rows"] = "10"; },
                "'rows' should be an unsigned integer");
  ExpectCorrupt(SampleSource(), [](json& j) { j["columns"][2]["role"] = 1; },
                "'columns.2.role' should be text");
  ExpectCorrupt(SampleSource(), [](json& j) { j["task"] = "ranking"; },
                "'task' should be classification or regression");
  ExpectCorrupt(SampleSource(), [](json& j) { j["file"]["absolute_path"] = 1; },
                "'file.absolute_path' should be text");
  ExpectCorrupt(SampleSource(), [](json& j) { j["merkle_root"] = std::string(64, 'g'); },
                "hex digit");
}

TEST(EntriesTest, MalformedSeal) {
  ExpectCorrupt(SampleSeal(), [](json& j) { j.erase("strategy"); },
                "key 'strategy' is missing");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["holdout"].erase("sealed_rows"); },
                "key 'holdout.sealed_rows' is missing");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["key"].erase("salt"); },
                "key 'key.salt' is missing");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["seed"] = "3"; },
                "'seed' should be an unsigned integer");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["dev"] = 8; }, "'dev' should be an object");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["dev"]["file"]["sha256"] = "00"; },
                "'dev.file.sha256' is not a SHA-256 digest");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["dev"].erase("row_digests"); },
                "key 'dev.row_digests' is missing");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["holdout"]["sealed_digests"] = "xyz"; },
                "'holdout.sealed_digests' is not a SHA-256 digest");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["holdout"].erase("sealed_summary"); },
                "key 'holdout.sealed_summary' is missing");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["dev"].erase("summary"); },
                "key 'dev.summary' is missing");
  ExpectCorrupt(SampleSeal(), [](json& j) { j["dev"]["summary"]["missing"] = "none"; },
                "'dev.summary': row summary: 'missing'");
}

TEST(EntriesTest, SealDefaultsKeepTheirOldValues) {
  // Seals before the holdout encoding had a name, and before the half-width budget.
  json fields = json::parse(EncodeFields(SampleSeal()));
  fields["holdout"].erase("encoding");
  fields["budget"] = {{"queries", 50}};
  fields["key"] = {{"source", "key-file"}, {"key_check", "beef"}};
  Result<SealBody> seal = DecodeEntry<SealBody>(Stored(kKindSeal, fields));
  ASSERT_OK(seal);
  EXPECT_EQ(seal->holdout.encoding, "csv");
  EXPECT_EQ(seal->budget_half_width, 0);
  EXPECT_EQ(seal->budget_delta, 0.05);
  EXPECT_EQ(seal->key.source, "key-file");
  EXPECT_EQ(seal->key.salt_hex, "");
}

TEST(EntriesTest, MalformedPartition) {
  ExpectCorrupt(SamplePartition(), [](json& j) { j.erase("name"); }, "key 'name' is missing");
  ExpectCorrupt(SamplePartition(), [](json& j) { j["fraction"] = "half"; },
                "'fraction' should be a number");
  ExpectCorrupt(SamplePartition(), [](json& j) { j["row_set"] = Hex(1).substr(1); },
                "'row_set' is not a SHA-256 digest");
  ExpectCorrupt(SamplePartition(), [](json& j) { j["parents"] = {"3"}; },
                "'parents' should be an array");
}

TEST(EntriesTest, MalformedExport) {
  ExpectCorrupt(SampleExport(), [](json& j) { j.erase("row_set"); }, "key 'row_set' is missing");
  ExpectCorrupt(SampleExport(), [](json& j) { j["folds"][1]["rows"] = -4; },
                "'folds.1.rows' should be an unsigned integer");
  ExpectCorrupt(SampleExport(), [](json& j) { j["out"]["sha256"] = 1; },
                "'out.sha256' should be a SHA-256 digest in hex");
}

TEST(EntriesTest, MalformedSelect) {
  // Every key is optional (lineage read selects leniently), but present keys are checked.
  Result<SelectBody> empty = DecodeEntry<SelectBody>(Stored(kKindSelect, json::object()));
  ASSERT_OK(empty);
  EXPECT_FALSE(empty->rows_read.has_value());
  ExpectCorrupt(SampleSelect(), [](json& j) { j["chosen"] = 1.5; },
                "'chosen' should be an unsigned integer");
  ExpectCorrupt(SampleSelect(), [](json& j) { j["fold_row_sets"][1] = "00"; },
                "'fold_row_sets.1' is not a SHA-256 digest");
}

TEST(EntriesTest, MalformedFit) {
  ExpectCorrupt(SampleFit(), [](json& j) { j.erase("model_digest"); },
                "key 'model_digest' is missing");
  ExpectCorrupt(SampleFit(), [](json& j) { j["tainted"] = "no"; },
                "'tainted' should be true or false");
  ExpectCorrupt(SampleFit(), [](json& j) { j["rows_read"] = "zz"; },
                "'rows_read' is not a SHA-256 digest");
  ExpectCorrupt(SampleBlendFit(), [](json& j) { j["blend"]["members"][1].erase("fit_entry"); },
                "key 'blend.members.1.fit_entry' is missing");
}

TEST(EntriesTest, FitWithOnlyItsModelKeepsTheListingDefaults) {
  json fields = {{"model", "moved"}, {"model_digest", Hex(9)}};
  Result<FitBody> fit = DecodeEntry<FitBody>(Stored(kKindFit, fields));
  ASSERT_OK(fit);
  EXPECT_EQ(fit->candidates_compared, 1u);
  EXPECT_EQ(fit->learner, "");
  EXPECT_TRUE(fit->parents.empty());
  EXPECT_FALSE(fit->tainted);
  EXPECT_FALSE(fit->rows_read.has_value());
  EXPECT_FALSE(fit->blend.has_value());
}

TEST(EntriesTest, MalformedApply) {
  ExpectCorrupt(SampleApply(), [](json& j) { j.erase("output"); },
                "key 'output.path' is missing");
  ExpectCorrupt(SampleApply(), [](json& j) { j["rows"] = true; },
                "'rows' should be an unsigned integer");
  ExpectCorrupt(SampleApply(), [](json& j) { j["model_digest"] = Hex(1) + "00"; },
                "'model_digest' is not a SHA-256 digest");
}

TEST(EntriesTest, MalformedScore) {
  ExpectCorrupt(SampleScore(), [](json& j) { j.erase("metric"); }, "key 'metric' is missing");
  ExpectCorrupt(SampleScore(), [](json& j) { j["value"] = "0.5"; },
                "'value' should be a number");
  ExpectCorrupt(SampleScore(), [](json& j) { j["predictions"]["sha256"] = "0"; },
                "'predictions.sha256' is not a SHA-256 digest");
}

TEST(EntriesTest, MalformedEval) {
  ExpectCorrupt(SampleEval(), [](json& j) { j.erase("answers"); }, "key 'answers' is missing");
  ExpectCorrupt(SampleEval(), [](json& j) { j["answers"][1].erase("repeat_of"); },
                "key 'answers.1.repeat_of' is missing");
  ExpectCorrupt(SampleEval(), [](json& j) { j["answers"][0]["contaminated"] = 1; },
                "'answers.0.contaminated' should be true or false");
  ExpectCorrupt(SampleEval(), [](json& j) { j["answers"][0]["range"] = {0, 1, 2}; },
                "'answers.0.range' should be [lo, hi]");
  ExpectCorrupt(SampleEval(), [](json& j) { j["answers"][0]["model_digest"] = "x"; },
                "'answers.0.model_digest' is not a SHA-256 digest");
  ExpectCorrupt(SampleEval(), [](json& j) { j["thresholdout"].erase("state"); },
                "key 'thresholdout.state' is missing");
  ExpectCorrupt(SampleEval(), [](json& j) { j["queries_spent"] = "1"; },
                "'queries_spent' should be an unsigned integer");
}

TEST(EntriesTest, EvalBeforeTheLadderAndThresholdoutKeepsTheirDefaults) {
  json fields = json::parse(EncodeFields(SampleEval()));
  fields.erase("thresholdout");
  fields.erase("queries_spent");
  for (const char* key : {"mode", "improved", "leader", "ladder_step", "tau", "code_length",
                          "ladder_max_submissions"}) {
    fields["answers"][0].erase(key);
  }
  Result<EvalBody> eval = DecodeEntry<EvalBody>(Stored(kKindEval, fields));
  ASSERT_OK(eval);
  EXPECT_FALSE(eval->thresholdout.has_value());
  EXPECT_EQ(eval->queries_spent, 0u);
  const EvalAnswerRecord& a = eval->answers[0];
  EXPECT_EQ(a.mode, "plain");
  EXPECT_FALSE(a.improved);
  EXPECT_EQ(a.leader, "");
  EXPECT_EQ(a.ladder_step, 0);
  EXPECT_EQ(a.tau, 0);
  EXPECT_TRUE(a.reveal());
  EXPECT_FALSE(eval->answers[1].reveal());
  EXPECT_EQ(*eval->answers[1].repeat_of, 9);
}

TEST(EntriesTest, MalformedBudget) {
  ExpectCorrupt(SampleBudget(), [](json& j) { j.erase("add_queries"); },
                "key 'add_queries' is missing");
  ExpectCorrupt(SampleBudget(), [](json& j) { j["add_queries"] = "10"; },
                "'add_queries' should be an unsigned integer");
}

TEST(EntriesTest, MalformedRefusal) {
  ExpectCorrupt(SampleRefusal(), [](json& j) { j.erase("details"); }, "key 'details' is missing");
  ExpectCorrupt(SampleRefusal(), [](json& j) { j["code"] = "9"; },
                "'code' should be a 32-bit integer");
}

// --- through a ledger ---------------------------------------------------------------

TEST(EntriesTest, AppendedEntriesReadBackWithTheirSummaries) {
  testing::TempDir dir;
  const std::string path = dir.File("l");
  auto ledger = CreateLedger(path, "tester", SampleGenesis());
  ASSERT_OK(ledger);
  ASSERT_OK(AppendEntry(ledger->get(), "tester", SampleFit()));
  ASSERT_OK(AppendEntry(ledger->get(), "tester", SampleBudget()));
  ASSERT_OK((*ledger)->Commit());

  auto fits = ReadEntries<FitBody>(**ledger);
  ASSERT_OK(fits);
  ASSERT_EQ(fits->size(), 1u);
  EXPECT_EQ((*fits)[0].entry.seq, 2);
  EXPECT_TRUE((*fits)[0].body == SampleFit());
  auto entries = (*ledger)->Entries();
  ASSERT_OK(entries);
  ASSERT_EQ(entries->size(), 3u);
  auto genesis = DecodeEntry<GenesisBody>((*entries)[0]);
  ASSERT_OK(genesis);
  EXPECT_EQ(genesis->format, kLedgerFormatVersion);
  auto stamp = DecodeStamp((*entries)[2]);
  ASSERT_OK(stamp);
  EXPECT_EQ(stamp->actor, "tester");
  EXPECT_EQ(*SummarizeEntry((*entries)[0]), "ledger 00112233445566778899aabbccddeeff");
  EXPECT_EQ(*SummarizeEntry((*entries)[1]), "froze m1");
  EXPECT_EQ(*SummarizeEntry((*entries)[2]), "raised the holdout budget");
}

TEST(EntriesTest, SummariesOfTheSetUpEntriesDescribeThem) {
  auto source = SummarizeEntry(Stored(kKindSource, json::parse(EncodeFields(SampleSource()))));
  ASSERT_OK(source);
  EXPECT_EQ(*source, "pears.csv (10 rows, 3 columns, classification)");
  auto seal = SummarizeEntry(Stored(kKindSeal, json::parse(EncodeFields(SampleSeal()))));
  ASSERT_OK(seal);
  EXPECT_EQ(*seal, "random split, seed 3: holdout 2 rows, dev 8 rows");
  auto note = SummarizeEntry(Stored("note", {{"summary", "hello"}}));
  ASSERT_OK(note);
  EXPECT_EQ(*note, "hello");
  auto bad = SummarizeEntry(Stored(kKindFit, {{"model", 1}}));
  EXPECT_TRUE(bad.status().IsCorruption());
}

}  // namespace
}  // namespace unseen
