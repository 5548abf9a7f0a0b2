// One accounting for every holdout answer a ledger gives (docs/bounds.md,
// "One accounting"). Answers are numbered 1, 2, ... in the order they are
// given: answer j is the j-th new answer of the ledger, whatever its mode
// (plain, Ladder, Thresholdout) or metric. Answer j gets a fixed share
// delta_j of the ledger's delta, chosen before any answer exists, with
// sum_j delta_j <= delta. Its question was chosen knowing the answers
// before it; a prefix code over what those answers could have shown
// (Kraft's inequality), mixed with a code over the questions fixed before
// the first answer, gives the question a code length Q_j, and answer j's
// interval is computed at level delta_j * exp(-Q_j). With probability at
// least 1 - delta every interval the ledger has shown or will show holds
// at once: a shown interval is final, and a repeated question returns it
// unchanged. Pure functions; thread-safe.
#ifndef UNSEEN_HARNESS_BOUNDS_ACCOUNTING_H_
#define UNSEEN_HARNESS_BOUNDS_ACCOUNTING_H_

#include <cstdint>
#include <optional>

namespace unseen {

// ln(delta / delta_j) for answer j (1-based) of a ledger sealed with a
// budget of B answers:
//
//   delta_j = delta / 2 * ( 1 / (j (j + 1))  +  [j <= B] / B ).
//
// The first term sums to 1 over every j >= 1 (a telescoping series), so it
// also covers answers after a budget raise; the second sums to 1 over the
// sealed budget. Early answers cost little (ln 4 - ln(1 + 2/B) for j = 1)
// and no answer within the budget costs more than ln(2B). REQUIRES j >= 1
// and B >= 1.
double LogDeltaShare(uint64_t answer, uint64_t sealed_budget);

// The code length, in nats, of the question of an answer asked after
// `reveals_before` answers whose code lengths sum to L (log_transcript).
// With no answer before, the question depends on nothing the holdout
// showed: 0. Otherwise half of the answer's share covers every question
// the transcript could have led to (L), and the other half every question
// fixed in advance, when the question is one of those: a model frozen
// before the ledger's first answer, asked a default question
// (`log_advance_choices` = ln(models frozen then x kinds of default
// question); absent when the question is not one of them):
//
//   ln 2 + min(L, log_advance_choices).
double LogQuestionCode(uint64_t reveals_before, double log_transcript,
                       std::optional<double> log_advance_choices);

// Any model applied to the holdout may fail instead of answering (a
// value-free reason, recorded as an `exposure` entry), so every question
// has those outcomes too: an answer's code gains ln(1001/1000) ("it did not
// fail") and a failure costs ln 1001 + ln(16 (C + 2)), an upper bound on
// the distinct value-free reasons for a source of C columns (8 kinds per
// column or none, 14 for external predictors). The two parts' weights sum
// to 1000/1001 + 1/1001 = 1.
double NoFailureCodeLength();
double FailureCodeLength(uint64_t source_columns);

// The code length, in nats, of one plain answer that could have shown one
// of R values: ln R.
double PlainAnswerCodeLength(double log_values);

// The code length of one Ladder answer, for a ladder whose code was fixed
// for k submissions over G grid values: "no change" costs ln(k / (k - 1))
// and a new board value ln(k G), so the code lengths of one answer satisfy
// (1 - 1/k) + G / (k G) = 1 (Kraft). Over a run of s answers with c moves
// this is at most s / (k - 1) + c ln(k G). k = 1 makes "no change" free
// only when it cannot happen: it costs ln 2 and a move ln(2 G) then.
// REQUIRES G >= 1.
double LadderAnswerCodeLength(bool moved, uint64_t max_submissions, uint64_t grid_values);

// The code length of one Thresholdout answer, for a run fixed for m
// queries, whose holdout answers take one of R values: an answer from the
// training rows costs ln(m / (m - 1)), one that used the holdout ln(m R);
// (1 - 1/m) + R / (m R) = 1. m = 1 is treated as m = 2.
double ThresholdoutAnswerCodeLength(bool used_holdout, uint64_t m, double log_values);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_BOUNDS_ACCOUNTING_H_
