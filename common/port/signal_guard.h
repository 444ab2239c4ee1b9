// SignalGuard: the coordinator's SIGINT/SIGTERM handling. While a guard
// lives, the first signal only sets a flag the coordinator loop polls
// (interrupted()), so the run shuts down cleanly: workers told to quit, the
// segment removed, the journal left consistent. A second signal means "now":
// the handler unlinks every segment this process owns (UnlinkOwnedSegments)
// and _exit(130)s; workers then die of their parent-death signal.
// Create one guard, on the main thread; the flag reads are thread-safe.
#pragma once

namespace fanfold {

class SignalGuard {
 public:
  static constexpr int kInterruptedExitCode = 130;

  // Installs the handlers; the destructor restores the previous ones.
  // REQUIRES: no other SignalGuard is alive.
  SignalGuard();
  SignalGuard(const SignalGuard&) = delete;
  SignalGuard& operator=(const SignalGuard&) = delete;
  ~SignalGuard();

  // True iff SIGINT or SIGTERM arrived since the guard was installed.
  static bool interrupted();
  // The first signal received (SIGINT/SIGTERM), 0 if none.
  static int signal_number();
};

}  // namespace fanfold
