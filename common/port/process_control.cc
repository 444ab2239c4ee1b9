#include "common/port/process_control.h"

#include <sys/prctl.h>
#include <sys/resource.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include <atomic>
#include <cerrno>
#include <climits>
#include <csignal>
#include <cstdio>
#include <cstring>

#include "common/port/os_error.h"

namespace fanfold {
namespace {

Status ErrnoStatus(const std::string& what, int err) {
  return Status::IoError(what + ": " + ErrnoText(err));
}

// The largest ru_maxrss (KiB) of a child reaped by TryReap or Reap. Not
// getrusage(RUSAGE_CHILDREN): that survives execve, so a fanfold exec'd by
// a shell that had waited for a compiler would report the compiler's peak.
std::atomic<uint64_t> g_peak_child_kib{0};

void NoteChildRss(const rusage& ru) {
  const uint64_t kib = static_cast<uint64_t>(ru.ru_maxrss);
  uint64_t seen = g_peak_child_kib.load(std::memory_order_relaxed);
  while (kib > seen && !g_peak_child_kib.compare_exchange_weak(seen, kib, std::memory_order_relaxed)) {
  }
}

ExitInfo FromWaitStatus(int status) {
  ExitInfo info;
  if (WIFSIGNALED(status)) {
    info.signaled = true;
    info.signal = WTERMSIG(status);
  } else if (WIFEXITED(status)) {
    info.code = WEXITSTATUS(status);
  }
  return info;
}

}  // namespace

std::string ExitInfo::Describe() const {
  if (signaled) {
    return "was killed by signal " + std::to_string(signal) + " (" + SignalName(signal) + ")";
  }
  return "exited with status " + std::to_string(code);
}

uint64_t PeakRssBytes() {
  rusage ru{};
  return ::getrusage(RUSAGE_SELF, &ru) == 0 ? static_cast<uint64_t>(ru.ru_maxrss) * 1024 : 0;  // ru_maxrss is KiB
}

uint64_t AvailableMemoryBytes() {
  std::FILE* f = std::fopen("/proc/meminfo", "r");
  if (f == nullptr) return 0;
  char line[256];
  unsigned long long kib = 0;
  bool found = false;
  while (!found && std::fgets(line, sizeof line, f) != nullptr)
    found = std::sscanf(line, "MemAvailable: %llu kB", &kib) == 1;
  std::fclose(f);
  return found ? static_cast<uint64_t>(kib) * 1024 : 0;
}

uint64_t PeakChildRssBytes() { return g_peak_child_kib.load(std::memory_order_relaxed) * 1024; }

int CurrentPid() { return static_cast<int>(::getpid()); }
int ParentPid() { return static_cast<int>(::getppid()); }

const std::string& HostTagForFiles() {
  static const std::string tag = [] {
    char buf[256] = {};
    if (::gethostname(buf, sizeof buf - 1) != 0) buf[0] = '\0';
    uint32_t h = 2166136261u;  // FNV-1a, 32 bits (offset basis, prime 16777619)
    for (const char* c = buf; *c != '\0'; ++c) h = (h ^ static_cast<unsigned char>(*c)) * 16777619u;
    char hex[9];
    std::snprintf(hex, sizeof hex, "%08x", h);
    return std::string(hex);
  }();
  return tag;
}

bool SelfExecutablePath(std::string* out) {
  char self[PATH_MAX];
  ssize_t n = ::readlink("/proc/self/exe", self, sizeof self - 1);
  if (n <= 0) return false;
  out->assign(self, static_cast<size_t>(n));
  return true;
}

bool IsExecutable(const std::string& path) { return ::access(path.c_str(), X_OK) == 0; }

bool ProcessAlive(int pid) {
  if (pid <= 0) return false;
  if (::kill(pid, 0) == 0) return true;
  return errno != ESRCH;  // EPERM: it exists but is not ours
}

Status SendSignal(int pid, int signal) {
  if (pid <= 0) return Status::InvalidArgument("refusing to signal pid " + std::to_string(pid));
  if (::kill(pid, signal) != 0) {
    return ErrnoStatus("kill(" + std::to_string(pid) + ", " + SignalName(signal) + ")", errno);
  }
  return Status::Ok();
}

Status KillProcess(int pid) { return SendSignal(pid, SIGKILL); }

Result<bool> TryReap(int pid, ExitInfo* info) {
  int status = 0;
  for (;;) {
    rusage ru{};
    pid_t r = ::wait4(pid, &status, WNOHANG, &ru);
    if (r == 0) return false;
    if (r == pid) {
      NoteChildRss(ru);
      *info = FromWaitStatus(status);
      return true;
    }
    if (r < 0 && errno == EINTR) continue;
    return ErrnoStatus("wait4(" + std::to_string(pid) + ")", errno);
  }
}

Result<ExitInfo> Reap(int pid) {
  int status = 0;
  for (;;) {
    rusage ru{};
    pid_t r = ::wait4(pid, &status, 0, &ru);
    if (r == pid) {
      NoteChildRss(ru);
      return FromWaitStatus(status);
    }
    if (r < 0 && errno == EINTR) continue;
    return ErrnoStatus("wait4(" + std::to_string(pid) + ")", errno);
  }
}

Status KillMeWhenParentDies() {
#ifdef PR_SET_PDEATHSIG
  if (::prctl(PR_SET_PDEATHSIG, SIGKILL) != 0) return ErrnoStatus("prctl(PR_SET_PDEATHSIG)", errno);
#endif
  return Status::Ok();
}

void IgnoreWorkerSignals() {
  struct sigaction sa;
  std::memset(&sa, 0, sizeof sa);
  sa.sa_handler = SIG_IGN;
  sigemptyset(&sa.sa_mask);
  ::sigaction(SIGINT, &sa, nullptr);
  ::sigaction(SIGPIPE, &sa, nullptr);
}

Status SetChildSubreaper(bool on) {
#ifdef PR_SET_CHILD_SUBREAPER
  if (::prctl(PR_SET_CHILD_SUBREAPER, on ? 1 : 0) != 0) {
    return ErrnoStatus("prctl(PR_SET_CHILD_SUBREAPER)", errno);
  }
  return Status::Ok();
#else
  return Status::Internal("child subreapers are not supported on this platform");
#endif
}

const char* SignalName(int signal) {
  switch (signal) {
    case SIGHUP: return "SIGHUP";
    case SIGINT: return "SIGINT";
    case SIGQUIT: return "SIGQUIT";
    case SIGILL: return "SIGILL";
    case SIGTRAP: return "SIGTRAP";
    case SIGABRT: return "SIGABRT";
    case SIGBUS: return "SIGBUS";
    case SIGFPE: return "SIGFPE";
    case SIGKILL: return "SIGKILL";
    case SIGUSR1: return "SIGUSR1";
    case SIGSEGV: return "SIGSEGV";
    case SIGUSR2: return "SIGUSR2";
    case SIGPIPE: return "SIGPIPE";
    case SIGALRM: return "SIGALRM";
    case SIGTERM: return "SIGTERM";
    case SIGXCPU: return "SIGXCPU";
    case SIGXFSZ: return "SIGXFSZ";
    case SIGSYS: return "SIGSYS";
    default: return "SIG?";
  }
}

}  // namespace fanfold
