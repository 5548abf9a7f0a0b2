// HoldoutGuard::EvaluateExternal: runs a predictor outside the tool on the
// holdout's feature columns. The child reads CSV on stdin and writes CSV on
// stdout; the guard keeps the token -> row map, so predictions are matched
// back to rows without the child ever seeing a row number, an id or a target.
#include <fcntl.h>
#include <fmt/core.h>
#include <poll.h>
#include <signal.h>
#include <sys/syscall.h>
#include <sys/wait.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cmath>
#include <cstring>
#include <unordered_map>
#include <vector>

#include "harness/data/csv.h"
#include "harness/data/source_scan.h"
#include "harness/evaluate/guard.h"
#include "harness/sampling/random.h"

namespace unseen {

namespace {

constexpr size_t kMaxOutput = size_t{1} << 30;  // 1 GiB of predictions is not a predictor

std::string Quoted(std::string_view cell, char delimiter) {
  bool quote = cell.find_first_of(std::string("\"\r\n") + delimiter) != std::string_view::npos;
  if (!quote) return std::string(cell);
  std::string out = "\"";
  for (char c : cell) {
    out += c;
    if (c == '"') out += '"';
  }
  return out + "\"";
}

struct ChildResult {
  std::string out;
  int status = 0;
  bool timed_out = false;
  bool started = false;    // exec'd: it could read its stdin
  size_t written = 0;      // bytes of input it was sent
  uint32_t applied = 0;    // the protections the child applied (confine.h)
};

// Reads the child's report of its protections: 4 bytes, then EOF at exec
// (the pipe is close-on-exec). Nothing and EOF: it never reached exec.
uint32_t ReadReport(int fd, bool* complete) {
  char buf[sizeof(uint32_t) + 1];
  size_t got = 0;
  while (got < sizeof buf) {
    ssize_t n = read(fd, buf + got, sizeof buf - got);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) break;
    got += static_cast<size_t>(n);
  }
  *complete = got == sizeof(uint32_t);
  uint32_t applied = 0;
  if (*complete) std::memcpy(&applied, buf, sizeof applied);
  return applied;
}

// Whether `pid` has exited; leaves it a zombie, so that its pid (and its
// process group's id) cannot be reused before we kill the group and reap it.
bool Exited(pid_t pid) {
  siginfo_t info{};
  return waitid(P_PID, static_cast<id_t>(pid), &info, WEXITED | WNOHANG | WNOWAIT) == 0 &&
         info.si_pid == pid;
}

// Runs `command` under /bin/sh -c in its own process group inside `sandbox`,
// feeding `input` and collecting stdout until the shell exits or the
// deadline passes. Then the whole group is killed: a grandchild that
// outlives the shell, or a predictor that closed its output and sleeps,
// never outlasts the run.
Result<ChildResult> RunChild(const std::string& command, const std::string& input,
                             std::chrono::milliseconds timeout, const PredictorSandbox& sandbox) {
  int in[2], out[2], report[2];
  if (pipe2(in, O_CLOEXEC) != 0 || pipe2(out, O_CLOEXEC) != 0 || pipe2(report, O_CLOEXEC) != 0) {
    return Status::IOError(std::string("cannot create pipes: ") + std::strerror(errno));
  }
  const int devnull = open("/dev/null", O_WRONLY | O_CLOEXEC);
  pid_t pid = fork();
  if (pid < 0)
    return Status::IOError(std::string("cannot start the predictor: ") + std::strerror(errno));
  if (pid == 0) {
    // Only async-signal-safe calls from here to exec.
    setpgid(0, 0);
    dup2(in[0], 0);
    dup2(out[1], 1);
    dup2(devnull, 2);  // its stderr would carry what it read to our caller's terminal
    if (!sandbox.ApplyInChild(report[1])) _exit(127);
    if (report[1] != 3) dup3(report[1], 3, O_CLOEXEC);
    // No other open file: the ledger's database among them.
    close_range(4, ~0U, 0);
    execle("/bin/sh", "sh", "-c", command.c_str(), static_cast<char*>(nullptr),
           sandbox.envp());
    _exit(127);
  }
  setpgid(pid, pid);
  for (int fd : {in[0], out[1], report[1], devnull}) close(fd);
  ChildResult r;
  r.applied = ReadReport(report[0], &r.started);
  close(report[0]);
  for (int fd : {in[1], out[0]}) fcntl(fd, F_SETFL, fcntl(fd, F_GETFL) | O_NONBLOCK);
  signal(SIGPIPE, SIG_IGN);
  int to_child = in[1];
  if (input.empty() || !r.started) {
    close(to_child);
    to_child = -1;
  }
  // Readable when the shell exits (Linux 5.3); else the loop polls every 20 ms.
  const int exit_fd = static_cast<int>(syscall(SYS_pidfd_open, pid, 0));
  bool out_open = true;
  const auto deadline = std::chrono::steady_clock::now() + timeout;
  char buf[65536];
  for (;;) {
    auto left = std::chrono::duration_cast<std::chrono::milliseconds>(
        deadline - std::chrono::steady_clock::now());
    if (left.count() <= 0 || r.out.size() > kMaxOutput) {
      r.timed_out = left.count() <= 0;
      break;
    }
    if (Exited(pid)) {
      while (out_open) {  // what it wrote before it exited
        ssize_t n = read(out[0], buf, sizeof buf);
        if (n > 0) r.out.append(buf, static_cast<size_t>(n));
        if (n == 0 || (n < 0 && errno != EINTR)) out_open = false;
      }
      break;
    }
    pollfd fds[3];
    int nfds = 0;
    if (to_child >= 0) fds[nfds++] = {to_child, POLLOUT, 0};
    if (out_open) fds[nfds++] = {out[0], POLLIN, 0};
    if (exit_fd >= 0) fds[nfds++] = {exit_fd, POLLIN, 0};
    const int wait_ms = exit_fd >= 0 ? 1000 : 20;
    int ready = poll(fds, static_cast<nfds_t>(nfds),
                     static_cast<int>(std::min<int64_t>(left.count(), wait_ms)));
    if (ready < 0 && errno != EINTR) break;
    for (int i = 0; i < nfds; ++i) {
      if (fds[i].revents == 0 || fds[i].fd == exit_fd) continue;
      if (fds[i].fd == to_child) {
        ssize_t w = write(to_child, input.data() + r.written,
                          std::min<size_t>(input.size() - r.written, 65536));
        if (w > 0) r.written += static_cast<size_t>(w);
        if ((w < 0 && errno != EAGAIN && errno != EINTR) || r.written == input.size()) {
          close(to_child);  // all sent, or the child stopped reading
          to_child = -1;
        }
        continue;
      }
      ssize_t n = read(out[0], buf, sizeof buf);
      if (n > 0) r.out.append(buf, static_cast<size_t>(n));
      if (n == 0 || (n < 0 && errno != EAGAIN && errno != EINTR)) out_open = false;
    }
  }
  // The shell is a zombie or still running: either way its group id is ours to kill.
  kill(-pid, SIGKILL);
  if (to_child >= 0) close(to_child);
  if (exit_fd >= 0) close(exit_fd);
  close(out[0]);
  int status = 0;
  while (waitpid(pid, &status, 0) < 0 && errno == EINTR) {
  }
  r.status = status;
  return r;
}

// What the predictor reads: the feature columns of every holdout row, in a
// fresh random order, each row under an opaque token; and the way back.
struct PredictorInput {
  std::string csv;
  std::unordered_map<std::string, size_t> row_of_token;
};

PredictorInput MakeInput(const Frame& features, size_t n, char d, uint64_t shuffle_seed) {
  std::vector<size_t> order(n);
  for (size_t i = 0; i < n; ++i) order[i] = i;
  Random rng(shuffle_seed);
  rng.Shuffle(order.data(), n);
  PredictorInput in;
  std::vector<std::string> tokens(n);
  for (size_t i = 0; i < n; ++i) {
    std::string t;
    do {
      t = fmt::format("t{:016x}", rng.Next());
    } while (in.row_of_token.count(t));
    in.row_of_token[t] = order[i];
    tokens[i] = t;
  }
  in.csv = "unseen_token";
  for (const FrameColumn& c : features.columns) in.csv += d + Quoted(c.name, d);
  in.csv += "\n";
  for (size_t i = 0; i < n; ++i) {
    in.csv += tokens[i];
    for (const FrameColumn& c : features.columns) {
      in.csv += d;
      if (c.numeric) {
        double v = c.num[order[i]];
        if (!std::isnan(v)) in.csv += fmt::format("{}", v);
      } else {
        in.csv += Quoted(c.cat[order[i]], d);
      }
    }
    in.csv += "\n";
  }
  return in;
}

// How a predictor that received the features failed, in words it cannot
// choose: neither its exit status nor its stderr is shown, as either could
// carry what it read.
Status CheckFinished(const ChildResult& run, const std::string& who,
                     std::chrono::milliseconds timeout) {
  if (run.timed_out) {
    return Status::InvalidArgument(who + " did not finish within " +
                                   fmt::format("{}", timeout.count() / 1000.0) +
                                   " s; it was stopped");
  }
  if (!run.started) return Status::InvalidArgument(who + " could not be started");
  if (WIFSIGNALED(run.status)) return Status::InvalidArgument(who + " was killed by a signal");
  if (WEXITSTATUS(run.status) != 0) {
    return Status::InvalidArgument(who + " exited with a non-zero status (its status and "
                                         "stderr are not shown: they could carry what it read)");
  }
  return Status::OK();
}

// Reads the predictor's answer: a header, then token,prediction[,p_CLASS...]
// per row, every token exactly once.
class OutputReader {
 public:
  OutputReader(const SourceInfo& source, const PredictorInput& in, std::string who)
      : classification_(source.task == TaskKind::kClassification), in_(in),
        who_(std::move(who)) {
    for (const auto& [label, count] : source.target.classes) labels_.push_back(label);
  }

