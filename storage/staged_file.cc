#include "storage/staged_file.h"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

namespace unseen {
namespace {

// How often writing back starts. Large enough that the calls cost nothing, small enough that
// the disk works while the command computes.
constexpr uint64_t kWritebackBytes = uint64_t{16} << 20;

}  // namespace

StagedFile::StagedFile(std::string path, std::string option)
    : path_(std::move(path)), option_(std::move(option)),
      tmp_(path_ + ".partial-" + std::to_string(::getpid())) {}

StagedFile::~StagedFile() {
  if (f_) std::fclose(f_);
  if (!done_) ::unlink(tmp_.c_str());
}

Status StagedFile::Open() {
  f_ = std::fopen(tmp_.c_str(), "wb");
  if (!f_) return Status::InvalidArgument(option_ + ": cannot write " + tmp_ + ": " + std::strerror(errno));
  std::setvbuf(f_, nullptr, _IOFBF, 1 << 20);
  return Status::OK();
}

Status StagedFile::Write(std::string_view bytes) {
  sha_.Update(bytes);
  size_ += bytes.size();
  if (std::fwrite(bytes.data(), 1, bytes.size(), f_) != bytes.size()) {
    return Status::IOError(option_ + ": write to " + tmp_ + " failed: " + std::strerror(errno));
  }
  if (size_ - writeback_ >= kWritebackBytes) StartWriteback();
  return Status::OK();
}

void StagedFile::StartWriteback() {
#ifdef __linux__
  // Only a hint: a failure here shows up again at Close()'s fsync.
  if (std::fflush(f_) == 0) {
    (void)::sync_file_range(fileno(f_), static_cast<off_t>(writeback_),
                            static_cast<off_t>(size_ - writeback_), SYNC_FILE_RANGE_WRITE);
  }
#endif
  writeback_ = size_;
}

Status StagedFile::Close(Digest256* digest) {
  *digest = sha_.Finish();
  bool ok = std::fflush(f_) == 0 && ::fsync(fileno(f_)) == 0;
  ok = std::fclose(f_) == 0 && ok;
  f_ = nullptr;
  if (!ok) return Status::IOError(option_ + ": cannot finish " + tmp_ + ": " + std::strerror(errno));
  return Status::OK();
}

Status StagedFile::MoveIntoPlace() {
  if (std::rename(tmp_.c_str(), path_.c_str()) != 0) {
    return Status::IOError(option_ + ": cannot move " + tmp_ + " to " + path_ + ": " + std::strerror(errno));
  }
  done_ = true;
  return Status::OK();
}

}  // namespace unseen
