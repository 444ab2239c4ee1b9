// SignalGuard: first signal sets the flag; a second unlinks segments and exits 130.
#include "common/port/signal_guard.h"

#include <doctest/doctest.h>
#include <sys/wait.h>
#include <unistd.h>

#include <csignal>
#include <filesystem>

#include "common/port/process_control.h"
#include "common/port/shm_segment.h"

namespace fanfold {
namespace {

// Intent: a first SIGTERM only raises the flag; the process carries on.
TEST_CASE("SignalGuard records the first signal") {
  struct sigaction before;
  ::sigaction(SIGTERM, nullptr, &before);  // doctest's own handler, as it happens
  {
    SignalGuard guard;
    CHECK_FALSE(SignalGuard::interrupted());
    std::raise(SIGTERM);
    CHECK(SignalGuard::interrupted());
    CHECK(SignalGuard::signal_number() == SIGTERM);
  }
  struct sigaction now;
  ::sigaction(SIGTERM, nullptr, &now);
  CHECK(reinterpret_cast<void*>(now.sa_handler) == reinterpret_cast<void*>(before.sa_handler));
}

// Intent: a second signal unlinks the owned segment and exits with 130 at once (run in a
// forked child, since it ends the process).
TEST_CASE("SignalGuard's second signal removes segments and exits 130") {
  int fds[2];
  REQUIRE(::pipe(fds) == 0);
  pid_t child = ::fork();
  REQUIRE(child >= 0);
  if (child == 0) {
    auto seg = ShmSegment::Create(4096);
    if (!seg.ok()) ::_exit(1);
    const std::string name = (*seg)->name() + "\n";
    if (::write(fds[1], name.data(), name.size()) <= 0) ::_exit(1);
    SignalGuard guard;
    std::raise(SIGINT);
    std::raise(SIGINT);
    ::_exit(0);  // not reached
  }
  ::close(fds[1]);
  char buf[128] = {};
  ssize_t n = ::read(fds[0], buf, sizeof buf - 1);
  ::close(fds[0]);
  Result<ExitInfo> exit = Reap(child);
  REQUIRE(exit.ok());
  CHECK_FALSE(exit->signaled);
  CHECK(exit->code == SignalGuard::kInterruptedExitCode);
  REQUIRE(n > 1);
  std::string name(buf, static_cast<size_t>(n - 1));
  CHECK_FALSE(std::filesystem::exists(ShmSegment::FilePath(name)));
}

}  // namespace
}  // namespace fanfold
