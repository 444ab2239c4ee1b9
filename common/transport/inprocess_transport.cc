#include "common/transport/inprocess_transport.h"

namespace fanfold {

InProcessTransport::InProcessTransport(const Plan* plan, int workers) : processor_(plan), busy_(workers, false) {
  // One thread runs the shards, whatever the worker count: "auto" counts it as one.
  processor_.ahead_threaded = AheadThreaded(plan->spec.decode_ahead, 1);
  processor_.encode_threaded = AheadThreaded(AheadChoice::kAuto, 1);
}

Status InProcessTransport::Assign(int w, const ShardTask& task) {
  if (w < 0 || w >= worker_count() || busy_[w]) return Status::Internal("assign to a busy or unknown worker");
  busy_[w] = true;
  queue_.emplace_back(w, task);
  return Status::Ok();
}

Status InProcessTransport::Wait(int timeout_ms, TransportEvent* event, bool* got) {
  *got = false;
  if (queue_.empty()) return Status::Ok();
  auto [w, task] = std::move(queue_.front());
  queue_.pop_front();
  busy_[w] = false;
  *event = TransportEvent{};
  event->worker = w;
  event->shard = task.index;
  Status s = processor_.Process(task, &event->partial);
  if (!s.ok()) {
    event->kind = TransportEvent::Kind::kFailed;
    event->message = s.message();
    event->partial.clear();
  }
  *got = true;
  return Status::Ok();
}

}  // namespace fanfold
