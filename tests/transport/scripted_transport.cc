#include "tests/transport/scripted_transport.h"

#include <algorithm>
#include <chrono>
#include <thread>

namespace fanfold {
namespace {

uint64_t NowNs() {
  return static_cast<uint64_t>(std::chrono::duration_cast<std::chrono::nanoseconds>(
                                   std::chrono::system_clock::now().time_since_epoch())
                                   .count());
}

}  // namespace

ScriptedTransport::ScriptedTransport(int workers, int room, PartialSource partial_for)
    : room_(room), partial_for_(std::move(partial_for)), slots_(static_cast<size_t>(workers)) {}

bool ScriptedTransport::idle(int w) const { return slots_[static_cast<size_t>(w)].queue.empty(); }

int ScriptedTransport::room(int w) const {
  return room_ - static_cast<int>(slots_[static_cast<size_t>(w)].queue.size());
}

Status ScriptedTransport::Assign(int w, const ShardTask& task) {
  if (w < 0 || w >= worker_count() || room(w) <= 0) return Status::Internal("assign to a full or unknown worker");
  if (static_cast<int64_t>(task.index) == refused_)
    return Status::Internal("shard " + std::to_string(task.index) + " cannot be sent");
  Slot& slot = slots_[static_cast<size_t>(w)];
  slot.queue.push_back(Held{task, slot.queue.empty() ? NowNs() : 0});
  assignments_.push_back(Assignment{w, slot.generation, task});
  return Status::Ok();
}

bool ScriptedTransport::Running(int w, uint32_t* shard, uint64_t* since_ns) const {
  const Slot& slot = slots_[static_cast<size_t>(w)];
  if (slot.queue.empty()) return false;
  *shard = slot.queue.front().task.index;
  *since_ns = slot.queue.front().start_ns;
  return true;
}

ScriptStep ScriptedTransport::StepFor(const ShardTask& task) const {
  auto it = script_.find({task.index, task.attempt});
  return it == script_.end() ? ScriptStep::Answer() : it->second;
}

ScriptedTransport::Held ScriptedTransport::PopRunning(int w, uint64_t now_ns) {
  Slot& slot = slots_[static_cast<size_t>(w)];
  Held held = std::move(slot.queue.front());
  slot.queue.pop_front();
  script_.erase({held.task.index, held.task.attempt});
  if (!slot.queue.empty()) slot.queue.front().start_ns = now_ns;
  return held;
}

void ScriptedTransport::Die(int w, TransportEvent running_event) {
  Slot& slot = slots_[static_cast<size_t>(w)];
  script_.erase({slot.queue.front().task.index, slot.queue.front().task.attempt});
  pending_.push_back(std::move(running_event));
  for (size_t i = 1; i < slot.queue.size(); ++i) {
    TransportEvent back;
    back.kind = TransportEvent::Kind::kReturned;
    back.worker = w;
    back.shard = slot.queue[i].task.index;
    pending_.push_back(std::move(back));
  }
  slot.queue.clear();
  ++slot.generation;  // a fresh worker takes the slot
}

bool ScriptedTransport::Deliver(TransportEvent ev, TransportEvent* event) {
  delivered_.push_back(ev);
  *event = std::move(ev);
  return true;
}

Status ScriptedTransport::Wait(int timeout_ms, TransportEvent* event, bool* got) {
  *got = false;
  const uint64_t deadline = NowNs() + static_cast<uint64_t>(std::max(0, timeout_ms)) * 1'000'000;
  for (;;) {
    if (!pending_.empty()) {
      TransportEvent ev = std::move(pending_.front());
      pending_.pop_front();
      *got = Deliver(std::move(ev), event);
      return Status::Ok();
    }
    const uint64_t now = NowNs();
    uint64_t next_due = UINT64_MAX;  // earliest kDelay answer still to come
    // Answers at once (due 0) in worker order, then kDelay answers in the
    // order of their due times even when this thread was late to look (a
    // loaded machine), not in worker order.
    int best = -1;
    uint64_t best_due = UINT64_MAX;
    for (int w = 0; w < worker_count(); ++w) {
      Slot& slot = slots_[static_cast<size_t>(w)];
      if (slot.queue.empty()) continue;
      const Held& head = slot.queue.front();
      const ScriptStep step = StepFor(head.task);
      if (step.act == ScriptStep::Act::kDrop) continue;
      const uint64_t due = step.act == ScriptStep::Act::kDelay ? head.start_ns + step.delay_ms * 1'000'000 : 0;
      if (due > now) {
        next_due = std::min(next_due, due);
      } else if (due < best_due) {
        best = w;
        best_due = due;
      }
    }
    if (best >= 0) {
      const int w = best;
      Slot& slot = slots_[static_cast<size_t>(w)];
      const Held& head = slot.queue.front();
      const ScriptStep step = StepFor(head.task);
      TransportEvent ev;
      ev.worker = w;
      ev.shard = head.task.index;
      ev.start_ns = head.start_ns;
      ev.end_ns = now;
      switch (step.act) {
        case ScriptStep::Act::kDrop:  // not chosen above
        case ScriptStep::Act::kDelay:  // due: chosen above
        case ScriptStep::Act::kAnswer:
          ev.partial = partial_for_(head.task.index);
          break;
        case ScriptStep::Act::kCorrupt:
          ev.partial = partial_for_(head.task.index);
          if (!ev.partial.empty()) ev.partial.back() = static_cast<char>(ev.partial.back() ^ 0x5A);
          break;
        case ScriptStep::Act::kFail:
          ev.kind = TransportEvent::Kind::kFailed;
          ev.message = step.message;
          break;
        case ScriptStep::Act::kHandBack:
          ev.kind = TransportEvent::Kind::kReturned;
          ev.start_ns = ev.end_ns = 0;
          break;
        case ScriptStep::Act::kKill:
          ev.kind = TransportEvent::Kind::kDied;
          ev.message = step.message;
          Die(w, std::move(ev));
          return Wait(timeout_ms, event, got);  // delivers the death first
      }
      PopRunning(w, now);
      *got = Deliver(std::move(ev), event);
      return Status::Ok();
    }
    if (now >= deadline) return Status::Ok();
    std::this_thread::sleep_for(std::chrono::nanoseconds(std::min(next_due, deadline) - now));
  }
}

Status ScriptedTransport::Abort(int w) {
  if (w < 0 || w >= worker_count()) return Status::Internal("abort of an unknown worker");
  aborts_.push_back(w);
  Slot& slot = slots_[static_cast<size_t>(w)];
  if (slot.queue.empty()) return Status::Ok();
  TransportEvent ev;
  ev.kind = TransportEvent::Kind::kDied;
  ev.worker = w;
  ev.shard = slot.queue.front().task.index;
  ev.message = "killed by the coordinator";
  ev.aborted = true;
  ev.start_ns = slot.queue.front().start_ns;
  ev.end_ns = NowNs();
  Die(w, std::move(ev));
  return Status::Ok();
}

}  // namespace fanfold
