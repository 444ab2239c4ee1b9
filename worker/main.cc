// The `fanfold-worker` process: started by the coordinator, never by hand,
// as `fanfold-worker --segment NAME --slot I JOB FORMAT PLAN_FINGERPRINT`.
// It compiles the job's plan, then serves shards over shared memory until
// the coordinator says quit or dies.
#include <iostream>

#include "common/base/exit_codes.h"
#include "common/job/job_loader.h"
#include "common/partial/shard_processor.h"
#include "worker/fault_injection.h"
#include "common/transport/worker_loop.h"

int main(int argc, char** argv) {
  using namespace fanfold;
  Result<WorkerLaunch> launch = ParseWorkerLaunch(argc, argv);
  if (!launch.ok() || launch->extra.size() != 4) {
    std::cerr << "fanfold-worker: started by fanfold itself; "
              << (launch.ok() ? "expected JOB FORMAT PLAN BASE_DIR after the slot" : launch.status().message()) << "\n";
    return kExitUsage;
  }
  Result<std::unique_ptr<Plan>> plan = LoadWorkerPlan(launch->extra[0], launch->extra[1], launch->extra[2], launch->extra[3]);
  if (!plan.ok()) {
    std::cerr << "fanfold-worker: " << plan.status().message() << "\n";
    return ExitCodeFor(plan.status());
  }
  Result<FaultPlan> faults = FaultPlan::FromEnvironment();
  if (!faults.ok()) {
    std::cerr << "fanfold-worker: " << faults.status().message() << "\n";
    return kExitUsage;
  }
  ShardProcessor processor(plan->get());
  processor.on_every_record = !faults->faults().empty();
  ProcessFn process = [&](const ShardTask& task, ProgressFn progress) -> Result<std::string> {
    const FaultPlan& f = *faults;
    processor.on_record = [&](uint64_t n) {
      if ((n & 4095) == 0) progress(n, 0);
      if (processor.on_every_record) f.OnRecord(task, n);
    };
    f.OnStart(task);
    std::string partial;
    Status s = processor.Process(task, &partial);
    if (!s.ok()) return s;
    f.OnFinish(task, &partial);
    return partial;
  };
  // Decompression on a helper thread while parsing (common/input/decode_ahead.h):
  // the job's "decode_ahead", "auto" deciding by the workers on this machine.
  auto on_attach = [&](unsigned workers) {
    processor.ahead_threaded = AheadThreaded((*plan)->spec.decode_ahead, workers);
    processor.encode_threaded = AheadThreaded(AheadChoice::kAuto, workers);
  };
  Status s = RunWorkerLoop(launch->segment, launch->slot, process, on_attach);
  if (!s.ok() && s.code() != Status::Code::kInterrupted) {
    std::cerr << "fanfold-worker: " << s.message() << "\n";
    return ExitCodeFor(s);
  }
  return kExitOk;
}
