#include "harness/ledger/holdout_sealer.h"

#include <utility>

namespace unseen {

Result<std::unique_ptr<HoldoutSealer>> HoldoutSealer::Create(const Key& key, std::string aad,
                                                             std::string_view header,
                                                             char delimiter, size_t columns) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<SealedWriter> writer,
                          SealedWriter::Create(key, std::move(aad)));
  std::string start;
  HoldoutRowsEncoder(delimiter, columns).Begin(header, &start);
  UNSEEN_RETURN_IF_ERROR(writer->Append(start));
  return std::unique_ptr<HoldoutSealer>(new HoldoutSealer(std::move(writer), delimiter, columns));
}

HoldoutSealer::HoldoutSealer(std::unique_ptr<SealedWriter> writer, char delimiter, size_t columns)
    : writer_(std::move(writer)), encoder_(delimiter, columns) {
  current_.text.reserve(kBatchBytes + 4096);
  worker_ = std::thread([this] { Work(); });
}

HoldoutSealer::~HoldoutSealer() {
  if (!worker_.joinable()) return;
  {
    std::lock_guard<std::mutex> lock(mu_);
    done_ = true;
  }
  cv_.notify_all();
  worker_.join();
}

Status HoldoutSealer::AddRow(std::string_view raw) {
  current_.starts.push_back(current_.text.size());
  current_.text.append(raw.data(), raw.size());
  current_.ends.push_back(current_.text.size());
  current_.text.push_back('\n');
  if (current_.text.size() < kBatchBytes) return Status::OK();
  Handoff();
  std::lock_guard<std::mutex> lock(mu_);
  return error_;
}

void HoldoutSealer::Handoff() {
  std::unique_lock<std::mutex> lock(mu_);
  cv_.wait(lock, [this] { return !pending_full_; });
  std::swap(pending_, current_);
  pending_full_ = true;
  lock.unlock();
  cv_.notify_all();
  current_.Clear();
}

void HoldoutSealer::Work() {
  Batch batch;
  std::string encoded;
  for (;;) {
    {
      std::unique_lock<std::mutex> lock(mu_);
      cv_.wait(lock, [this] { return pending_full_ || done_; });
      if (!pending_full_) return;
      std::swap(batch, pending_);
      pending_full_ = false;
    }
    cv_.notify_all();
    encoded.clear();
    encoder_.AddBlock(batch.text, batch.starts, batch.ends, &encoded);
    Status s = writer_->Append(encoded);
    batch.Clear();
    if (!s.ok()) {
      std::lock_guard<std::mutex> lock(mu_);
      if (error_.ok()) error_ = s;
    }
  }
}

Result<std::string> HoldoutSealer::Finish() {
  if (!current_.starts.empty()) Handoff();
  {
    std::lock_guard<std::mutex> lock(mu_);
    done_ = true;
  }
  cv_.notify_all();
  worker_.join();
  // The worker has stopped: its state is ours to read.
  if (!error_.ok()) return error_;
  return writer_->Finish();
}

}  // namespace unseen
