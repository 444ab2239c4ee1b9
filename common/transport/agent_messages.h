// The messages between rank 0 and the MPI node agents as bytes: one struct
// and an Encode/Decode pair per kind (common/base/byte_io.h encoding),
// without MPI, so that they are tested on any build. Decode checks every
// length and says which kind was malformed. Tags, and the calls that move
// the bytes: common/transport/mpi_wire.h; the table of layouts:
// docs/mpi.md. Values; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/job/shard_task.h"
#include "common/transport/transport.h"

namespace fanfold {

// Largest piece of a partial in one message (MPI counts are int).
inline constexpr uint64_t kMpiPieceBytes = 1u << 30;

struct HelloMessage {
  uint32_t workers = 0;                  // per agent; 0 = the agent's cores
  std::string spill_dir;                 // where partials too big for shared memory go
  std::vector<std::string> worker_args;  // fanfold-worker's JOB FORMAT PLAN BASE_DIR
};
struct ReadyMessage {
  uint32_t workers = 0;
  std::string host;
};
struct FailedMessage {
  std::string host;
  std::string message;
};
struct TaskMessage {
  uint32_t slot = 0;
  ShardTask task;  // with the file identity rank 0 listed
};
struct StartedMessage {
  uint32_t slot = 0;
  uint32_t shard = 0;
  uint64_t since_ns = 0;
};

std::string EncodeHello(const HelloMessage& m);
Status DecodeHello(const std::string& bytes, HelloMessage* m);
std::string EncodeReady(const ReadyMessage& m);
Status DecodeReady(const std::string& bytes, ReadyMessage* m);
std::string EncodeFailed(const FailedMessage& m);
Status DecodeFailed(const std::string& bytes, FailedMessage* m);
std::string EncodeTask(const TaskMessage& m);
Status DecodeTask(const std::string& bytes, TaskMessage* m);
std::string EncodeSlot(uint32_t slot);  // kTagAbort
Status DecodeSlot(const std::string& bytes, uint32_t* slot);
std::string EncodeStarted(const StartedMessage& m);
Status DecodeStarted(const std::string& bytes, StartedMessage* m);

// An event's header: everything but the partial's bytes, then its total
// length. The first piece of the partial follows in the same message.
std::string EncodeEventHeader(uint32_t slot, const TransportEvent& ev);
// Decodes the header at the start of `bytes` into *slot and *ev (partial
// cleared), *total = the partial's length, *header_bytes = where the first
// piece starts. Fails on a malformed header or a piece longer than *total.
Status DecodeEventHeader(const std::string& bytes, uint32_t* slot, TransportEvent* ev, uint64_t* total,
                         size_t* header_bytes);

}  // namespace fanfold
