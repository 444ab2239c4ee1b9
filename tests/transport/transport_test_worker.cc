// A worker program for the transport tests: RunWorkerLoop with a fake
// process function whose behaviour the task's path selects:
//   echo:N          N payload bytes (TestPayload(index, N))
//   big:N           the same, meant to exceed the result area (spill path)
//   fail:TEXT       an error with TEXT as its message
//   longerror:N     an error of N three-byte UTF-8 characters (truncation)
//   fields:...      the task's fields as text (index, attempt, offset, ...)
//   crash:          a line on stderr, then SIGKILL to itself
//   exit:CODE       a line on stderr, then _exit(CODE)
//   sleep:MS        sleeps MS milliseconds, then 8 payload bytes
//   progress:N:MS   reports N records, sleeps MS, then 8 payload bytes
//   nodeathsignal:  turns the parent-death signal off, so only the heartbeat
//                   check can notice a dead coordinator
// Extra argument "--die-at-start" makes it fail before serving anything.
#include <sys/prctl.h>
#include <unistd.h>

#include <csignal>
#include <cstdio>
#include <string>

#include "tests/transport/transport_test_payload.h"
#include "common/transport/worker_loop.h"

namespace {

using fanfold::Result;
using fanfold::ShardTask;
using fanfold::Status;

uint64_t Number(const std::string& s) { return s.empty() ? 0 : std::stoull(s); }

Result<std::string> Process(const ShardTask& task, fanfold::ProgressFn progress) {
  const size_t colon = task.path.find(':');
  const std::string verb = task.path.substr(0, colon);
  const std::string arg = colon == std::string::npos ? "" : task.path.substr(colon + 1);
  if (verb == "echo" || verb == "big") return fanfold::TestPayload(task.index, Number(arg));
  if (verb == "fail") return Status::Corrupt(arg);
  if (verb == "longerror") {
    std::string text;
    for (uint64_t i = 0; i < Number(arg); ++i) text += "\xe2\x82\xac";  // U+20AC, three bytes
    return Status::Corrupt(text);
  }
  if (verb == "fields") {
    return "index=" + std::to_string(task.index) + " attempt=" + std::to_string(task.attempt) +
           " offset=" + std::to_string(task.offset) + " length=" + std::to_string(task.length) +
           " compression=" + std::to_string(static_cast<int>(task.compression)) +
           " path_bytes=" + std::to_string(task.path.size());
  }
  if (verb == "crash") {
    std::fprintf(stderr, "test worker: crashing on shard %u\n", task.index);
    std::fflush(stderr);
    std::raise(SIGKILL);
  }
  if (verb == "exit") {
    std::fprintf(stderr, "test worker: exiting on shard %u\n", task.index);
    std::fflush(stderr);
    ::_exit(static_cast<int>(Number(arg)));
  }
  if (verb == "sleep") {
    ::usleep(static_cast<useconds_t>(Number(arg) * 1000));
    return fanfold::TestPayload(task.index, 8);
  }
  if (verb == "progress") {
    const size_t second = arg.find(':');
    progress(Number(arg.substr(0, second)), 10 * Number(arg.substr(0, second)));
    ::usleep(static_cast<useconds_t>(Number(arg.substr(second + 1)) * 1000));
    return fanfold::TestPayload(task.index, 8);
  }
  if (verb == "nodeathsignal") {
    if (::prctl(PR_SET_PDEATHSIG, 0) != 0) return Status::Internal("prctl failed");
    return std::string("ok");
  }
  return Status::InvalidArgument("test worker: unknown task '" + task.path + "'");
}

}  // namespace

int main(int argc, char** argv) {
  Result<fanfold::WorkerLaunch> launch = fanfold::ParseWorkerLaunch(argc, argv);
  if (!launch.ok()) {
    std::fprintf(stderr, "%s\n", launch.status().message().c_str());
    return 2;
  }
  for (const std::string& extra : launch->extra) {
    if (extra == "--die-at-start") {
      std::fprintf(stderr, "test worker: cannot read the job file (on purpose)\n");
      return 5;
    }
  }
  Status st = fanfold::RunWorkerLoop(launch->segment, launch->slot, Process);
  if (!st.ok()) {
    std::fprintf(stderr, "test worker: %s\n", st.message().c_str());
    return st.code() == Status::Code::kInterrupted ? 3 : 4;
  }
  return 0;
}
