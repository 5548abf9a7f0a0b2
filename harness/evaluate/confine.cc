// PredictorSandbox: a private directory, a scrubbed environment, Landlock
// (filesystem and TCP), seccomp (no sockets, no leaving the process group,
// no kernel-level escapes), a network namespace where we may make one, and
// no capabilities. Kernel interfaces as documented in the Linux kernel's
// Documentation/userspace-api/landlock.rst and seccomp_filter.rst.
#include "harness/evaluate/confine.h"

#include <dirent.h>
#include <fcntl.h>
#include <linux/capability.h>
#include <linux/filter.h>
#include <linux/landlock.h>
#include <linux/seccomp.h>
#include <sched.h>
#include <seccomp.h>
#include <sys/mman.h>
#include <sys/prctl.h>
#include <sys/stat.h>
#include <sys/syscall.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <filesystem>

namespace unseen {

namespace {

// Landlock values newer than Debian 12's <linux/landlock.h> (kernel uapi,
// include/uapi/linux/landlock.h): written by the kernel's ABI, never change.
constexpr uint64_t kFsTruncate = 1ULL << 14;  // ABI 3
constexpr uint64_t kNetBindTcp = 1ULL << 0;   // ABI 4
constexpr uint64_t kNetConnectTcp = 1ULL << 1;
constexpr uint64_t kScopeAbstractUnix = 1ULL << 0;  // ABI 6
constexpr uint64_t kScopeSignal = 1ULL << 1;

struct RulesetAttr {  // struct landlock_ruleset_attr, ABI 6 layout
  uint64_t handled_access_fs = 0;
  uint64_t handled_access_net = 0;
  uint64_t scoped = 0;
};

constexpr uint64_t kFileRead = LANDLOCK_ACCESS_FS_READ_FILE | LANDLOCK_ACCESS_FS_EXECUTE;
constexpr uint64_t kTreeRead = kFileRead | LANDLOCK_ACCESS_FS_READ_DIR;

// Read and execute: the system's programs, libraries and configuration.
const char* const kSystemDirs[] = {"/usr",   "/bin",    "/sbin", "/lib", "/lib32",
                                   "/lib64", "/libx32", "/etc",  "/opt"};
const char* const kDevices[] = {"/dev/zero", "/dev/urandom", "/dev/random", "/dev/full"};

uint64_t FsAccess(int abi) {
  uint64_t all = (1ULL << 13) - 1;  // ABI 1: EXECUTE .. MAKE_SYM
  if (abi >= 2) all |= LANDLOCK_ACCESS_FS_REFER;
  if (abi >= 3) all |= kFsTruncate;
  return all;
}

struct FileId {
  dev_t dev;
  ino_t ino;
};

bool SameFile(const struct stat& s, const std::vector<FileId>& ids) {
  for (const FileId& id : ids) {
    if (id.dev == s.st_dev && id.ino == s.st_ino) return true;
  }
  return false;
}

bool IsBeneath(const std::string& path, const std::string& dir) {
  return path.size() > dir.size() && path.compare(0, dir.size(), dir) == 0 &&
         (dir == "/" || path[dir.size()] == '/');
}

std::string Canonical(const std::string& path) {
  char* real = realpath(path.c_str(), nullptr);
  if (real == nullptr) return std::string();
  std::string out(real);
  free(real);
  return out;
}

// Builds the Landlock ruleset: grants, never denials, so a file kept out
// that lies in a system directory is avoided by granting that directory's
// other entries one by one.
class RulesetBuilder {
 public:
  RulesetBuilder(int fd, int abi, std::vector<std::string> kept, std::vector<FileId> kept_ids)
      : fd_(fd), abi_(abi), kept_(std::move(kept)), kept_ids_(std::move(kept_ids)) {}

  void Tree(const std::string& name, uint64_t access) {
    // By its real path: /bin may be a link to /usr/bin, and a rule follows links.
    const std::string path = Canonical(name);
    struct stat s;
    if (path.empty() || stat(path.c_str(), &s) != 0) return;
    if (SameFile(s, kept_ids_)) return;
    bool holds_kept = false;
    for (const std::string& k : kept_) holds_kept |= IsBeneath(k, path);
    if (!holds_kept || !S_ISDIR(s.st_mode)) {
      Add(path, S_ISDIR(s.st_mode) ? access : (access & kFileRead));
      return;
    }
    // A link to a directory that holds a kept-out file (/bin -> /usr/bin, /usr/bin/X11 -> .):
    // not granted; the directory is split where it really is, once.
    if (path != name) return;
    DIR* d = opendir(path.c_str());
    if (d == nullptr) return;
    while (dirent* e = readdir(d)) {
      if (std::strcmp(e->d_name, ".") == 0 || std::strcmp(e->d_name, "..") == 0) continue;
      Tree(path + "/" + e->d_name, access);
    }
    closedir(d);
  }