  Result<Predictions> Read(std::string out) {
    CsvOptions options;
    options.delimiter = ',';
    auto csv = CsvFile::FromBytes("<predictor output>", std::move(out), options);
    if (!csv.ok()) {
      return Status::InvalidArgument(who_ + ": its output is not CSV; expected a header line, "
                                            "then token,prediction per row");
    }
    UNSEEN_RETURN_IF_ERROR(ReadHeader((*csv)->header()));
    const size_t n = in_.row_of_token.size();
    p_.value = Eigen::VectorXd::Constant(static_cast<Eigen::Index>(n), NAN);
    if (has_proba_) {
      p_.proba = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(n),
                                       static_cast<Eigen::Index>(labels_.size()));
    }
    seen_.assign(n, false);
    Status parsed = (*csv)->ForEachRecord([&](const CsvRecord& r) { return ReadRow(r); });
    if (!parsed.ok()) {
      if (parsed.code() == StatusCode::kInvalidArgument && parsed.message().rfind(who_, 0) == 0)
        return parsed;
      return Status::InvalidArgument(who_ + ": its output is not CSV; expected a header line, "
                                            "then token,prediction per row");
    }
    if (count_ != n) {
      return Status::InvalidArgument(who_ + " did not answer every token; expected " +
                                     std::to_string(n) + " rows, one per token");
    }
    return std::move(p_);
  }

