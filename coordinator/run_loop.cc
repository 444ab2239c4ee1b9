#include "coordinator/run_loop.h"

#include <algorithm>
#include <chrono>
#include <deque>

namespace fanfold {
namespace {

uint64_t WallNs() {
  return static_cast<uint64_t>(std::chrono::duration_cast<std::chrono::nanoseconds>(
                                   std::chrono::system_clock::now().time_since_epoch())
                                   .count());
}

struct InFlight {
  bool busy = false;
  uint32_t shard = 0;
  uint32_t attempt = 0;
  uint64_t start_ns = 0;
  bool timed_out = false;  // we killed it for exceeding the time limit
};

}  // namespace

Status RunShards(const ShardList& list, const std::vector<uint32_t>& order, Transport& transport, Merger& merger,
                 const RunLoopOptions& options, RunLoopResult* result) {
  std::deque<std::pair<uint32_t, uint32_t>> queue;  // (shard, attempt), retries go first
  for (uint32_t s : order) queue.emplace_back(s, 1);
  std::vector<InFlight> workers(transport.worker_count());
  size_t in_flight = 0;
  const uint64_t limit_ns = options.shard_time_limit_ms * 1'000'000;

  auto fail = [&](uint32_t shard, uint32_t attempts, std::string message) {
    result->failures.push_back({shard, list.shards[shard].path, std::move(message), attempts});
    merger.MarkFailed(shard);
  };

  while (!queue.empty() || in_flight > 0) {
    if (options.should_stop && options.should_stop()) {
      result->interrupted = true;
      break;
    }
    for (int w = 0; w < transport.worker_count() && !queue.empty(); ++w) {
      if (workers[w].busy || !transport.idle(w)) continue;
      auto [shard, attempt] = queue.front();
      queue.pop_front();
      const Shard& s = list.shards[shard];
      ShardTask task;
      task.index = s.index;
      task.path = s.path;
      task.offset = s.offset;
      task.length = s.length;
      task.compression = s.compression;
      task.attempt = attempt;
      // The attempt starts when it is handed out: Assign may return after
      // the worker has already begun.
      const uint64_t start_ns = WallNs();
      FF_RETURN_IF_ERROR(transport.Assign(w, task));
      workers[w] = InFlight{true, shard, attempt, start_ns, false};
      ++in_flight;
    }
    TransportEvent ev;
    bool got = false;
    FF_RETURN_IF_ERROR(transport.Wait(limit_ns ? 50 : 200, &ev, &got));
    if (options.on_idle) FF_RETURN_IF_ERROR(options.on_idle());
    if (!got) {
      if (limit_ns) {
        const uint64_t now = WallNs();
        for (int w = 0; w < static_cast<int>(workers.size()); ++w) {
          if (workers[w].busy && !workers[w].timed_out && now - workers[w].start_ns > limit_ns) {
            workers[w].timed_out = true;
            FF_RETURN_IF_ERROR(transport.Abort(w));
          }
        }
      }
      continue;
    }
    if (ev.worker < 0 || ev.worker >= static_cast<int>(workers.size()) || !workers[ev.worker].busy)
      return Status::Internal("transport reported an event for a worker with no shard");
    InFlight job = workers[ev.worker];
    workers[ev.worker].busy = false;
    --in_flight;

    AttemptRecord rec;
    rec.shard = job.shard;
    rec.attempt = job.attempt;
    rec.worker = ev.worker;
    rec.start_ns = job.start_ns;
    rec.end_ns = WallNs();
    switch (ev.kind) {
      case TransportEvent::Kind::kDone: {
        Status rejected = DecodePartialHeader(ev.partial, &rec.header);
        if (rejected.ok() && options.on_partial) FF_RETURN_IF_ERROR(options.on_partial(job.shard, ev.partial));
        if (rejected.ok()) rejected = merger.Add(job.shard, std::move(ev.partial));
        if (!rejected.ok()) {
          rec.outcome = AttemptRecord::Outcome::kRejected;
          rec.message = "its partial state was rejected: " + rejected.message();
        }
        break;
      }
      case TransportEvent::Kind::kFailed:
        rec.outcome = AttemptRecord::Outcome::kFailed;
        rec.message = ev.message;
        break;
      case TransportEvent::Kind::kDied:
        rec.outcome = job.timed_out ? AttemptRecord::Outcome::kTimedOut : AttemptRecord::Outcome::kDied;
        rec.message = job.timed_out ? "exceeded the per-shard time limit of " +
                                          std::to_string(options.shard_time_limit_ms) + " ms and was killed"
                                    : ev.message;
        break;
    }
    const bool retry = rec.outcome != AttemptRecord::Outcome::kDone &&
                       rec.outcome != AttemptRecord::Outcome::kFailed && job.attempt < options.max_attempts;
    rec.final = !retry;
    if (options.on_attempt) options.on_attempt(rec);
    if (retry) {
      ++result->retries;
      queue.emplace_front(job.shard, job.attempt + 1);
    } else if (rec.outcome != AttemptRecord::Outcome::kDone) {
      std::string why = rec.message;
      if (rec.outcome != AttemptRecord::Outcome::kFailed)
        why = "quarantined after " + std::to_string(job.attempt) + " attempts; last: " + why;
      fail(job.shard, job.attempt, why);
    }
  }
  std::sort(result->failures.begin(), result->failures.end(),
            [](const ShardFailure& a, const ShardFailure& b) { return a.shard < b.shard; });
  return Status::Ok();
}

}  // namespace fanfold
