// The one translation unit that includes Boost.Process (v1 API, Boost 1.81).
// Boost.Process does the fork/exec and the pipe redirection; the pid is then
// detached from its bp::child and owned by ChildProcess, which reaps it with
// waitpid itself: bp::child folds "killed by signal N" into exit code N, and
// its destructor would kill a pid that might have been reused.
#include "common/port/os_error.h"
#include "common/port/process_spawner.h"

#include <fcntl.h>
#include <poll.h>
#include <sys/prctl.h>
#include <sys/resource.h>
#include <unistd.h>

#include <boost/process/args.hpp>
#include <boost/process/child.hpp>
#include <boost/process/exe.hpp>
#include <boost/process/extend.hpp>
#include <boost/process/io.hpp>
#include <boost/process/pipe.hpp>
#include <cerrno>
#include <chrono>
#include <csignal>
#include <cstdio>
#include <cstring>
#include <system_error>

namespace fanfold {
namespace {

namespace bp = boost::process;

// Runs in the child between fork and exec, so only async-signal-safe calls.
struct ChildSetup : bp::extend::handler {
  int parent_pid = 0;
  bool kill_on_parent_death = true;

  template <class Executor>
  void on_exec_setup(Executor&) const {
    sigset_t none;
    sigemptyset(&none);
    ::sigprocmask(SIG_SETMASK, &none, nullptr);  // the mask survives exec; start clean
#ifdef PR_SET_PDEATHSIG
    if (kill_on_parent_death) {
      ::prctl(PR_SET_PDEATHSIG, SIGKILL);  // survives exec, so no window before the worker's own call
      if (::getppid() != parent_pid) ::_exit(127);  // the parent died before prctl took effect
    }
#endif
    // Descriptors the coordinator opened without O_CLOEXEC (shard files, the
    // run directory, other workers' pipes) must not leak into the worker.
    // Marking them close-on-exec rather than closing keeps Boost's exec-error
    // pipe working.
#ifdef CLOSE_RANGE_CLOEXEC
    if (::close_range(3, ~0U, CLOSE_RANGE_CLOEXEC) == 0) return;
#endif
    struct rlimit lim;
    int max_fd = 4096;
    if (::getrlimit(RLIMIT_NOFILE, &lim) == 0 && lim.rlim_cur != RLIM_INFINITY) {
      max_fd = static_cast<int>(lim.rlim_cur < 65536 ? lim.rlim_cur : 65536);
    }
    for (int fd = 3; fd < max_fd; ++fd) ::fcntl(fd, F_SETFD, FD_CLOEXEC);
  }
};

}  // namespace

Result<std::unique_ptr<ChildProcess>> ChildProcess::Spawn(const SpawnOptions& options) {
  if (::access(options.executable.c_str(), X_OK) != 0) {
    return Status::IoError("cannot run '" + options.executable + "': " + ErrnoText(errno));
  }
  int fds[2];
  if (::pipe2(fds, O_CLOEXEC) != 0) {
    return Status::IoError(std::string("cannot create a pipe for a child's output: ") +
                           ErrnoText(errno));
  }
  int pid = -1;
  try {
    bp::pipe capture(fds[0], fds[1]);  // owns both ends from here on
    ChildSetup setup;
    setup.parent_pid = CurrentPid();
    setup.kill_on_parent_death = options.kill_on_parent_death;
    std::error_code ec;
    bp::child child(bp::exe = options.executable, bp::args = options.args, bp::std_in < bp::null,
                    (bp::std_out & bp::std_err) > capture, setup, ec);
    if (ec) {
      return Status::IoError("cannot start '" + options.executable + "': " + ec.message());
    }
    child.detach();
    pid = child.id();
    // The write end was closed by the redirection; take the read end over.
    int source = capture.native_source();
    capture.assign_source(-1);
    int flags = ::fcntl(source, F_GETFL);
    ::fcntl(source, F_SETFL, flags | O_NONBLOCK);
    return std::unique_ptr<ChildProcess>(new ChildProcess(pid, source, options.echo_output));
  } catch (const std::exception& e) {
    if (pid > 0) {
      KillProcess(pid);
      (void)Reap(pid);
    }
    return Status::IoError("cannot start '" + options.executable + "': " + e.what());
  }
}

ChildProcess::~ChildProcess() {
  if (!exited_) {
    Kill();
    (void)Reap(pid_);
  }
  if (output_fd_ >= 0) ::close(output_fd_);
}

bool ChildProcess::Poll() {
  DrainOutput();
  if (exited_) return true;
  Result<bool> r = TryReap(pid_, &exit_info_);
  if (!r.ok()) {
    // Not our child any more (someone else reaped it): treat it as gone.
    exited_ = true;
    exit_info_ = ExitInfo{};
    exit_info_.code = -1;
    return true;
  }
  if (*r) {
    exited_ = true;
    DrainOutput();  // what it wrote just before the end
  }
  return exited_;
}

void ChildProcess::Kill() {
  if (!exited_) (void)KillProcess(pid_);
}

bool ChildProcess::WaitExit(int timeout_ms) {
  using Clock = std::chrono::steady_clock;
  const auto deadline = Clock::now() + std::chrono::milliseconds(timeout_ms < 0 ? 0 : timeout_ms);
  for (;;) {
    if (Poll()) return true;
    int slice_ms = 10;
    if (timeout_ms >= 0) {
      auto left = std::chrono::duration_cast<std::chrono::milliseconds>(deadline - Clock::now());
      if (left.count() <= 0) return false;
      if (left.count() < slice_ms) slice_ms = static_cast<int>(left.count());
    }
    if (output_fd_ >= 0) {
      // Wakes at once on output or when the child's end closes as it exits.
      pollfd p{output_fd_, POLLIN, 0};
      ::poll(&p, 1, slice_ms);
      if (p.revents & POLLHUP) {
        DrainOutput();
        if (output_fd_ >= 0) continue;
      }
    } else {
      ::usleep(1000);  // pipe already closed: only the reap is left to see
    }
  }
}

void ChildProcess::DrainOutput() {
  char buf[4096];
  // Bounded, so a child that writes without pause cannot hold us here.
  for (int round = 0; round < 64 && output_fd_ >= 0; ++round) {
    ssize_t n = ::read(output_fd_, buf, sizeof buf);
    if (n > 0) {
      AddBytes(buf, static_cast<size_t>(n));
      continue;
    }
    if (n < 0 && errno == EINTR) continue;
    if (n == 0) {  // end of file: every writer has closed its end
      ::close(output_fd_);
      output_fd_ = -1;
      if (!partial_line_.empty()) FinishLine();
    }
    return;  // EAGAIN (nothing more now), EOF or an error
  }
}

void ChildProcess::AddBytes(const char* data, size_t n) {
  while (n > 0) {
    const char* nl = static_cast<const char*>(std::memchr(data, '\n', n));
    size_t take = nl ? static_cast<size_t>(nl - data) : n;
    size_t room = kMaxLineBytes - partial_line_.size();
    if (take > room) {
      partial_line_.append(data, room);
      partial_cut_ = true;
    } else {
      partial_line_.append(data, take);
    }
    if (!nl) return;
    FinishLine();
    data = nl + 1;
    n -= take + 1;
  }
}

void ChildProcess::FinishLine() {
  if (partial_cut_) partial_line_ += " [...]";
  if (echo_) std::fprintf(stderr, "worker %d: %s\n", pid_, partial_line_.c_str());
  if (lines_.size() == kOutputLines) lines_.pop_front();
  lines_.push_back(std::move(partial_line_));
  partial_line_.clear();
  partial_cut_ = false;
}

std::string ChildProcess::LastOutput() const {
  std::string out;
  for (const std::string& line : lines_) {
    if (!out.empty()) out += '\n';
    out += line;
  }
  if (!partial_line_.empty()) {
    if (!out.empty()) out += '\n';
    out += partial_line_;
  }
  return out;
}

}  // namespace fanfold
