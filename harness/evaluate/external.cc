// HoldoutGuard::EvaluateExternal: runs a predictor outside the tool on the
// holdout's feature columns. The child reads CSV on stdin and writes CSV on
// stdout; the guard keeps the token -> row map, so predictions are matched
// back to rows without the child ever seeing a row number, an id or a target.
#include <fcntl.h>
#include <fmt/core.h>
#include <poll.h>
#include <signal.h>
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
constexpr size_t kStderrKept = 2000;

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
  std::string out, err;
  int status = 0;
  bool timed_out = false;
};

// Runs `command` under /bin/sh -c in its own process group, feeding `input`
// and collecting stdout and (the start of) stderr until it exits or the
// deadline passes (then the group is killed).
Result<ChildResult> RunChild(const std::string& command, const std::string& input,
                             std::chrono::milliseconds timeout) {
  int in[2], out[2], err[2];
  if (pipe(in) != 0 || pipe(out) != 0 || pipe(err) != 0) {
    return Status::IOError(std::string("cannot create pipes: ") + std::strerror(errno));
  }
  // The predictor inherits none of our UNSEEN_* variables: a passphrase may be among them.
  // Built before fork(), so that the child only calls async-signal-safe functions.
  std::vector<char*> env;
  for (char** e = environ; *e != nullptr; ++e) {
    if (std::strncmp(*e, "UNSEEN_", 7) != 0) env.push_back(*e);
  }
  env.push_back(nullptr);
  pid_t pid = fork();
  if (pid < 0)
    return Status::IOError(std::string("cannot start the predictor: ") + std::strerror(errno));
  if (pid == 0) {
    setpgid(0, 0);
    dup2(in[0], 0);
    dup2(out[1], 1);
    dup2(err[1], 2);
    // Nor any other open file: the ledger's database among them.
    close_range(3, ~0U, 0);
    execle("/bin/sh", "sh", "-c", command.c_str(), static_cast<char*>(nullptr), env.data());
    _exit(127);
  }
  setpgid(pid, pid);
  close(in[0]);
  close(out[1]);
  close(err[1]);
  for (int fd : {in[1], out[0], err[0]}) fcntl(fd, F_SETFL, fcntl(fd, F_GETFL) | O_NONBLOCK);
  signal(SIGPIPE, SIG_IGN);
  ChildResult r;
  size_t written = 0;
  int to_child = in[1];
  if (input.empty()) {
    close(to_child);
    to_child = -1;
  }
  bool out_open = true, err_open = true;
  const auto deadline = std::chrono::steady_clock::now() + timeout;
  char buf[65536];
  while (out_open || err_open) {
    auto left = std::chrono::duration_cast<std::chrono::milliseconds>(
        deadline - std::chrono::steady_clock::now());
    if (left.count() <= 0 || r.out.size() > kMaxOutput) {
      r.timed_out = left.count() <= 0;
      kill(-pid, SIGKILL);
      break;
    }
    pollfd fds[3];
    int nfds = 0;
    if (to_child >= 0) fds[nfds++] = {to_child, POLLOUT, 0};
    if (out_open) fds[nfds++] = {out[0], POLLIN, 0};
    if (err_open) fds[nfds++] = {err[0], POLLIN, 0};
    int ready = poll(fds, static_cast<nfds_t>(nfds),
                     static_cast<int>(std::min<int64_t>(left.count(), 1000)));
    if (ready < 0 && errno != EINTR) break;
    for (int i = 0; i < nfds; ++i) {
      if (fds[i].revents == 0) continue;
      if (fds[i].fd == to_child) {
        ssize_t w = write(to_child, input.data() + written,
                          std::min<size_t>(input.size() - written, 65536));
        if (w > 0) written += static_cast<size_t>(w);
        if (w < 0 && errno != EAGAIN && errno != EINTR)
          written = input.size();  // the child stopped reading
        if (written == input.size()) {
          close(to_child);
          to_child = -1;
        }
        continue;
      }
      ssize_t n = read(fds[i].fd, buf, sizeof buf);
      if (n > 0) {
        if (fds[i].fd == out[0]) {
          r.out.append(buf, static_cast<size_t>(n));
        } else if (r.err.size() < kStderrKept) {
          r.err.append(buf, static_cast<size_t>(std::min<size_t>(static_cast<size_t>(n),
                                                                 kStderrKept - r.err.size())));
        }
      } else if (n == 0 || (errno != EAGAIN && errno != EINTR)) {
        (fds[i].fd == out[0] ? out_open : err_open) = false;
      }
    }
  }
  if (to_child >= 0) close(to_child);
  close(out[0]);
  close(err[0]);
  int status = 0;
  while (waitpid(pid, &status, 0) < 0 && errno == EINTR) {
  }
  r.status = status;
  return r;
}