  bool Add(const std::string& path, uint64_t access) {
    int parent = open(path.c_str(), O_PATH | O_CLOEXEC);
    if (parent < 0) return false;
    landlock_path_beneath_attr rule{};
    rule.allowed_access = access & FsAccess(abi_);
    rule.parent_fd = parent;
    long r = syscall(SYS_landlock_add_rule, fd_, LANDLOCK_RULE_PATH_BENEATH, &rule, 0);
    close(parent);
    return r == 0;
  }

 private:
  int fd_, abi_;
  std::vector<std::string> kept_;
  std::vector<FileId> kept_ids_;
};

// The seccomp program as classic BPF, built by libseccomp and exported, so
// that the child loads it with one prctl().
std::vector<uint8_t> SeccompProgram(std::string* missing) {
  scmp_filter_ctx ctx = seccomp_init(SCMP_ACT_ALLOW);
  if (ctx == nullptr) {
    *missing = "seccomp_init failed";
    return {};
  }
  int rc = seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EACCES), SCMP_SYS(socket), 0);
  // Leaving the process group (a grandchild that outlives the kill), and the
  // calls through which a process reaches past its confinement.
  const int denied[] = {SCMP_SYS(setsid),
                        SCMP_SYS(setpgid),
                        SCMP_SYS(io_uring_setup),
                        SCMP_SYS(ptrace),
                        SCMP_SYS(bpf),
                        SCMP_SYS(perf_event_open),
                        SCMP_SYS(init_module),
                        SCMP_SYS(finit_module),
                        SCMP_SYS(delete_module),
                        SCMP_SYS(kexec_load),
                        SCMP_SYS(kexec_file_load),
                        SCMP_SYS(mount),
                        SCMP_SYS(umount2),
                        SCMP_SYS(pivot_root),
                        SCMP_SYS(unshare),
                        SCMP_SYS(setns),
                        SCMP_SYS(open_by_handle_at),
                        SCMP_SYS(process_vm_readv),
                        SCMP_SYS(process_vm_writev)};
  for (int sys : denied) rc = rc != 0 ? rc : seccomp_rule_add(ctx, SCMP_ACT_ERRNO(EPERM), sys, 0);
  std::vector<uint8_t> program;
  int fd =
      rc == 0 ? static_cast<int>(syscall(SYS_memfd_create, "unseen-seccomp", MFD_CLOEXEC)) : -1;
  if (fd >= 0 && seccomp_export_bpf(ctx, fd) == 0 && lseek(fd, 0, SEEK_SET) == 0) {
    uint8_t buf[4096];
    ssize_t n;
    while ((n = read(fd, buf, sizeof buf)) > 0) program.insert(program.end(), buf, buf + n);
  }
  if (fd >= 0) close(fd);
  seccomp_release(ctx);
  if (program.empty() || program.size() % sizeof(sock_filter) != 0) {
    *missing = "libseccomp could not build the filter";
    program.clear();
  }
  return program;
}

// Makes the parents of `rel` inside `dir` and a link there to `target`.
void LinkInto(const std::string& dir, const std::string& rel, const std::string& target) {
  std::error_code ec;
  std::filesystem::path link = std::filesystem::path(dir) / rel;
  std::filesystem::create_directories(link.parent_path(), ec);
  std::filesystem::create_symlink(target, link, ec);
}

bool Relative(const std::string& p) {
  if (p.empty() || p[0] == '/') return false;
  for (const auto& part : std::filesystem::path(p)) {
    if (part == "..") return false;
  }
  return true;
}

// Makes every directory writable again (a predictor may chmod its own), then removes.
void RemoveTree(const std::string& dir) {
  std::error_code ec;
  chmod(dir.c_str(), 0700);
  for (auto it = std::filesystem::recursive_directory_iterator(dir, ec);
       !ec && it != std::filesystem::recursive_directory_iterator(); it.increment(ec)) {
    if (it->is_directory(ec) && !it->is_symlink(ec)) chmod(it->path().c_str(), 0700);
  }
  std::filesystem::remove_all(dir, ec);
}

}  // namespace

