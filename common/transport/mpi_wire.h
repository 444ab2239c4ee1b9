// The MPI messages between rank 0 (MpiTransport) and the node agents
// (RunNodeAgent): their tags and the few MPI calls that move them (the
// byte layouts: common/transport/agent_messages.h), all on MPI_COMM_WORLD as
// MPI_BYTE. docs/mpi.md lists every kind and layout; keep the two in step.
// Receiving never blocks the caller while nothing came (PollMessage is
// MPI_Iprobe), except for a partial's remaining pieces, which the sender
// posts right behind its event. Main thread only.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/transport/agent_messages.h"
#include "common/transport/transport.h"

namespace fanfold {

enum MpiTag : int {
  kTagHello = 1,    // 0 -> agent: how to start workers
  kTagTask = 2,     // 0 -> agent: run a shard on one of its worker slots
  kTagAbort = 3,    // 0 -> agent: kill one worker slot now
  kTagQuit = 4,     // 0 -> agent: shut down
  kTagStop = 5,     // 0 -> agent: end this pool of workers; a hello may follow
  kTagReady = 10,   // agent -> 0: workers running; how many, on which node
  kTagFailed = 11,  // agent -> 0: the agent cannot go on; why
  kTagStarted = 12, // agent -> 0: a slot started a shard
  kTagEvent = 13,   // agent -> 0: one TransportEvent (+ the partial's first piece)
  kTagPiece = 14,   // agent -> 0: the next piece of that event's partial
  kTagBye = 15,     // agent -> 0: quitting
  kTagStopped = 16, // agent -> 0: its workers are gone (answers kTagStop)
};

// How long to sleep between two polls that found nothing: 1 ms when idle
// (an idle rank costs next to nothing), 20 us for kBusyWindowNs after the
// last message (a stream of small shards is bound by this latency).
inline constexpr uint64_t kBusyWindowNs = 3'000'000;
void SleepBetweenPolls(uint64_t last_message_ns);


// Sends `bytes` to rank `dest` with `tag` (MPI_Send; small messages leave
// at once).
Status SendMessage(int dest, int tag, const std::string& bytes);
// If a message is waiting (from `source`, or anyone when source < 0),
// receives it and returns true.
bool PollMessage(int source, int* from, int* tag, std::string* bytes);
// Sends event `ev` of local worker `slot` to rank 0: kTagEvent with the
// header and the partial's first piece, then kTagPiece for the rest
// (pieces of piece_bytes; tests make them small to run the multi-piece path).
Status SendEvent(uint32_t slot, const TransportEvent& ev, uint64_t piece_bytes = kMpiPieceBytes);
// kMpiPieceBytes, or the test-only FANFOLD_TEST_ONLY_MPI_PIECE_BYTES
// (a whole number 1..kMpiPieceBytes) when set.
uint64_t PieceBytesFromEnvironment();
// Decodes a kTagEvent message received from `from` into *slot and *ev,
// receiving the partial's remaining pieces from `from`.
Status ReceiveEventRest(int from, const std::string& bytes, uint32_t* slot, TransportEvent* ev);

}  // namespace fanfold
