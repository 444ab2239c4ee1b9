#include "common/port/signal_guard.h"

#include <unistd.h>

#include <atomic>
#include <csignal>
#include <cstring>

#include "common/port/shm_segment.h"

namespace fanfold {
namespace {

static_assert(std::atomic<int>::is_always_lock_free, "the handler needs a lock-free flag");

std::atomic<int> g_first_signal{0};
std::atomic<int> g_signal_count{0};
struct sigaction g_old_int;
struct sigaction g_old_term;

// Async-signal-safe only: atomics, shm_unlink, write, _exit.
extern "C" void OnTerminationSignal(int sig) {
  int expected = 0;
  g_first_signal.compare_exchange_strong(expected, sig);
  if (g_signal_count.fetch_add(1) >= 1) {
    UnlinkOwnedSegments();
    static const char kMsg[] = "fanfold: second signal, stopping now\n";
    ssize_t ignored = ::write(STDERR_FILENO, kMsg, sizeof kMsg - 1);
    (void)ignored;
    ::_exit(SignalGuard::kInterruptedExitCode);
  }
}

}  // namespace

SignalGuard::SignalGuard() {
  g_first_signal.store(0);
  g_signal_count.store(0);
  struct sigaction sa;
  std::memset(&sa, 0, sizeof sa);
  sa.sa_handler = OnTerminationSignal;
  sigemptyset(&sa.sa_mask);
  // No SA_RESTART: a blocking call returns EINTR, so the loop sees the flag promptly.
  sa.sa_flags = 0;
  ::sigaction(SIGINT, &sa, &g_old_int);
  ::sigaction(SIGTERM, &sa, &g_old_term);
}

SignalGuard::~SignalGuard() {
  ::sigaction(SIGINT, &g_old_int, nullptr);
  ::sigaction(SIGTERM, &g_old_term, nullptr);
}

bool SignalGuard::interrupted() { return g_first_signal.load(std::memory_order_relaxed) != 0; }
int SignalGuard::signal_number() { return g_first_signal.load(std::memory_order_relaxed); }

}  // namespace fanfold
