// ProcessControl: the few POSIX process calls fanfold needs — liveness, signals,
// reaping, the parent-death signal, signal names — so coordinator/ and worker/
// stay free of platform code. errno becomes a Status here and nowhere else in
// the process layer. Stateless functions; thread-safe.
#pragma once

#include <cstdint>
#include <string>

#include "common/base/status.h"

namespace fanfold {

// How a reaped child ended.
struct ExitInfo {
  bool signaled = false;  // true: killed by `signal`; false: exited with `code`
  int code = 0;
  int signal = 0;
  // "exited with status 3" or "was killed by signal 9 (SIGKILL)".
  std::string Describe() const;
};

int CurrentPid();
int ParentPid();
// A short tag of this machine for file names: 8 lowercase hex digits of the
// 32-bit FNV-1a hash of its host name (gethostname; of "" iff the system does
// not say), so names grow by a fixed 8 bytes whatever the host is called.
// Computed once.
const std::string& HostTagForFiles();

// Peak resident memory (ru_maxrss) in bytes: of this process (getrusage);
// and of the largest of its children reaped by TryReap or Reap (wait4's
// rusage; 0 if none). Measured by the kernel, not estimated.
uint64_t PeakRssBytes();
uint64_t PeakChildRssBytes();
// Memory the kernel says could be given to new work without swapping
// (Linux /proc/meminfo MemAvailable) in bytes; 0 iff it does not say.
uint64_t AvailableMemoryBytes();

// The absolute path of this process's program (Linux /proc/self/exe);
// false iff the system does not say.
bool SelfExecutablePath(std::string* out);
// True iff path names a file this process may execute (access X_OK).
bool IsExecutable(const std::string& path);

// True iff a process with this pid exists (zombies included) or exists but
// belongs to another user; false iff the kernel says there is none (ESRCH).
bool ProcessAlive(int pid);

// Sends `signal` to pid. An already-gone process (ESRCH) is an error.
Status SendSignal(int pid, int signal);
// SendSignal(pid, SIGKILL), for callers that should not include <csignal>.
Status KillProcess(int pid);

// Non-blocking reap of our own child: returns true and fills *info iff the
// child has ended (it is then reaped; the pid may be reused). False while it
// runs. An error iff pid is not our child.
Result<bool> TryReap(int pid, ExitInfo* info);
// Blocking reap of our own child.
Result<ExitInfo> Reap(int pid);

// Asks the kernel to SIGKILL this process when the thread that created it
// exits (Linux PR_SET_PDEATHSIG). Returns Ok where unsupported as well: the
// caller's heartbeat check is the portable fallback.
Status KillMeWhenParentDies();

// Ignores SIGINT and SIGPIPE in this process (a worker): a terminal's Ctrl-C
// reaches the whole process group, and the coordinator alone decides how a
// run ends; a write to a pipe nobody reads (a dead coordinator's end of our
// stderr) should fail with EPIPE, not kill.
void IgnoreWorkerSignals();

// Makes this process the reaper of its orphaned descendants (Linux
// PR_SET_CHILD_SUBREAPER), or stops being one. Tests use it to watch
// grandchildren outlive their parent.
Status SetChildSubreaper(bool on);

// "SIGKILL", "SIGSEGV", ...; "SIG?" for signals without a name here.
const char* SignalName(int signal);

}  // namespace fanfold