Result<std::unique_ptr<PredictorSandbox>> PredictorSandbox::Prepare(const SandboxOptions& options) {
  std::unique_ptr<PredictorSandbox> sb(new PredictorSandbox());
  const char* tmp = std::getenv("TMPDIR");
  std::string pattern =
      std::string(tmp != nullptr && *tmp != '\0' ? tmp : "/tmp") + "/unseen-predictor-XXXXXX";
  if (mkdtemp(pattern.data()) == nullptr) {
    return Status::IOError("cannot make the predictor's private directory in " + pattern + ": " +
                           std::strerror(errno));
  }
  sb->dir_ = Canonical(pattern);
  if (sb->dir_.empty()) sb->dir_ = pattern;

  // The environment: ours without UNSEEN_* (a passphrase may be among them), at home in the
  // private directory.
  for (char** e = environ; *e != nullptr; ++e) {
    const std::string v(*e);
    if (v.rfind("UNSEEN_", 0) == 0 || v.rfind("HOME=", 0) == 0 || v.rfind("TMPDIR=", 0) == 0 ||
        v.rfind("PWD=", 0) == 0 || v.rfind("OLDPWD=", 0) == 0) {
      continue;
    }
    sb->env_text_.push_back(v);
  }
  for (const char* name : {"HOME=", "TMPDIR=", "PWD="}) sb->env_text_.push_back(name + sb->dir_);
  for (std::string& v : sb->env_text_) sb->env_.push_back(v.data());
  sb->env_.push_back(nullptr);

  // What must never be read, by name and by inode.
  std::vector<std::string> kept;
  std::vector<FileId> kept_ids;
  for (const std::string& k : options.keep_out) {
    struct stat s;
    if (stat(k.c_str(), &s) != 0) continue;
    kept_ids.push_back({s.st_dev, s.st_ino});
    std::string c = Canonical(k);
    if (!c.empty()) kept.push_back(c);
  }

  // The predictor's own files, readable, and linked into its directory at their relative paths.
  std::vector<std::string> grants;
  for (const std::string& r : options.readable) {
    struct stat s;
    if (stat(r.c_str(), &s) != 0 || !S_ISREG(s.st_mode) || SameFile(s, kept_ids)) continue;
    std::string c = Canonical(r);
    if (c.empty()) continue;
    grants.push_back(c);
    if (Relative(r)) LinkInto(sb->dir_, r, c);
  }

  // Landlock.
  long abi = syscall(SYS_landlock_create_ruleset, nullptr, 0, LANDLOCK_CREATE_RULESET_VERSION);
  if (abi < 1) {
    sb->landlock_missing_ =
        std::string("Landlock is not available on this kernel (") + std::strerror(errno) + ")";
  } else {
    sb->landlock_abi_ = static_cast<int>(abi);
    RulesetAttr attr;
    attr.handled_access_fs = FsAccess(sb->landlock_abi_);
    size_t size = sizeof attr.handled_access_fs;
    if (abi >= 4) {
      attr.handled_access_net = kNetBindTcp | kNetConnectTcp;
      size += sizeof attr.handled_access_net;
    }
    if (abi >= 6) {
      attr.scoped = kScopeAbstractUnix | kScopeSignal;
      size += sizeof attr.scoped;
    }
    int fd = static_cast<int>(syscall(SYS_landlock_create_ruleset, &attr, size, 0));
    if (fd < 0) {
      sb->landlock_abi_ = 0;
      sb->landlock_missing_ =
          std::string("landlock_create_ruleset failed: ") + std::strerror(errno);
    } else {
      sb->ruleset_fd_ = fd;
      RulesetBuilder rules(fd, sb->landlock_abi_, kept, kept_ids);
      for (const char* d : kSystemDirs) rules.Tree(d, kTreeRead);
      for (const char* d : kDevices) rules.Add(d, LANDLOCK_ACCESS_FS_READ_FILE);
      rules.Add("/dev/null",
                LANDLOCK_ACCESS_FS_READ_FILE | LANDLOCK_ACCESS_FS_WRITE_FILE | kFsTruncate);
      for (const std::string& g : grants) rules.Add(g, kFileRead);
      rules.Add(sb->dir_, FsAccess(sb->landlock_abi_));
    }
  }
  sb->seccomp_program_ = SeccompProgram(&sb->seccomp_missing_);
  return sb;
}

PredictorSandbox::~PredictorSandbox() {
  if (ruleset_fd_ >= 0) close(ruleset_fd_);
  Cleanup();
}

void PredictorSandbox::Cleanup() {
  if (!dir_.empty()) RemoveTree(dir_);
  dir_.clear();
}

char* const* PredictorSandbox::envp() const { return env_.data(); }

