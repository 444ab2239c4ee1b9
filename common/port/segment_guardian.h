// SegmentGuardian: a tiny child process that removes a shared-memory
// segment when its creator dies without removing it (SIGKILL — e.g. mpirun
// taking down a node agent). It blocks reading a pipe whose only writer is
// the creator; when the pipe closes (the creator exited, however) it unlinks
// /dev/shm/<name> — a no-op when the creator already did — and exits. It
// leaves the creator's session and ignores SIGINT/SIGTERM/SIGHUP, so a
// launcher killing the creator's process group does not take it first.
// Create after the segment; the destructor closes the pipe and reaps the
// child. One owner thread.
#pragma once

#include <memory>
#include <string>

#include "common/base/status.h"

namespace fanfold {

class SegmentGuardian {
 public:
  // Starts the guardian of the segment `name` (as ShmSegment names it).
  static Result<std::unique_ptr<SegmentGuardian>> Start(const std::string& name);
  SegmentGuardian(const SegmentGuardian&) = delete;
  SegmentGuardian& operator=(const SegmentGuardian&) = delete;
  ~SegmentGuardian();

  int pid() const { return pid_; }

 private:
  SegmentGuardian(int pid, int fd) : pid_(pid), write_fd_(fd) {}
  int pid_;
  int write_fd_;
};

}  // namespace fanfold
