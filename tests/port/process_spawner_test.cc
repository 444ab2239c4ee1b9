// ChildProcess with /bin/sh (Debian's dash) as the child: exit statuses,
// signals, the captured-output ring and start errors.
#include "common/port/process_spawner.h"

#include <doctest/doctest.h>

#include <chrono>
#include <csignal>

namespace fanfold {
namespace {

std::unique_ptr<ChildProcess> Shell(const std::string& script) {
  SpawnOptions o;
  o.executable = "/bin/sh";
  o.args = {"-c", script};
  auto child = ChildProcess::Spawn(o);
  REQUIRE_MESSAGE(child.ok(), child.status().message());
  return std::move(child).value();
}

// Intent: an exit status and the output on both stdout and stderr are reported.
TEST_CASE("ChildProcess reports exit status and captured output") {
  auto c = Shell("echo out; echo err >&2; exit 3");
  REQUIRE(c->WaitExit(5000));
  CHECK_FALSE(c->exit_info().signaled);
  CHECK(c->exit_info().code == 3);
  CHECK(c->exit_info().Describe() == "exited with status 3");
  CHECK(c->LastOutput() == "out\nerr");
}

// Intent: death by signal is told apart from an exit status (POSIX WIFSIGNALED/WTERMSIG).
TEST_CASE("ChildProcess reports the killing signal") {
  auto c = Shell("kill -SEGV $$");
  REQUIRE(c->WaitExit(5000));
  CHECK(c->exit_info().signaled);
  CHECK(c->exit_info().signal == SIGSEGV);
  CHECK(c->exit_info().Describe() == "was killed by signal 11 (SIGSEGV)");
}

// Intent: only the last kOutputLines lines are kept, over-long lines are cut, and a final line
// without a newline is kept too.
TEST_CASE("ChildProcess keeps the last lines of output") {
  auto c = Shell("i=0; while [ $i -lt 100 ]; do echo line$i; i=$((i+1)); done; "
                 "printf '%0600d\\n' 0; printf 'tail'");
  REQUIRE(c->WaitExit(5000));
  const std::string out = c->LastOutput();
  // 20 lines: line82..line99, the long one, and "tail" (a line once the pipe closed).
  CHECK(out.rfind("line82\n", 0) == 0);
  CHECK(out.find("line81") == std::string::npos);
  CHECK(out.find(std::string(ChildProcess::kMaxLineBytes, '0') + " [...]\ntail") != std::string::npos);
}

// Intent: Poll does not block while the child runs, and Kill ends it with SIGKILL.
TEST_CASE("ChildProcess polls without blocking and kills") {
  auto c = Shell("sleep 30");
  const auto start = std::chrono::steady_clock::now();
  CHECK_FALSE(c->Poll());
  CHECK_FALSE(c->WaitExit(50));
  CHECK(std::chrono::steady_clock::now() - start < std::chrono::seconds(2));
  c->Kill();
  REQUIRE(c->WaitExit(5000));
  CHECK(c->exit_info().signal == SIGKILL);
}

// Intent: a program that does not exist is an error naming it, not a child that exits 127.
TEST_CASE("ChildProcess::Spawn reports a missing program") {
  SpawnOptions o;
  o.executable = "/nonexistent/program";
  auto c = ChildProcess::Spawn(o);
  REQUIRE_FALSE(c.ok());
  CHECK(c.status().message().find("cannot run '/nonexistent/program'") != std::string::npos);
}

// Intent: the child gets no descriptor of ours beyond 0-2 (so a worker cannot hold our files or
// pipes open); /proc/self/fd of the shell lists just 0, 1, 2 and the one ls opens itself.
TEST_CASE("ChildProcess does not leak descriptors into the child") {
  int fds[2];
  REQUIRE(::pipe(fds) == 0);  // deliberately without O_CLOEXEC
  auto c = Shell("ls /proc/self/fd | tr '\\n' ' '");
  REQUIRE(c->WaitExit(5000));
  ::close(fds[0]);
  ::close(fds[1]);
  CHECK(c->LastOutput() == "0 1 2 3 ");
}

}  // namespace
}  // namespace fanfold