bool PredictorSandbox::ApplyInChild(int report_fd) const noexcept {
  uint32_t applied = 0;
  if (chdir(dir_.c_str()) != 0) return false;
  applied |= kAppliedDirectory;
  // No network: a namespace of our own (root), or a user namespace holding one.
  if (unshare(CLONE_NEWNET) == 0 || unshare(CLONE_NEWUSER | CLONE_NEWNET) == 0) {
    applied |= kAppliedNetNamespace;
  }
  // No capabilities, now or after exec (the bounding set goes first).
  bool bounded = true;
  for (int c = 0; c < 64; ++c) {
    int held = prctl(PR_CAPBSET_READ, c, 0, 0, 0);
    if (held < 0) break;
    if (held == 1 && prctl(PR_CAPBSET_DROP, c, 0, 0, 0) != 0) bounded = false;
  }
  prctl(PR_CAP_AMBIENT, PR_CAP_AMBIENT_CLEAR_ALL, 0, 0, 0);
  __user_cap_header_struct header{_LINUX_CAPABILITY_VERSION_3, 0};
  __user_cap_data_struct none[2] = {};
  if (syscall(SYS_capset, &header, none) == 0 && (bounded || geteuid() != 0)) {
    applied |= kAppliedCapabilities;
  }
  prctl(PR_SET_NO_NEW_PRIVS, 1, 0, 0, 0);
  if (ruleset_fd_ >= 0 && syscall(SYS_landlock_restrict_self, ruleset_fd_, 0) == 0) {
    applied |= kAppliedLandlock;
    if (landlock_abi_ >= 4) applied |= kAppliedLandlockNet;
  }
  if (!seccomp_program_.empty()) {
    sock_fprog prog{static_cast<unsigned short>(seccomp_program_.size() / sizeof(sock_filter)),
                    reinterpret_cast<sock_filter*>(const_cast<uint8_t*>(seccomp_program_.data()))};
    if (prctl(PR_SET_SECCOMP, SECCOMP_MODE_FILTER, &prog, 0, 0) == 0) applied |= kAppliedSeccomp;
  }
  ssize_t w = write(report_fd, &applied, sizeof applied);
  (void)w;
  return true;
}

std::vector<Protection> PredictorSandbox::Report(uint32_t applied) const {
  std::vector<Protection> out;
  out.push_back({"environment", true,
                 "no UNSEEN_* variable; HOME, TMPDIR and PWD are its private directory"});
  out.push_back({"descriptors", true, "stdin and stdout only; stderr is discarded"});
  out.push_back({"directory", (applied & kAppliedDirectory) != 0,
                 "a fresh private directory as its working directory, removed afterwards"});
  const bool seccomp = (applied & kAppliedSeccomp) != 0;
  const std::string no_seccomp =
      seccomp_missing_.empty() ? "the kernel refused the seccomp filter" : seccomp_missing_;
  out.push_back({"process-group", seccomp,
                 seccomp ? "its own process group, killed as a whole; setsid and setpgid denied "
                           "(seccomp)"
                         : "not enforced: a process may leave its process group with setsid (" +
                               no_seccomp + "); the group is still killed as a whole"});
  out.push_back({"capabilities", (applied & kAppliedCapabilities) != 0,
                 (applied & kAppliedCapabilities) != 0
                     ? "none held, none regained on exec"
                     : "not enforced: the capability bounding set could not be cleared"});
  if ((applied & kAppliedLandlock) != 0) {
    std::string how = "Landlock ABI " + std::to_string(landlock_abi_) +
                      ": reads system directories (/usr, /bin, /lib*, /etc, /opt) and its own "
                      "files only, writes only in its private directory; /proc, the key, the "
                      "ledger and the source are not readable";
    out.push_back({"filesystem", true, how});
  } else {
    out.push_back({"filesystem", false,
                   "not enforced: " +
                       (landlock_missing_.empty() ? std::string("landlock_restrict_self failed")
                                                  : landlock_missing_) +
                       "; the predictor can read and write whatever its user can"});
  }
  std::string net;
  if ((applied & kAppliedNetNamespace) != 0) net = "an empty network namespace";
  if (seccomp) net += std::string(net.empty() ? "" : "; ") + "socket() denied (seccomp)";
  if ((applied & kAppliedLandlockNet) != 0) net += "; TCP bind and connect denied (Landlock)";
  if ((applied & (kAppliedNetNamespace | kAppliedSeccomp)) == 0) {
    out.push_back({"network", false,
                   "not enforced: no network namespace and no seccomp (" + no_seccomp + ")" + net});
  } else {
    out.push_back({"network", true, net});
  }
  return out;
}

}  // namespace unseen
