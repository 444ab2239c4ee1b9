// ChildProcess: one spawned child (a worker) whose stdout and stderr are
// captured through a pipe into a ring of the last kOutputLines lines, quoted
// in error reports. The object owns the pid: the destructor SIGKILLs and
// reaps a child that is still running. Use from one thread; not thread-safe.
// The only translation unit that includes Boost.Process is the .cc (slow to
// compile); keep this header free of it.
#pragma once

#include <deque>
#include <memory>
#include <string>
#include <vector>

#include "common/port/process_control.h"
#include "common/base/status.h"

namespace fanfold {

struct SpawnOptions {
  std::string executable;            // path of the program; PATH is not searched
  std::vector<std::string> args;     // argv[1..]
  bool kill_on_parent_death = true;  // the child gets SIGKILL when our spawning thread exits
  bool echo_output = false;          // also copy each captured line to our stderr
};

class ChildProcess {
 public:
  static constexpr size_t kOutputLines = 20;     // lines kept for error reports
  static constexpr size_t kMaxLineBytes = 512;   // longer lines are cut

  // Starts the child with stdin from /dev/null and stdout+stderr into the
  // capture pipe. Every other descriptor of ours is closed in the child.
  static Result<std::unique_ptr<ChildProcess>> Spawn(const SpawnOptions& options);

  ChildProcess(const ChildProcess&) = delete;
  ChildProcess& operator=(const ChildProcess&) = delete;
  ~ChildProcess();

  int pid() const { return pid_; }
  // True iff the child has ended and been reaped.
  bool exited() const { return exited_; }
  // REQUIRES: exited()
  const ExitInfo& exit_info() const { return exit_info_; }

  // Drains captured output and reaps the child if it has ended, without
  // blocking. Returns exited().
  bool Poll();
  // Sends SIGKILL unless the child was already reaped.
  void Kill();
  // Blocks until the child ends or timeout_ms passes (< 0: no limit), still
  // draining its output. Returns exited().
  bool WaitExit(int timeout_ms);
  // The last captured lines, oldest first, joined by '\n' ("" if none).
  std::string LastOutput() const;

 private:
  ChildProcess(int pid, int output_fd, bool echo) : pid_(pid), output_fd_(output_fd), echo_(echo) {}
  // Reads whatever the pipe holds now; closes it at end of file.
  void DrainOutput();
  void AddBytes(const char* data, size_t n);
  void FinishLine();

  int pid_;
  int output_fd_;  // read end of the capture pipe, non-blocking; -1 once closed
  bool echo_;
  bool exited_ = false;
  ExitInfo exit_info_;
  std::deque<std::string> lines_;
  std::string partial_line_;
  bool partial_cut_ = false;  // the current line ran past kMaxLineBytes
};

}  // namespace fanfold
