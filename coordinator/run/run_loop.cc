#include "coordinator/run/run_loop.h"

#include <algorithm>
#include <chrono>
#include <deque>

#include "common/port/clock.h"

namespace fanfold {
namespace {

struct InFlight {
  uint32_t shard = 0;
  uint32_t attempt = 0;
  uint64_t bytes = 0;
  uint64_t assign_ns = 0;  // when it was handed out: the start when the transport knows none
  bool timed_out = false;  // we killed its worker for exceeding the time limit
};

// Time-limit checks need not run after every event: a shard overruns by at
// most this much more.
constexpr uint64_t kLimitCheckNs = 10'000'000;

}  // namespace

Status RunShards(const ShardList& list, const std::vector<uint32_t>& order, Transport& transport, Merger& merger,
                 const RunLoopOptions& options, RunLoopResult* result) {
  std::deque<std::pair<uint32_t, uint32_t>> queue;  // (shard, attempt), retries go first
  for (uint32_t s : order) queue.emplace_back(s, 1);
  // Per worker, what it holds, in the order it runs them.
  std::vector<std::deque<InFlight>> workers(static_cast<size_t>(transport.worker_count()));
  std::vector<uint64_t> held_bytes(workers.size(), 0);
  size_t in_flight = 0;
  const uint64_t limit_ns = options.shard_time_limit_ms * 1'000'000;
  const size_t depth = std::max<uint32_t>(1, options.queue_depth);
  uint64_t last_limit_check_ns = 0;

  auto fail = [&](uint32_t shard, uint32_t attempts, std::string message) {
    result->failures.push_back({shard, list.shards[shard].path, std::move(message), attempts});
    merger.MarkFailed(shard);
  };
  // A worker takes another shard while it holds fewer than `depth`, and,
  // past its first, only while what it holds stays small: big shards keep
  // the largest-first balance of a one-deep queue, small ones need no round
  // trip between them.
  auto accepts = [&](int w, uint64_t bytes) {
    const std::deque<InFlight>& held = workers[static_cast<size_t>(w)];
    if (held.size() >= depth || transport.room(w) <= 0) return false;
    return held.empty() || held_bytes[static_cast<size_t>(w)] + bytes <= options.queue_bytes;
  };
  auto check_limits = [&]() -> Status {
    last_limit_check_ns = WallNanos();
    for (int w = 0; w < static_cast<int>(workers.size()); ++w) {
      uint32_t shard = 0;
      uint64_t since = 0;
      if (!transport.Running(w, &shard, &since)) continue;
      for (InFlight& job : workers[static_cast<size_t>(w)]) {
        if (job.shard != shard || job.timed_out) continue;
        if (last_limit_check_ns > since && last_limit_check_ns - since > limit_ns) {
          job.timed_out = true;
          FF_RETURN_IF_ERROR(transport.Abort(w));
        }
        break;
      }
    }
    return Status::Ok();
  };

  // Hands queued shards to every worker with room.
  auto dispatch = [&]() -> Status {
    for (int w = 0; w < transport.worker_count() && !queue.empty(); ++w) {
      while (!queue.empty()) {
        auto [shard, attempt] = queue.front();
        const Shard& s = list.shards[shard];
        if (!accepts(w, s.bytes())) break;
        queue.pop_front();
        ShardTask task;
        task.index = s.index;
        task.path = s.path;
        task.offset = s.offset;
        task.length = s.length;
        task.compression = s.compression;
        task.attempt = attempt;
        task.file_size = s.file_size;
        task.mtime_ns = s.mtime_ns;
        task.table_bytes = options.worker_table_bytes;
        const uint64_t assign_ns = WallNanos();
        FF_RETURN_IF_ERROR(transport.Assign(w, task));
        workers[static_cast<size_t>(w)].push_back(InFlight{shard, attempt, s.bytes(), assign_ns, false});
        held_bytes[static_cast<size_t>(w)] += s.bytes();
        ++in_flight;
      }
    }
    return Status::Ok();
  };

  while (!queue.empty() || in_flight > 0) {
    if (options.should_stop && options.should_stop()) {
      result->interrupted = true;
      break;
    }
    FF_RETURN_IF_ERROR(dispatch());
    TransportEvent ev;
    bool got = false;
    FF_RETURN_IF_ERROR(transport.Wait(limit_ns ? 50 : 200, &ev, &got));
    if (options.on_idle) FF_RETURN_IF_ERROR(options.on_idle());
    if (limit_ns && (!got || WallNanos() - last_limit_check_ns >= kLimitCheckNs)) FF_RETURN_IF_ERROR(check_limits());
    if (!got) continue;
    if (ev.worker < 0 || ev.worker >= static_cast<int>(workers.size()))
      return Status::Internal("transport reported an event for an unknown worker");
    std::deque<InFlight>& held = workers[static_cast<size_t>(ev.worker)];
    auto it = std::find_if(held.begin(), held.end(), [&](const InFlight& j) { return j.shard == ev.shard; });
    if (it == held.end()) return Status::Internal("transport reported an event for a shard the worker does not hold");
    InFlight job = *it;
    held.erase(it);
    held_bytes[static_cast<size_t>(ev.worker)] -= job.bytes;
    --in_flight;
    // Never started, or stopped by an Abort meant for the shard before it:
    // not an attempt. The shard goes back to the front of the queue.
    if (ev.kind == TransportEvent::Kind::kReturned ||
        (ev.kind == TransportEvent::Kind::kDied && ev.aborted && !job.timed_out)) {
      queue.emplace_front(job.shard, job.attempt);
      continue;
    }

    AttemptRecord rec;
    rec.shard = job.shard;
    rec.attempt = job.attempt;
    rec.worker = ev.worker;
    rec.node = transport.worker_node(ev.worker);
    rec.start_ns = ev.start_ns != 0 ? ev.start_ns : job.assign_ns;
    rec.end_ns = ev.end_ns != 0 ? ev.end_ns : WallNanos();
    if (rec.end_ns < rec.start_ns) rec.end_ns = rec.start_ns;
    Status dispatched;
    switch (ev.kind) {
      case TransportEvent::Kind::kDone: {
        // The worker that sent it takes its next shard first: persisting
        // and merging this partial (long for one with many groups) then
        // overlap that shard's work instead of leaving the worker idle. A
        // hand-out that fails ends the run only once this partial is kept
        // and its attempt recorded.
        dispatched = dispatch();
        Status rejected = DecodePartialHeader(ev.partial, &rec.header);
        if (rejected.ok() && options.on_partial) FF_RETURN_IF_ERROR(options.on_partial(job.shard, ev.partial));
        if (rejected.ok()) rejected = merger.Add(job.shard, std::move(ev.partial), &rec.header);
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
      case TransportEvent::Kind::kReturned:
        break;  // handled above
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
    FF_RETURN_IF_ERROR(dispatched);
  }
  std::sort(result->failures.begin(), result->failures.end(),
            [](const ShardFailure& a, const ShardFailure& b) { return a.shard < b.shard; });
  return Status::Ok();
}

}  // namespace fanfold