  int classes() const { return static_cast<int>(labels_.size()); }

 private:
  Status ReadHeader(const std::vector<std::string>& header) {
    if (header.size() < 2) {
      return Status::InvalidArgument(who_ + ": its output has fewer than 2 columns; expected "
                                            "token,prediction[,p_CLASS...]");
    }
    proba_col_.assign(labels_.size(), -1);
    for (size_t c = 2; c < header.size(); ++c) {
      for (size_t k = 0; k < labels_.size(); ++k) {
        if (header[c] == "p_" + labels_[k]) {
          proba_col_[k] = static_cast<int>(c);
          has_proba_ = true;
        }
      }
    }
    if (has_proba_ && std::count(proba_col_.begin(), proba_col_.end(), -1) > 0) {
      return Status::InvalidArgument(who_ +
                                     ": its output gives probabilities for some classes only; "
                                     "expected a p_CLASS column for every class");
    }
    return Status::OK();
  }

  Status ReadRow(const CsvRecord& r) {
    const auto& f = *r.fields;
    // Neither the line nor the cell is named: both are the predictor's to choose.
    const std::string& where = who_;
    auto it = in_.row_of_token.find(std::string(f[0]));
    if (it == in_.row_of_token.end())
      return Status::InvalidArgument(where + ": its output names an unknown token");
    if (seen_[it->second])
      return Status::InvalidArgument(where + ": its output has a token answered twice");
    seen_[it->second] = true;
    ++count_;
    const auto row = static_cast<Eigen::Index>(it->second);
    return classification_ ? ReadClass(f, row, where) : ReadValue(f, row, where);
  }

