#include "harness/ledger/holdout_sealer.h"

#include <optional>
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

HoldoutSealer::~HoldoutSealer() { Stop(); }

void HoldoutSealer::Stop() {
  if (!worker_.joinable()) return;
  full_.Close();
  worker_.join();
}

Status HoldoutSealer::AddRow(std::string_view raw) {
  current_.starts.push_back(current_.text.size());
  current_.text.append(raw.data(), raw.size());
  current_.ends.push_back(current_.text.size());
  current_.text.push_back('\n');
  if (current_.text.size() < kBatchBytes) return Status::OK();
  return Handoff();
}

Status HoldoutSealer::Handoff() {
  // Push() fails only once the worker has failed: the caller's thread closes full_ only after
  // its last Handoff().
  const bool taken = full_.Push(std::move(current_));
  std::optional<Batch> reused = empty_.TryPop();
  current_ = reused ? std::move(*reused) : Batch();
  return taken ? Status::OK() : error_;
}

void HoldoutSealer::Work() {
  std::string encoded;
  while (std::optional<Batch> batch = full_.Pop()) {
    encoded.clear();
    encoder_.AddBlock(batch->text, batch->starts, batch->ends, &encoded);
    Status s = writer_->Append(encoded);
    if (!s.ok()) {
      // The blob is lost: stop, and let the caller's next Handoff() fail rather than wait.
      error_ = std::move(s);
      full_.Close();
      return;
    }
    batch->Clear();
    (void)empty_.Push(std::move(*batch));  // never closed, never full
  }
}

Result<std::string> HoldoutSealer::Finish() {
  if (!current_.starts.empty()) (void)Handoff();  // a failure is in error_, read below
  Stop();
  // The worker has stopped: its state is ours to read.
  if (!error_.ok()) return error_;
  return writer_->Finish();
}

}  // namespace unseen
