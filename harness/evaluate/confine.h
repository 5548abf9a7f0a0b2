// The confinement of an external predictor: what a command that reads the
// holdout's features may see and do. Everything is prepared in the parent
// before fork() (a private empty directory, the environment, a Landlock
// ruleset, a seccomp program), so that the child only makes
// async-signal-safe system calls before exec. Each protection the kernel
// refuses is reported, never silently dropped (docs/threat-model.md,
// "Predictor confinement"). Thread-compatible; one object per run.
#ifndef UNSEEN_HARNESS_EVALUATE_CONFINE_H_
#define UNSEEN_HARNESS_EVALUATE_CONFINE_H_

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "storage/status.h"

namespace unseen {

// One protection and whether it held for the run. Names (shown and written
// to the ledger, do not rename): "environment", "descriptors", "directory",
// "process-group", "capabilities", "filesystem", "network".
struct Protection {
  std::string name;
  bool enforced = false;
  std::string how;  // the mechanism, or why it could not be enforced
};

struct SandboxOptions {
  // Files the predictor may read (its attached files and the files its
  // command names), as given on the command line: absolute, or relative to
  // the caller's working directory (these appear at the same relative path
  // in the private directory, as links to the originals).
  std::vector<std::string> readable;
  // Files it must never read, whatever else is granted: the key file, the
  // ledger and its journals, the source.
  std::vector<std::string> keep_out;
};

class PredictorSandbox {
 public:
  // Makes the private directory and prepares every protection this kernel
  // offers. IOError when the directory cannot be made.
  static Result<std::unique_ptr<PredictorSandbox>> Prepare(const SandboxOptions& options);
  ~PredictorSandbox();  // removes the private directory and all in it
  PredictorSandbox(const PredictorSandbox&) = delete;
  PredictorSandbox& operator=(const PredictorSandbox&) = delete;

  // The environment to exec with (ours without UNSEEN_*, with HOME, TMPDIR
  // and PWD set to the private directory), null-terminated.
  char* const* envp() const;
  const std::string& directory() const { return dir_; }

  // In the child, after fork() and before exec: applies the protections and
  // writes what it applied (a 32-bit mask) to `report_fd`. Uses only
  // async-signal-safe calls. Returns false when the child must not exec
  // (it could not enter its directory).
  bool ApplyInChild(int report_fd) const noexcept;

  // The protections, from the mask the child wrote (0 if it wrote none).
  std::vector<Protection> Report(uint32_t applied) const;

  // Removes the private directory and all in it; called by the destructor
  // too. REQUIRES: nothing runs in the sandbox any more.
  void Cleanup();

 private:
  PredictorSandbox() = default;
  std::string dir_;
  std::vector<std::string> env_text_;
  std::vector<char*> env_;
  int landlock_abi_ = 0;          // 0: not available
  std::string landlock_missing_;  // why, when not available
  int ruleset_fd_ = -1;
  std::vector<uint8_t> seccomp_program_;  // struct sock_filter[]; empty: not available
  std::string seccomp_missing_;
};

// Names a protection mask bit; exposed for tests.
inline constexpr uint32_t kAppliedDirectory = 1u << 0;
inline constexpr uint32_t kAppliedLandlock = 1u << 1;
inline constexpr uint32_t kAppliedSeccomp = 1u << 2;
inline constexpr uint32_t kAppliedNetNamespace = 1u << 3;
inline constexpr uint32_t kAppliedCapabilities = 1u << 4;
inline constexpr uint32_t kAppliedLandlockNet = 1u << 5;

}  // namespace unseen

#endif  // UNSEEN_HARNESS_EVALUATE_CONFINE_H_
