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
  pid_t pid = fork();
  if (pid < 0)
    return Status::IOError(std::string("cannot start the predictor: ") + std::strerror(errno));
  if (pid == 0) {
    setpgid(0, 0);
    dup2(in[0], 0);
    dup2(out[1], 1);
    dup2(err[1], 2);
    for (int fd : {in[0], in[1], out[0], out[1], err[0], err[1]}) close(fd);
    execl("/bin/sh", "sh", "-c", command.c_str(), static_cast<char*>(nullptr));
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

}  // namespace

Result<MetricSample> HoldoutGuard::EvaluateExternal(const ExternalPredictor& predictor,
                                                    Metric metric,
                                                    const RangeOptions& range) const {
  const size_t n = static_cast<size_t>(target_.size());
  // Rows in a fresh random order, each under an opaque token.
  std::vector<size_t> order(n);
  for (size_t i = 0; i < n; ++i) order[i] = i;
  Random rng(predictor.shuffle_seed);
  rng.Shuffle(order.data(), n);
  std::unordered_map<std::string, size_t> row_of_token;
  std::vector<std::string> tokens(n);
  for (size_t i = 0; i < n; ++i) {
    std::string t;
    do {
      t = fmt::format("t{:016x}", rng.Next());
    } while (row_of_token.count(t));
    row_of_token[t] = order[i];
    tokens[i] = t;
  }
  const char d = source_.delimiter;
  std::string input = "unseen_token";
  for (const FrameColumn& c : features_.columns) input += d + Quoted(c.name, d);
  input += "\n";
  for (size_t i = 0; i < n; ++i) {
    input += tokens[i];
    for (const FrameColumn& c : features_.columns) {
      input += d;
      if (c.numeric) {
        double v = c.num[order[i]];
        if (!std::isnan(v)) input += fmt::format("{}", v);
      } else {
        input += Quoted(c.cat[order[i]], d);
      }
    }
    input += "\n";
  }

  UNSEEN_ASSIGN_OR_RETURN(ChildResult run, RunChild(predictor.command, input, predictor.timeout));
  const std::string who = "external predictor '" + predictor.command + "'";
  if (run.timed_out) {
    return Status::InvalidArgument(who + " did not finish within " +
                                   std::to_string(predictor.timeout.count() / 1000.0) +
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

  // Its answer: a header, then token,prediction[,p_CLASS...] per row.
  CsvOptions options;
  options.delimiter = ',';
  auto csv = CsvFile::FromBytes("<predictor output>", std::move(run.out), options);
  if (!csv.ok()) {
    return Status::InvalidArgument(who + ": " + csv.status().message() +
                                   "; expected a header line, then token,prediction per row");
  }
  const auto& header = (*csv)->header();
  if (header.size() < 2) {
    return Status::InvalidArgument(who + ": its output has " + std::to_string(header.size()) +
                                   " columns; expected token,prediction[,p_CLASS...]");
  }
  const bool classification = source_.task == TaskKind::kClassification;
  std::vector<std::string> labels;
  for (const auto& [label, count] : source_.target.classes) labels.push_back(label);
  std::vector<int> proba_col(labels.size(), -1);
  bool has_proba = false;
  for (size_t c = 2; c < header.size(); ++c) {
    for (size_t k = 0; k < labels.size(); ++k) {
      if (header[c] == "p_" + labels[k]) {
        proba_col[k] = static_cast<int>(c);
        has_proba = true;
      }
    }
  }
  if (has_proba && std::count(proba_col.begin(), proba_col.end(), -1) > 0) {
    return Status::InvalidArgument(who +
                                   ": its output gives probabilities for some classes only; "
                                   "expected a p_CLASS column for every class");
  }
  Predictions p;
  p.value = Eigen::VectorXd::Constant(static_cast<Eigen::Index>(n), NAN);
  if (has_proba)
    p.proba = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(n),
                                    static_cast<Eigen::Index>(labels.size()));
  std::vector<bool> seen(n, false);
  uint64_t count = 0;
  Status parsed = (*csv)->ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    const std::string where = who + ": output line " + std::to_string(r.line);
    auto it = row_of_token.find(std::string(f[0]));
    if (it == row_of_token.end())
      return Status::InvalidArgument(where + ": unknown token '" + std::string(f[0]) + "'");
    if (seen[it->second])
      return Status::InvalidArgument(where + ": token " + std::string(f[0]) + " answered twice");
    seen[it->second] = true;
    ++count;
    auto row = static_cast<Eigen::Index>(it->second);
    if (classification) {
      std::string label = CanonicalLabel(f[1]);
      auto l = std::lower_bound(labels.begin(), labels.end(), label);
      if (l == labels.end() || *l != label) {
        return Status::InvalidArgument(where + ": prediction '" + std::string(f[1]) +
                                       "' is not one of the classes");
      }
      p.value(row) = static_cast<double>(l - labels.begin());
      for (size_t k = 0; has_proba && k < labels.size(); ++k) {
        double v = 0;
        if (!ParseNumber(f[static_cast<size_t>(proba_col[k])], &v) || !(v >= 0 && v <= 1)) {
          return Status::InvalidArgument(where + ": probability '" +
                                         std::string(f[static_cast<size_t>(proba_col[k])]) +
                                         "' is not a number in [0, 1]");
        }
        p.proba(row, static_cast<Eigen::Index>(k)) = v;
      }
    } else {
      double v = 0;
      if (!ParseNumber(f[1], &v) || !std::isfinite(v)) {
        return Status::InvalidArgument(where + ": prediction '" + std::string(f[1]) +
                                       "' is not a number");
      }
      p.value(row) = v;
    }
    return Status::OK();
  });
  if (!parsed.ok()) {
    if (parsed.code() == StatusCode::kInvalidArgument) return parsed;
    return Status::InvalidArgument(who + ": " + parsed.message());
  }
  if (count != n) {
    return Status::InvalidArgument(who + " answered " + std::to_string(count) + " rows; expected " +
                                   std::to_string(n) + " (one per token)");
  }
  return SampleMetric(metric, target_, p, static_cast<int>(labels.size()), range);
}

}  // namespace unseen
