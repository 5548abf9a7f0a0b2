#include "harness/data/scan_batches.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstring>

#include "harness/data/row_digest.h"

namespace unseen::internal {

void LabelTally::AddNumber(double v, uint64_t n) {
  if (v == 0) v = 0;  // -0 and +0 are one label
  uint64_t bits;
  std::memcpy(&bits, &v, sizeof bits);
  if (many_.empty()) {
    for (auto& [b, count] : few_) {
      if (b == bits) {
        count += n;
        return;
      }
    }
    if (few_.size() < kFew) {
      few_.emplace_back(bits, n);
      return;
    }
    many_.insert(few_.begin(), few_.end());
    few_.clear();
  }
  many_[bits] += n;
}

void LabelTally::AddText(std::string_view cell, uint64_t n) {
  auto it = texts_.find(std::string(cell));
  if (it != texts_.end()) {
    it->second += n;
  } else {
    texts_.emplace(std::string(cell), n);
  }
}

void LabelTally::Merge(const LabelTally& other, size_t cap) {
  auto number = [&](uint64_t bits, uint64_t n) {
    double v;
    std::memcpy(&v, &bits, sizeof v);
    bool known = false;
    for (const auto& [b, count] : few_) known = known || b == bits;
    if (known || many_.count(bits) || size() <= cap) AddNumber(v, n);
  };
  for (const auto& [bits, n] : other.few_) number(bits, n);
  for (const auto& [bits, n] : other.many_) number(bits, n);
  for (const auto& [text, n] : other.texts_) {
    if (texts_.count(text) || size() <= cap) AddText(text, n);
  }
}

std::map<std::string, uint64_t> LabelTally::Counts() const {
  std::map<std::string, uint64_t> out(texts_.begin(), texts_.end());
  auto add = [&](uint64_t bits, uint64_t n) {
    double v;
    std::memcpy(&v, &bits, sizeof v);
    char buf[32];
    auto res = std::to_chars(buf, buf + sizeof buf, v);
    out[std::string(buf, res.ptr)] += n;
  };
  for (const auto& [bits, n] : few_) add(bits, n);
  for (const auto& [bits, n] : many_) add(bits, n);
  return out;
}

namespace {

// Encodes row r of `batch` at the start of *buf (canonical bytes, row_digest.h), tallying its
// cells, and returns the row; [*id_begin, *id_end) is the id cell's part of it. *buf only grows,
// so it is written without being cleared or zero-filled first.
std::string_view EncodeRow(const ScanLayout& layout, const ScanBatch& batch, size_t r,
                           size_t label_cap, std::string* buf, size_t* id_begin, size_t* id_end,
                           ScanResult* t) {
  const size_t ncol = layout.columns;
  const size_t* bounds = batch.bounds.data() + 2 * r * ncol;
  size_t most = 9 * ncol;
  for (size_t c = 0; c < ncol; ++c) most += bounds[2 * c + 1] - bounds[2 * c];
  if (buf->size() < most) buf->resize(2 * most);
  char* const row = buf->data();
  char* w = row;
  for (size_t c = 0; c < ncol; ++c) {
    const std::string_view cell(batch.bytes.data() + bounds[2 * c],
                                bounds[2 * c + 1] - bounds[2 * c]);
    double v = 0;
    const CellKind k = ClassifyCell(cell, &v);
    if (c == layout.id) *id_begin = static_cast<size_t>(w - row);
    w = EncodeClassifiedCell(k, v, cell, w);
    if (c == layout.id) *id_end = static_cast<size_t>(w - row);
    if (k == CellKind::kMissing) ++t->missing[c];
    if (k == CellKind::kNumber) ++t->numeric[c];
    if (c != layout.target) continue;
    // The reading thread has refused missing targets, and text in a regression target.
    if (k == CellKind::kNumber) {
      t->tmin = std::min(t->tmin, v);
      t->tmax = std::max(t->tmax, v);
      t->target_values.push_back(v);
      if (v != std::floor(v)) t->target_all_integer = false;
      if (t->labels.size() <= label_cap) t->labels.AddNumber(v);
    } else {
      t->target_all_numeric = false;
      if (t->labels.size() <= label_cap) t->labels.AddText(cell);
    }
  }
  return std::string_view(row, static_cast<size_t>(w - row));
}

// The row without its id cell.
std::string_view WithoutId(std::string_view row, size_t id_begin, size_t id_end, std::string* out) {
  out->assign(row.data(), id_begin);
  out->append(row.data() + id_end, row.size() - id_end);
  return *out;
}

}  // namespace

void ScanRows(const ScanLayout& layout, const ScanBatch& batch, size_t label_cap, ScanResult* out) {
  const size_t n = batch.rows;
  out->row_digests.resize(n);
  out->content_digests.resize(layout.id ? n : 0);
  out->numeric.assign(layout.columns, 0);
  out->missing.assign(layout.columns, 0);
  out->labels = LabelTally();
  out->target_all_numeric = out->target_all_integer = true;
  out->tmin = INFINITY;
  out->tmax = -INFINITY;
  out->target_values.clear();
  // Two rows at a time: rows of numbers have equal lengths, and two SHA-256 computations run
  // interleaved at about the cost of one.
  thread_local std::string a, b, ca, cb;
  size_t ia0 = 0, ia1 = 0, ib0 = 0, ib1 = 0;
  Digest256 da, db;
  size_t r = 0;
  for (; r + 1 < n; r += 2) {
    const std::string_view ra = EncodeRow(layout, batch, r, label_cap, &a, &ia0, &ia1, out);
    const std::string_view rb = EncodeRow(layout, batch, r + 1, label_cap, &b, &ib0, &ib1, out);
    Sha256OfTwo(ra, rb, &da, &db);
    out->row_digests[r] = TruncateToRowDigest(da);
    out->row_digests[r + 1] = TruncateToRowDigest(db);
    if (layout.id) {
      Sha256OfTwo(WithoutId(ra, ia0, ia1, &ca), WithoutId(rb, ib0, ib1, &cb), &da, &db);
      out->content_digests[r] = TruncateToRowDigest(da);
      out->content_digests[r + 1] = TruncateToRowDigest(db);
    }
  }
  if (r < n) {
    const std::string_view ra = EncodeRow(layout, batch, r, label_cap, &a, &ia0, &ia1, out);
    out->row_digests[r] = TruncateToRowDigest(Sha256Of(ra));
    if (layout.id) {
      out->content_digests[r] = TruncateToRowDigest(Sha256Of(WithoutId(ra, ia0, ia1, &ca)));
    }
  }
  if (n == kScanBatchRows) {
    MerkleBuilder subtree;
    subtree.AddLeaves(out->row_digests.data(), sizeof(RowDigest), n);
    out->subtree_root = subtree.Root();
  }
}

ScanPipeline::ScanPipeline(ScanLayout layout, size_t label_cap, int workers, MergeFn merge)
    : layout_(std::move(layout)),
      label_cap_(label_cap),
      merge_(std::move(merge)),
      max_batches_(3 * static_cast<size_t>(std::max(workers, 0)) + 2),
      queue_(max_batches_),
      free_(max_batches_),
      free_results_(BoundedQueue<std::unique_ptr<ScanResult>>::kNoLimit) {
  for (int i = 0; i < workers; ++i) workers_.emplace_back([this] { Work(); });
}

ScanPipeline::~ScanPipeline() { Finish(); }

std::unique_ptr<ScanBatch> ScanPipeline::NewBatch() {
  std::optional<std::unique_ptr<ScanBatch>> b = free_.TryPop();
  if (b) return std::move(*b);
  if (batches_ < max_batches_) {
    ++batches_;
    return std::make_unique<ScanBatch>();
  }
  // Every batch is in flight: wait until the next one is merged. free_ is never closed.
  return std::move(*free_.Pop());
}

void ScanPipeline::Add(std::unique_ptr<ScanBatch> batch) {
  batch->index = next_index_++;
  (void)queue_.Push(std::move(batch));  // never full; closed only by Finish()
}

void ScanPipeline::Work() {
  while (std::optional<std::unique_ptr<ScanBatch>> batch = queue_.Pop()) {
    std::optional<std::unique_ptr<ScanResult>> result = free_results_.TryPop();
    if (!result) result = std::make_unique<ScanResult>();
    ScanRows(layout_, **batch, label_cap_, result->get());
    MergeInOrder(Done{std::move(*batch), std::move(*result)});
  }
}

void ScanPipeline::MergeInOrder(Done done) {
  std::unique_lock<std::mutex> lock(merge_mu_);
  const uint64_t index = done.batch->index;
  done_.emplace(index, std::move(done));
  // One thread merges at a time, in batch order, outside the lock. A worker that finds another
  // merging leaves its batch in done_; the merging one looks for the next batch under the lock
  // before it stops, so no batch is left behind.
  if (merging_) return;
  merging_ = true;
  for (auto it = done_.find(next_merge_); it != done_.end(); it = done_.find(next_merge_)) {
    Done d = std::move(it->second);
    done_.erase(it);
    lock.unlock();
    merge_(*d.batch, *d.result);
    d.batch->Clear();
    (void)free_.Push(std::move(d.batch));  // never full, never closed
    (void)free_results_.Push(std::move(d.result));
    lock.lock();
    ++next_merge_;
  }
  merging_ = false;
}

void ScanPipeline::Finish() {
  if (finished_) return;
  finished_ = true;
  // The workers scan what is queued and return once it is empty. The worker that files the
  // next batch in order merges it and every later one already filed (MergeInOrder), so once all
  // have returned, every batch added has been merged.
  queue_.Close();
  for (std::thread& t : workers_) t.join();
}

}  // namespace unseen::internal
