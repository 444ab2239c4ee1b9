#include "coordinator/run/transport_factory.h"

#include <cstdlib>
#include <filesystem>

#include "common/job/job_loader.h"
#include "common/port/process_control.h"
#include "common/transport/inprocess_transport.h"
#include "common/transport/mpi_session.h"
#include "common/transport/mpi_transport.h"
#include "common/transport/shm_transport.h"

namespace fanfold {
// fanfold-worker sits next to the fanfold binary (build tree and install
// alike); FANFOLD_WORKER_BINARY overrides that for unusual layouts.
Result<std::string> WorkerBinaryPath() {
  if (const char* env = std::getenv("FANFOLD_WORKER_BINARY"); env && *env) return std::string(env);
  std::string self;
  if (!SelfExecutablePath(&self)) return Status::IoError("cannot find the fanfold executable (/proc/self/exe)");
  std::filesystem::path worker = std::filesystem::path(self).parent_path() / "fanfold-worker";
  if (!IsExecutable(worker.string()))
    return Status::IoError("the worker program '" + worker.string() + "' is missing or not executable");
  return worker.string();
}

Result<std::unique_ptr<Transport>> MakeTransport(const Plan& plan, const RunOptions& options, int workers,
                                                 const std::string& spill_dir) {
  if (options.in_process) {
    std::unique_ptr<Transport> t = std::make_unique<InProcessTransport>(&plan, workers);
    return t;
  }
  const std::vector<std::string> worker_args = {
      std::filesystem::absolute(plan.spec.job_path).string(), FormatName(plan.format),
      FingerprintHex(plan.fingerprint),
      // where the job's relative paths start (a resumed run's job is the run's copy)
      std::filesystem::absolute(plan.spec.base_dir).string()};
  if (MpiSession* mpi = MpiSession::Active(); mpi != nullptr && mpi->size() > 1) {
    MpiTransportOptions m;
    // -j is per agent; without it each agent takes its own cores.
    m.workers_per_agent = options.workers > 0 ? static_cast<uint32_t>(workers) : 0;
    m.worker_args = worker_args;
    m.spill_dir = std::filesystem::absolute(spill_dir).string();
    return MpiTransport::Create(*mpi, m);
  }
  Result<std::string> binary = WorkerBinaryPath();
  if (!binary.ok()) return binary.status();
  ShmTransportOptions o;
  o.worker_binary = *binary;
  o.worker_args = worker_args;
  o.worker_count = workers;
  o.spill_dir = spill_dir;
  Result<std::unique_ptr<ShmTransport>> t = ShmTransport::Create(o);
  if (!t.ok()) return t.status();
  std::unique_ptr<Transport> base = std::move(t.value());
  return base;
}

}  // namespace fanfold