std::string Tail(const std::string& err) {
  std::string t = err.substr(0, err.find('\n'));
  return t.empty() ? std::string() : ": " + t;
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

// A predictor that timed out, was killed or failed reveals nothing.
Status CheckFinished(const ChildResult& run, const std::string& who,
                     std::chrono::milliseconds timeout) {
  if (run.timed_out) {
    return Status::InvalidArgument(who + " did not finish within " +
                                   std::to_string(timeout.count() / 1000.0) +
                                   " s; it was stopped and nothing was revealed");
  }
  if (WIFSIGNALED(run.status)) {
    return Status::InvalidArgument(who + " was killed by signal " +
                                   std::to_string(WTERMSIG(run.status)) + Tail(run.err) +
                                   "; nothing was revealed");
  }
  if (WEXITSTATUS(run.status) != 0) {
    return Status::InvalidArgument(who + " exited with status " +
                                   std::to_string(WEXITSTATUS(run.status)) + Tail(run.err) +
                                   "; nothing was revealed");
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
      return Status::InvalidArgument(who_ + ": " + csv.status().message() +
                                     "; expected a header line, then token,prediction per row");
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
      if (parsed.code() == StatusCode::kInvalidArgument) return parsed;
      return Status::InvalidArgument(who_ + ": " + parsed.message());
    }
    if (count_ != n) {
      return Status::InvalidArgument(who_ + " answered " + std::to_string(count_) +
                                     " rows; expected " + std::to_string(n) + " (one per token)");
    }
    return std::move(p_);
  }

  int classes() const { return static_cast<int>(labels_.size()); }

 private:
  Status ReadHeader(const std::vector<std::string>& header) {
    if (header.size() < 2) {
      return Status::InvalidArgument(who_ + ": its output has " + std::to_string(header.size()) +
                                     " columns; expected token,prediction[,p_CLASS...]");
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
    const std::string where = who_ + ": output line " + std::to_string(r.line);
    auto it = in_.row_of_token.find(std::string(f[0]));
    if (it == in_.row_of_token.end())
      return Status::InvalidArgument(where + ": unknown token '" + std::string(f[0]) + "'");
    if (seen_[it->second])
      return Status::InvalidArgument(where + ": token " + std::string(f[0]) + " answered twice");
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
      return Status::InvalidArgument(where + ": prediction '" + std::string(f[1]) +
                                     "' is not one of the classes");
    }
    p_.value(row) = static_cast<double>(l - labels_.begin());
    for (size_t k = 0; has_proba_ && k < labels_.size(); ++k) {
      const std::string_view cell = f[static_cast<size_t>(proba_col_[k])];
      double v = 0;
      if (!ParseNumber(cell, &v) || !(v >= 0 && v <= 1)) {
        return Status::InvalidArgument(where + ": probability '" + std::string(cell) +
                                       "' is not a number in [0, 1]");
      }
      p_.proba(row, static_cast<Eigen::Index>(k)) = v;
    }
    return Status::OK();
  }

  Status ReadValue(const std::vector<std::string_view>& f, Eigen::Index row,
                   const std::string& where) {
    double v = 0;
    if (!ParseNumber(f[1], &v) || !std::isfinite(v)) {
      return Status::InvalidArgument(where + ": prediction '" + std::string(f[1]) +
                                     "' is not a number");
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

}  // namespace

Result<MetricSample> HoldoutGuard::EvaluateExternal(const ExternalPredictor& predictor,
                                                    Metric metric,
                                                    const RangeOptions& range) const {
  const size_t n = static_cast<size_t>(target_.size());
  PredictorInput in = MakeInput(features_, n, source_.delimiter, predictor.shuffle_seed);
  UNSEEN_ASSIGN_OR_RETURN(ChildResult run, RunChild(predictor.command, in.csv, predictor.timeout));
  const std::string who = "external predictor '" + predictor.command + "'";
  UNSEEN_RETURN_IF_ERROR(CheckFinished(run, who, predictor.timeout));
  OutputReader reader(source_, in, who);
  UNSEEN_ASSIGN_OR_RETURN(Predictions p, reader.Read(std::move(run.out)));
  return SampleMetric(metric, target_, p, reader.classes(), range);
}

}  // namespace unseen
