// InProcessTransport: a Transport that runs shards on the coordinator's own
// thread, one at a time, with a ShardProcessor — no processes, no shared
// memory. Used by tests as the reference transport (and by `--in-process`
// for debugging). Each Wait() processes one assigned shard. Not thread-safe.
#pragma once

#include <deque>
#include <vector>

#include "common/job/plan.h"
#include "common/partial/shard_processor.h"
#include "common/transport/transport.h"

namespace fanfold {

class InProcessTransport final : public Transport {
 public:
  // workers: how many virtual workers to offer (they run one after another).
  InProcessTransport(const Plan* plan, int workers);

  int worker_count() const override { return static_cast<int>(busy_.size()); }
  bool idle(int w) const override { return !busy_[w]; }
  int room(int w) const override { return busy_[w] ? 0 : 1; }
  Status Assign(int w, const ShardTask& task) override;
  Status Wait(int timeout_ms, TransportEvent* event, bool* got) override;
  // Shards run synchronously inside Wait, so none is ever running between
  // calls and there is never one to abort.
  bool Running(int, uint32_t*, uint64_t*) const override { return false; }
  Status Abort(int w) override { return Status::Ok(); }
  void Shutdown() override {}

 private:
  ShardProcessor processor_;
  std::vector<bool> busy_;
  std::deque<std::pair<int, ShardTask>> queue_;
};

}  // namespace fanfold
