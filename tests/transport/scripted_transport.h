// ScriptedTransport: a Transport for unit tests whose workers do, per shard
// and attempt, what the test told them — answer, answer late, never answer,
// die, hand the shard back, fail or send a corrupt partial — so the run loop's
// control logic runs without processes, shared memory or a run directory.
// It keeps the real transports' contract (transport.h, DEVELOPERS.md "Adding
// a transport"): each worker runs its queue one shard at a time, in order;
// a death makes the running shard kDied and every shard queued behind it
// kReturned, and a fresh worker (next generation) takes the slot. Partials
// come from a caller-supplied function. Single-threaded, like the run loop.
#pragma once

#include <cstdint>
#include <deque>
#include <functional>
#include <map>
#include <string>
#include <utility>
#include <vector>

#include "common/transport/transport.h"

namespace fanfold {

// What a worker does with one attempt at one shard once it starts it.
struct ScriptStep {
  enum class Act {
    kAnswer,    // kDone with the shard's partial
    kDelay,     // kDone with the partial, delay_ms of wall time after its start
    kDrop,      // never answers; only Abort ends it (kDied, aborted)
    kKill,      // the worker dies running it: kDied; shards queued behind: kReturned
    kHandBack,  // kReturned: handed back unstarted (not an attempt)
    kFail,      // kFailed with `message` (the worker rejected the input)
    kCorrupt,   // kDone with the partial's last byte flipped (fails its checksum)
  };
  Act act = Act::kAnswer;
  uint64_t delay_ms = 0;  // kDelay only
  std::string message;    // kFail, kKill: the event's message

  static ScriptStep Answer() { return {}; }
  static ScriptStep Delay(uint64_t ms) { return {Act::kDelay, ms, ""}; }
  static ScriptStep Drop() { return {Act::kDrop, 0, ""}; }
  static ScriptStep Kill(std::string why = "worker killed by signal 9") { return {Act::kKill, 0, std::move(why)}; }
  static ScriptStep HandBack() { return {Act::kHandBack, 0, ""}; }
  static ScriptStep Fail(std::string why) { return {Act::kFail, 0, std::move(why)}; }
  static ScriptStep Corrupt() { return {Act::kCorrupt, 0, ""}; }
};

class ScriptedTransport final : public Transport {
 public:
  // Returns the encoded partial a worker sends for shard.
  using PartialSource = std::function<std::string(uint32_t shard)>;

  // workers: slots; room: shards one worker holds at once (running + queued).
  ScriptedTransport(int workers, int room, PartialSource partial_for);

  // What attempt `attempt` (ShardTask::attempt) of shard does the next time
  // a worker starts it; the step is used up once its event is decided (so a
  // handed-back shard answers when it comes again). Unscripted: answer at once.
  void On(uint32_t shard, uint32_t attempt, ScriptStep step) { script_[{shard, attempt}] = std::move(step); }
  // Assign of this shard fails (as a transport refuses a task it cannot
  // send), with an Internal status naming it.
  void RefuseAssign(uint32_t shard) { refused_ = shard; }

  // One Assign as the transport saw it: which worker slot, which incarnation
  // of the worker in it (0 = the first; +1 after each death), the task.
  struct Assignment {
    int worker = -1;
    uint32_t generation = 0;
    ShardTask task;
  };
  const std::vector<Assignment>& assignments() const { return assignments_; }
  // Every event Wait delivered, in order.
  const std::vector<TransportEvent>& delivered() const { return delivered_; }
  // Workers Abort was called for, in order.
  const std::vector<int>& aborts() const { return aborts_; }
  uint32_t generation(int w) const { return slots_[static_cast<size_t>(w)].generation; }
  bool shut_down() const { return shut_down_; }

  int worker_count() const override { return static_cast<int>(slots_.size()); }
  bool idle(int w) const override;
  int room(int w) const override;
  Status Assign(int w, const ShardTask& task) override;
  bool Running(int w, uint32_t* shard, uint64_t* since_ns) const override;
  // Delivers a pending death's kReturned events first, then the
  // lowest-numbered worker's immediate answer, else the due kDelay answer
  // due earliest; sleeps (at most timeout_ms) for a kDelay.
  Status Wait(int timeout_ms, TransportEvent* event, bool* got) override;
  Status Abort(int w) override;
  void Shutdown() override { shut_down_ = true; }

 private:
  struct Held {
    ShardTask task;
    uint64_t start_ns = 0;  // wall clock when it became the running shard
  };
  struct Slot {
    std::deque<Held> queue;  // front = running
    uint32_t generation = 0;
  };
  ScriptStep StepFor(const ShardTask& task) const;
  // Ends worker w's incarnation: its running shard becomes `running_event`
  // (already filled) and every shard behind it a kReturned, queued for Wait.
  void Die(int w, TransportEvent running_event);
  // Pops w's running shard and starts the next one at now_ns.
  Held PopRunning(int w, uint64_t now_ns);
  bool Deliver(TransportEvent ev, TransportEvent* event);

  int room_;
  PartialSource partial_for_;
  std::vector<Slot> slots_;
  std::map<std::pair<uint32_t, uint32_t>, ScriptStep> script_;
  int64_t refused_ = -1;
  std::deque<TransportEvent> pending_;  // decided, not yet delivered
  std::vector<Assignment> assignments_;
  std::vector<TransportEvent> delivered_;
  std::vector<int> aborts_;
  bool shut_down_ = false;
};

}  // namespace fanfold