  Status ReadClass(const std::vector<std::string_view>& f, Eigen::Index row,
                   const std::string& where) {
    std::string label = CanonicalLabel(f[1]);
    auto l = std::lower_bound(labels_.begin(), labels_.end(), label);
    if (l == labels_.end() || *l != label) {
      return Status::InvalidArgument(where + ": a prediction is not one of the classes");
    }
    p_.value(row) = static_cast<double>(l - labels_.begin());
    for (size_t k = 0; has_proba_ && k < labels_.size(); ++k) {
      const std::string_view cell = f[static_cast<size_t>(proba_col_[k])];
      double v = 0;
      if (!ParseNumber(cell, &v) || !(v >= 0 && v <= 1)) {
        return Status::InvalidArgument(where + ": a probability is not a number in [0, 1]");
      }
      p_.proba(row, static_cast<Eigen::Index>(k)) = v;
    }
    return Status::OK();
  }

  Status ReadValue(const std::vector<std::string_view>& f, Eigen::Index row,
                   const std::string& where) {
    double v = 0;
    if (!ParseNumber(f[1], &v) || !std::isfinite(v)) {
      return Status::InvalidArgument(where + ": a prediction is not a finite number");
    }
    p_.value(row) = v;
    return Status::OK();
  }

  const bool classification_;
  const PredictorInput& in_;
  const std::string who_;
  std::vector<std::string> labels_;  // sorted, as the source's classes
  std::vector<int> proba_col_;
  bool has_proba_ = false;
  Predictions p_;
  std::vector<bool> seen_;
  uint64_t count_ = 0;
};

// The words of a shell command that may name files (split on blanks and
// quotes; for --opt=VALUE also VALUE): candidates the sandbox grants read
// access to when they name a regular file that is not kept out.
std::vector<std::string> CommandWords(const std::string& command) {
  std::vector<std::string> words;
  std::string w;
  char quote = 0;
  for (char c : command + " ") {
    if (quote != 0) {
      if (c == quote) quote = 0; else w += c;
    } else if (c == '\'' || c == '"') {
      quote = c;
    } else if (c == ' ' || c == '\t' || c == '\n' || c == ';' || c == '|' || c == '&' ||
               c == '<' || c == '>' || c == '(' || c == ')') {
      if (!w.empty()) words.push_back(w);
      size_t eq = w.find('=');
      if (eq != std::string::npos && eq + 1 < w.size()) words.push_back(w.substr(eq + 1));
      w.clear();
    } else {
      w += c;
    }
  }
  return words;
}

}  // namespace

Result<MetricSample> HoldoutGuard::EvaluateExternal(const ExternalPredictor& predictor,
                                                    Metric metric, const RangeOptions& range,
                                                    ExternalRun* run_info) const {
  const size_t n = static_cast<size_t>(target_.size());
  SandboxOptions confine;
  confine.readable = predictor.attached;
  for (const std::string& word : CommandWords(predictor.command)) confine.readable.push_back(word);
  confine.keep_out = predictor.keep_out;
  for (const char* suffix : {"", "-journal", "-wal", "-shm"})
    confine.keep_out.push_back(ledger_path_ + suffix);
  confine.keep_out.push_back(source_.path);
  for (const std::string& f : source_files_) confine.keep_out.push_back(f);
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<PredictorSandbox> sandbox,
                          PredictorSandbox::Prepare(confine));
  PredictorInput in = MakeInput(features_, n, source_.delimiter, predictor.shuffle_seed);
  UNSEEN_ASSIGN_OR_RETURN(ChildResult run,
                          RunChild(predictor.command, in.csv, predictor.timeout, *sandbox));
  sandbox->Cleanup();  // what it wrote goes with its directory
  run_info->protections = sandbox->Report(run.applied);
  run_info->rows_sent = run.written > 0 ? n : 0;
  const std::string who = "external predictor '" + predictor.name + "'";
  UNSEEN_RETURN_IF_ERROR(CheckFinished(run, who, predictor.timeout));
  OutputReader reader(source_, in, who);
  UNSEEN_ASSIGN_OR_RETURN(Predictions p, reader.Read(std::move(run.out)));
  return SampleMetric(metric, target_, p, reader.classes(), range);
}

}  // namespace unseen
