// StagedFile: an output file written beside its destination under a
// temporary name, hashed as it is written, and moved into place only when
// the command's ledger transaction has committed. Destroyed before
// MoveIntoPlace(), it removes the temporary file. Writing back to the disk
// starts every few MiB (on Linux), so that Close()'s fsync has little left to
// wait for. Not thread-safe.
#ifndef UNSEEN_STORAGE_STAGED_FILE_H_
#define UNSEEN_STORAGE_STAGED_FILE_H_

#include <cstdio>
#include <string>
#include <string_view>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

class StagedFile {
 public:
  // `option` names the command-line option in error messages ("--dev-out").
  StagedFile(std::string path, std::string option);
  ~StagedFile();
  StagedFile(const StagedFile&) = delete;
  StagedFile& operator=(const StagedFile&) = delete;

  Status Open();                       // InvalidArgument if the directory is not writable
  Status Write(std::string_view bytes);  // IOError naming the option and file
  Status Close(Digest256* sha256);     // flushes and fsyncs; the digest of every byte written
  Status MoveIntoPlace();              // REQUIRES: Close() succeeded
  uint64_t size() const { return size_; }
  const std::string& path() const { return path_; }

 private:
  std::string path_, option_, tmp_;
  FILE* f_ = nullptr;
  // Asks the kernel to start writing what was written since writeback_.
  void StartWriteback();

  Sha256 sha_;
  uint64_t size_ = 0;
  uint64_t writeback_ = 0;  // bytes already handed to StartWriteback()
  bool done_ = false;
};

}  // namespace unseen

#endif  // UNSEEN_STORAGE_STAGED_FILE_H_
