// MpiTransport: rank 0's Transport when `mpirun` started fanfold. Its
// workers are the node agents' worker slots, numbered agent by agent
// (rank 1's slots first); each agent runs them as local worker processes
// over shared memory (common/transport/mpi_node_agent.h). Assign sends a
// task message, Abort an abort message; Wait polls with MPI_Iprobe and
// sleeps 1 ms between polls (an idle coordinator does not spin). Running
// comes from the agents' "started" messages. Messages: common/transport/
// mpi_wire.h and docs/mpi.md. Driven from one thread; not thread-safe.
#pragma once

#include <cstdint>
#include <deque>
#include <memory>
#include <string>
#include <vector>

#include "common/transport/mpi_session.h"
#include "common/transport/transport.h"

namespace fanfold {

struct MpiTransportOptions {
  uint32_t workers_per_agent = 0;        // 0 = each agent's cores
  std::vector<std::string> worker_args;  // fanfold-worker's JOB FORMAT PLAN BASE_DIR
  std::string spill_dir;                 // on a file system every node sees
  int ready_timeout_ms = 60000;          // how long agents may take to start their workers
};

class MpiTransport final : public Transport {
 public:
  // Says hello to every agent and waits until each reports its workers
  // running (or its failure, which is then ours). REQUIRES: session.rank()
  // == 0 and session.size() > 1.
  static Result<std::unique_ptr<Transport>> Create(MpiSession& session, const MpiTransportOptions& options);

  int worker_count() const override;
  bool idle(int w) const override;
  int room(int w) const override;  // kQueueDepth per slot (the run loop asks for fewer)
  Status Assign(int w, const ShardTask& task) override;
  bool Running(int w, uint32_t* shard, uint64_t* since_ns) const override;
  Status Wait(int timeout_ms, TransportEvent* event, bool* got) override;
  Status Abort(int w) override;
  // Tells every agent to stop its workers and waits (bounded) until each
  // has; the agents then wait for the next hello or for the session's quit.
  void Shutdown() override;
  ~MpiTransport() override { Shutdown(); }
  std::string worker_node(int w) const override;

  // Shards a slot may hold at once: one running, the others waiting on the
  // agent so that no round trip separates them (the agent queues what its
  // local worker cannot take yet).
  static constexpr int kQueueDepth = 8;

 private:
  struct Slot {
    int rank = 0;                 // its agent
    uint32_t local = 0;           // the slot on that agent
    std::deque<uint32_t> held;    // shards assigned and not yet reported
    bool running = false;         // the agent said one of them started
    uint32_t running_shard = 0;
    uint64_t since_ns = 0;
  };
  MpiTransport() = default;
  // Handles one message from an agent; true iff it filled *event.
  Result<bool> Handle(int from, int tag, const std::string& bytes, TransportEvent* event);

  std::vector<Slot> slots_;
  std::vector<int> first_slot_;  // per rank: index of its first slot
  std::vector<std::string> hosts_;  // per rank
  bool shut_down_ = false;
  uint64_t last_message_ns_ = 0;  // monotonic: when an agent last sent something
};

}  // namespace fanfold
