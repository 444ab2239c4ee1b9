#include "coordinator/run_loop.h"

#include <algorithm>

namespace fanfold {

Status RunShards(const ShardList& list, const std::vector<uint32_t>& order, Transport& transport, Merger& merger,
                 const RunLoopOptions& options, RunLoopResult* result) {
  size_t next = 0;      // next position in `order` to dispatch
  size_t in_flight = 0;
  auto stopping = [&] { return options.stop != nullptr && options.stop->load(std::memory_order_relaxed); };
  auto fail = [&](uint32_t shard, std::string message) {
    result->failures.push_back({shard, list.shards[shard].path, std::move(message)});
    merger.MarkFailed(shard);
  };

  while (next < order.size() || in_flight > 0) {
    if (stopping()) {
      result->interrupted = true;
      break;
    }
    for (int w = 0; w < transport.worker_count() && next < order.size(); ++w) {
      if (!transport.idle(w)) continue;
      const Shard& s = list.shards[order[next]];
      ShardTask task;
      task.index = s.index;
      task.path = s.path;
      task.offset = s.offset;
      task.length = s.length;
      task.compression = s.compression;
      FF_RETURN_IF_ERROR(transport.Assign(w, task));
      ++next;
      ++in_flight;
    }
    TransportEvent ev;
    bool got = false;
    FF_RETURN_IF_ERROR(transport.Wait(200, &ev, &got));
    if (!got) continue;
    --in_flight;
    bool ok = false;
    switch (ev.kind) {
      case TransportEvent::Kind::kDone: {
        Status s = merger.Add(ev.shard, std::move(ev.partial));
        if (s.ok()) ok = true;
        else fail(ev.shard, "its partial state was rejected: " + s.message());
        break;
      }
      case TransportEvent::Kind::kFailed: fail(ev.shard, ev.message); break;
      case TransportEvent::Kind::kDied: fail(ev.shard, ev.message); break;
    }
    if (options.on_shard_finished) options.on_shard_finished(list.shards[ev.shard], ok);
  }
  std::sort(result->failures.begin(), result->failures.end(),
            [](const ShardFailure& a, const ShardFailure& b) { return a.shard < b.shard; });
  return Status::Ok();
}

}  // namespace fanfold
