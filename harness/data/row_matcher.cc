#include "harness/data/row_matcher.h"

#include <cstring>

#include "storage/digest.h"

namespace unseen {
namespace {

constexpr size_t kShownLines = 5;
// Batches in flight: one being filled, one being matched, one waiting.
constexpr size_t kMaxOutstanding = 3;

}  // namespace

RowMatcher::RowMatcher(MatchTables tables, MatchLayout layout, size_t target,
                       std::optional<size_t> id, bool by_content, bool dev_required)
    : RowMatcher([held = std::make_shared<MatchTables>(
                      std::move(tables))]() -> Result<MatchTables> { return std::move(*held); },
                 std::move(layout), target, id, by_content, dev_required) {}

RowMatcher::RowMatcher(std::function<Result<MatchTables>()> load, MatchLayout layout, size_t target,
                       std::optional<size_t> id, bool by_content, bool dev_required, bool held)
    : load_(std::move(load)),
      layout_(std::move(layout)),
      target_(target),
      id_(id),
      by_content_(by_content),
      dev_required_(dev_required),
      held_(held),
      worker_([this] { Work(); }) {
  if (!held) Release();
}

RowMatcher::~RowMatcher() {
  if (worker_.joinable()) (void)Finish();
}

std::unique_ptr<MatchBatch> RowMatcher::NewBatch() {
  std::optional<std::unique_ptr<MatchBatch>> b = free_.TryPop();
  if (!b) {
    // None free: every batch is with the thread. Make one while fewer than kMaxOutstanding
    // exist, or while held (the thread then takes nothing back); otherwise wait for one.
    if (held_.load() || batches_.load() < kMaxOutstanding) {
      batches_.fetch_add(1);
      return std::make_unique<MatchBatch>();
    }
    b = free_.Pop();  // free_ is never closed, so this returns a batch
  }
  (*b)->Clear();
  return std::move(*b);
}

void RowMatcher::Add(std::unique_ptr<MatchBatch> batch) {
  // A held thread takes nothing from queue_ until the hold ends, so the batches wait there.
  (void)queue_.Push(std::move(batch));  // never full; closed only by Finish()
}

void RowMatcher::Release() {
  held_.store(false);
  std::call_once(release_once_, [this] { release_.set_value(); });
}

void RowMatcher::Stop() {
  stopped_.store(true, std::memory_order_relaxed);
  Release();  // batches still waiting are handed back unmatched
}

MatchResult RowMatcher::Finish() {
  Release();       // Finish() ends a hold: what is queued must then be matched
  queue_.Close();  // the thread matches what is queued, then returns
  worker_.join();
  return std::move(result_);
}

void RowMatcher::Work() {
  released_.wait();
  // Stopped while held: the tables are never needed.
  const bool needed = !stopped_.load(std::memory_order_relaxed);
  if (needed) {
    Result<MatchTables> loaded = load_();
    if (loaded.ok()) {
      tables_ = std::move(*loaded);
    } else {
      result_.status = loaded.status();
    }
  }
  if (needed && result_.status.ok()) {
    if (by_content_) used_.assign(tables_.content_digests.size() / sizeof(RowDigest), false);
    content_.emplace(tables_.content_digests,
                     tables_.known_rows.empty() ? nullptr : &tables_.known_rows);
    holdout_features_.emplace(tables_.holdout_feature_digests);
    match_features_ = !tables_.holdout_feature_digests.empty();
  }
  while (std::optional<std::unique_ptr<MatchBatch>> b = queue_.Pop()) {
    if (result_.status.ok() && !stopped_.load(std::memory_order_relaxed)) Match(**b);
    if (batches_.load() > kMaxOutstanding) {
      // More exist than NewBatch() allows, made during a hold: free this one, so that the
      // reader waits, as it would have without the hold, until the matcher has caught up.
      batches_.fetch_sub(1);
    } else {
      (void)free_.Push(std::move(*b));  // never full, never closed
    }
  }
}

void RowMatcher::Encode(const MatchBatch& b) {
  bytes_.clear();
  ends_.clear();
  target_begin_.clear();
  target_end_.clear();
  const size_t columns = layout_.file_of_source.size();
  for (size_t r = 0; r < b.rows(); ++r) {
    const std::string_view raw = b.records[r];
    SplitWellFormedRecord(raw, layout_.delimiter, &fields_, &scratch_);
    // A cell encodes to at most 9 bytes, or 5 more than its text.
    const size_t at = bytes_.size();
    bytes_.resize(at + raw.size() + 14 * columns);
    char* const base = bytes_.data();
    char* w = base + at;
    for (size_t c = 0; c < columns; ++c) {
      if (id_ && c == *id_) continue;
      const int f = layout_.file_of_source[c];
      const std::string_view cell = f >= 0 && static_cast<size_t>(f) < fields_.size()
                                        ? fields_[static_cast<size_t>(f)]
                                        : std::string_view();
      double v = 0;
      const CellKind kind = ClassifyCell(cell, &v);
      if (c == target_) target_begin_.push_back(static_cast<uint32_t>(w - base));
      w = EncodeClassifiedCell(kind, v, cell, w);
      if (c == target_) target_end_.push_back(static_cast<uint32_t>(w - base));
    }
    bytes_.resize(static_cast<size_t>(w - base));
    ends_.push_back(static_cast<uint32_t>(bytes_.size()));
  }
}

void RowMatcher::Match(const MatchBatch& b) {
  Encode(b);
  const size_t n = b.rows();
  auto begin_of = [&](size_t i) -> size_t { return i == 0 ? 0 : ends_[i - 1]; };
  // Content digests first, two rows at a time where their lengths agree (numeric rows mostly
  // do): the two hashes then run interleaved.
  std::vector<RowDigest>& content = content_digests_;
  content.resize(by_content_ ? n : 0);
  for (size_t i = 0; by_content_ && i < n;) {
    const std::string_view a(bytes_.data() + begin_of(i), ends_[i] - begin_of(i));
    if (i + 1 < n && ends_[i + 1] - ends_[i] == a.size()) {
      const std::string_view c(bytes_.data() + ends_[i], a.size());
      Digest256 da, dc;
      Sha256OfTwo(a, c, &da, &dc);
      content[i] = TruncateToRowDigest(da);
      content[i + 1] = TruncateToRowDigest(dc);
      i += 2;
    } else {
      content[i] = TruncateToRowDigest(Sha256Of(a));
      i += 1;
    }
  }
  constexpr size_t kAhead = 8;  // lookups land at random in the index: fetch a few ahead
  for (size_t i = 0; i < n; ++i) {
    bool is_holdout = false, is_dev = false;
    uint32_t dev_row = 0;
    if (by_content_) {
      if (i + kAhead < n) content_->Prefetch(content[i + kAhead]);
      content_->ForEachMatch(content[i], [&](uint32_t row) {
        if (tables_.holdout.Contains(row)) {
          is_holdout = true;
        } else if (!used_[row] && (!is_dev || row < dev_row)) {
          is_dev = true;
          dev_row = row;
        }
        return true;
      });
      if (is_dev) is_holdout = false;  // an exact duplicate of a dev row is that dev row
    }
    if (!is_dev && match_features_) {
      Sha256 features;
      features.Update(bytes_.data() + begin_of(i), target_begin_[i] - begin_of(i));
      features.Update(bytes_.data() + target_end_[i], ends_[i] - target_end_[i]);
      if (holdout_features_->Contains(TruncateToRowDigest(features.Finish()))) is_holdout = true;
    }
    if (is_dev) {
      used_[dev_row] = true;
      result_.dev_rows.push_back(dev_row);
    }
    if (is_holdout || (dev_required_ && !is_dev)) {
      (is_holdout ? result_.holdout_rows : result_.other_rows)++;
      if (result_.first_lines.size() < kShownLines) result_.first_lines.push_back(b.lines[i]);
    }
  }
}

}  // namespace unseen
