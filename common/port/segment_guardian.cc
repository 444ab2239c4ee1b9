#include "common/port/segment_guardian.h"

#include <fcntl.h>
#include <signal.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cerrno>

#include "common/port/os_error.h"
#include "common/port/shm_segment.h"

namespace fanfold {

Result<std::unique_ptr<SegmentGuardian>> SegmentGuardian::Start(const std::string& name) {
  const std::string path = ShmSegment::FilePath(name);  // built before fork: the child only makes system calls
  int fds[2];
  if (::pipe2(fds, O_CLOEXEC) != 0) return Status::IoError("cannot create the segment guardian's pipe: " + ErrnoText(errno));
  const pid_t pid = ::fork();
  if (pid < 0) {
    const int err = errno;
    ::close(fds[0]);
    ::close(fds[1]);
    return Status::IoError("cannot start the segment guardian: " + ErrnoText(err));
  }
  if (pid == 0) {  // the guardian: async-signal-safe calls only
    ::signal(SIGINT, SIG_IGN);
    ::signal(SIGTERM, SIG_IGN);
    ::signal(SIGHUP, SIG_IGN);
    ::setsid();
    ::close(fds[1]);
    char byte;
    for (;;) {
      const ssize_t n = ::read(fds[0], &byte, 1);
      if (n == 0 || (n < 0 && errno != EINTR)) break;
    }
    ::unlink(path.c_str());
    ::_exit(0);
  }
  ::close(fds[0]);
  return std::unique_ptr<SegmentGuardian>(new SegmentGuardian(pid, fds[1]));
}

SegmentGuardian::~SegmentGuardian() {
  ::close(write_fd_);
  int status = 0;
  while (::waitpid(pid_, &status, 0) < 0 && errno == EINTR) {
  }
}

}  // namespace fanfold
