#include "harness/data/row_matcher.h"

#include "storage/digest.h"

namespace unseen {
namespace {

constexpr size_t kShownLines = 5;
// Batches in flight: one being filled, one being matched, one waiting.
constexpr size_t kMaxOutstanding = 3;

}  // namespace

RowMatcher::RowMatcher(const DigestIndex& content, const DigestIndex& holdout_features,
                       const RowSet& holdout, uint64_t source_rows, bool by_content,
                       bool dev_required)
    : content_(content),
      holdout_features_(holdout_features),
      holdout_(holdout),
      by_content_(by_content),
      dev_required_(dev_required),
      used_(by_content ? source_rows : 0, false),
      worker_([this] { Work(); }) {}

RowMatcher::~RowMatcher() {
  if (worker_.joinable()) (void)Finish();
}

std::unique_ptr<MatchBatch> RowMatcher::NewBatch() {
  std::unique_lock<std::mutex> lock(mu_);
  cv_.wait(lock, [this] { return outstanding_ < kMaxOutstanding; });
  ++outstanding_;
  if (free_.empty()) return std::make_unique<MatchBatch>();
  std::unique_ptr<MatchBatch> b = std::move(free_.back());
  free_.pop_back();
  b->Clear();
  return b;
}

void RowMatcher::Add(std::unique_ptr<MatchBatch> batch) {
  {
    std::lock_guard<std::mutex> lock(mu_);
    queue_.push_back(std::move(batch));
  }
  cv_.notify_all();
}

MatchResult RowMatcher::Finish() {
  {
    std::lock_guard<std::mutex> lock(mu_);
    stopping_ = true;
  }
  cv_.notify_all();
  worker_.join();
  return std::move(result_);
}

void RowMatcher::Work() {
  for (;;) {
    std::unique_ptr<MatchBatch> b;
    {
      std::unique_lock<std::mutex> lock(mu_);
      cv_.wait(lock, [this] { return !queue_.empty() || stopping_; });
      if (queue_.empty()) return;
      b = std::move(queue_.front());
      queue_.pop_front();
    }
    Match(*b);
    {
      std::lock_guard<std::mutex> lock(mu_);
      free_.push_back(std::move(b));
      --outstanding_;
    }
    cv_.notify_all();
  }
}

void RowMatcher::Match(const MatchBatch& b) {
  const size_t n = b.rows();
  auto begin_of = [&](size_t i) -> size_t { return i == 0 ? 0 : b.ends[i - 1]; };
  // Content digests first, two rows at a time where their lengths agree (numeric rows mostly
  // do): the two hashes then run interleaved.
  std::vector<RowDigest> content(by_content_ ? n : 0);
  for (size_t i = 0; by_content_ && i < n;) {
    const std::string_view a(b.bytes.data() + begin_of(i), b.ends[i] - begin_of(i));
    if (i + 1 < n && b.ends[i + 1] - b.ends[i] == a.size()) {
      const std::string_view c(b.bytes.data() + b.ends[i], a.size());
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
      if (i + kAhead < n) content_.Prefetch(content[i + kAhead]);
      content_.ForEachMatch(content[i], [&](uint32_t row) {
        if (holdout_.Contains(row)) {
          is_holdout = true;
        } else if (!used_[row] && (!is_dev || row < dev_row)) {
          is_dev = true;
          dev_row = row;
        }
        return true;
      });
      if (is_dev) is_holdout = false;  // an exact duplicate of a dev row is that dev row
    }
    if (!is_dev) {
      Sha256 features;
      features.Update(b.bytes.data() + begin_of(i), b.target_begin[i] - begin_of(i));
      features.Update(b.bytes.data() + b.target_end[i], b.ends[i] - b.target_end[i]);
      if (holdout_features_.Contains(TruncateToRowDigest(features.Finish()))) is_holdout = true;
    }
    if (is_dev) {
      used_[dev_row] = true;
      result_.dev_rows.push_back(dev_row);
    } else {
      result_.every_row_dev = false;
    }
    if (is_holdout || (dev_required_ && !is_dev)) {
      (is_holdout ? result_.holdout_rows : result_.other_rows)++;
      if (result_.first_lines.size() < kShownLines) result_.first_lines.push_back(b.lines[i]);
    }
  }
}

}  // namespace unseen
