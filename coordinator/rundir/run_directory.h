// RunDirectory: the on-disk record of one run (layout: docs/run-directory.md)
//   run.json        RunManifest, written at the start (resume rewrites it when shard files changed)
//   job.json        a copy of the job file (written by `run`, read by `resume`)
//   journal.ndjson  append-only events (attempts, timings, failures), one JSON object a line
//   partials/       packs of persisted partial states: pack-000007.ffpk, one
//                   per commit batch (see kPackMagic below)
//   result.<ext>    the output table, written at the end
//   summary.json    machine-readable summary, written at the end
//   lock            flock()ed while a coordinator works here
// Durability: staged partials are appended to a temporary pack file; Commit()
// fdatasyncs it, renames it into place, fsyncs the directory, then appends
// and fdatasyncs the journal lines that say so. A shard counts as done only
// once its partial is committed; a coordinator killed at any instant leaves
// a directory `resume` can finish. One pack per batch (not one file per
// shard) keeps thousands of tiny shards cheap. Every file operation and
// the commit timer go through a Platform (default: the real OS; tests pass a
// MemoryPlatform). Owned by the coordinator thread; not thread-safe.
//
// Partials are keyed on disk by the shard's slot (RunManifest::slots), not
// its index: `refresh` re-sorts the shard list, and a reused shard keeps its
// slot. The public methods below take shard indices and map them through the
// manifest's slots (identity for run directories without slots).
//
// Pack file: a sequence of entries, each
//   u32 magic "FFPK", u32 slot, u64 partial length,
//   u64 XXH3-64 of those 16 bytes, then the encoded partial (which carries
//   its own checksum, docs/partial-state.md).
// Readers stop at the first entry whose frame does not check out; when a
// shard appears in several packs the highest-numbered pack wins.
#pragma once

#include <cstdint>
#include <map>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"
#include "common/port/files/durable_write.h"
#include "common/port/platform.h"
#include "coordinator/rundir/run_manifest.h"

namespace fanfold {

// The run directory's copy of the job file (written by `run`, read by `resume`).
inline constexpr const char* kJobCopyFile = "job.json";

class RunDirectory {
 public:
  ~RunDirectory();

  // What a path holds, for `run`'s refusal message.
  enum class State { kEmpty, kUnfinished, kFinished };
  static State Probe(const std::string& path, Platform& platform = Platform::Posix());

  // Creates the directory (and parents), locks it and writes run.json.
  // REQUIRES: Probe(path) == kEmpty, or fresh == true (then an old run there
  // is removed first).
  // REQUIRES (here and in Open): platform outlives the RunDirectory.
  static Result<std::unique_ptr<RunDirectory>> Create(const std::string& path, const RunManifest& manifest,
                                                      bool fresh, Platform& platform = Platform::Posix());
  // Opens and locks an existing run directory; reads its manifest.
  static Result<std::unique_ptr<RunDirectory>> Open(const std::string& path, RunManifest* manifest,
                                                    Platform& platform = Platform::Posix());

  const std::string& path() const { return path_; }
  // The file system the run directory lives on (the output stage writes its
  // result and sort files through it).
  Platform& platform() const { return platform_; }

  // Replaces run.json durably (temp, sync, rename, directory sync): `resume`
  // records the new identity of a shard file that changed, so it is
  // recomputed once, not on every later resume; `refresh` writes the new
  // shard list and slots. Later calls map shards through its slots.
  // REQUIRES: nothing staged (Commit() first).
  Status RewriteManifest(const RunManifest& manifest);
  // The lowest slot above every slot with a committed partial (0 if none).
  uint32_t FirstUnusedSlot() const;

  // Appends shard's partial to the batch's temporary pack (through a buffer
  // of up to kStageBufferBytes, so tiny partials cost no system call each);
  // Commit() makes it durable.
  Status StagePartial(uint32_t shard, std::string_view bytes);
  // Queues one journal line (a JSON object, no newline) for the next Commit.
  void StageJournal(std::string line);
  // True iff enough is staged (or staged long enough) to commit now.
  bool commit_due() const;
  // Makes everything staged durable, in the order described above.
  Status Commit();

  // Reads shard's committed partial (empty string iff there is none).
  Status LoadPartial(uint32_t shard, std::string* out) const;
  // The pack file holding shard's committed partial, for messages ("" iff none).
  std::string PartialFile(uint32_t shard) const;
  // Reads shard's partial staged in the open batch, else its committed one.
  Status LoadStagedOrCommitted(uint32_t shard, std::string* out) const;
  // Where shard's partial is (staged in the open batch, else committed),
  // to be read in pieces: a pack file and a byte range of it, or, while
  // it still sits in the stage buffer, a copy of its bytes. An empty path
  // and no bytes iff there is none.
  struct StoredSpan {
    std::string path;
    uint64_t offset = 0;
    uint64_t length = 0;
    std::string bytes;
  };
  Status LocateStagedOrCommitted(uint32_t shard, StoredSpan* out) const;
  // Forgets shard's committed partial (a corrupt or stale one); a later
  // commit of the shard supersedes it on disk too.
  void DiscardPartial(uint32_t shard);
  // Number of slots with a committed partial (those of shards a `refresh`
  // dropped or replaced included, until compacted away).
  size_t committed_count() const { return index_.size(); }
  // Number of the manifest's shards with a committed partial.
  size_t saved_shard_count() const;

  // What Compact() did.
  struct Compaction {
    uint32_t packs_removed = 0;     // packs deleted (those rewritten included)
    uint32_t packs_rewritten = 0;   // of those, packs whose live partials were copied first
    uint64_t partials_copied = 0;   // live partials copied into the new pack
    uint64_t bytes_freed = 0;       // pack bytes deleted minus bytes written
  };
  // Garbage-collects partials that no shard of the manifest uses (shards a
  // `refresh` dropped or replaced, and entries superseded by a later pack):
  // a pack with no live partial is deleted; a pack whose live partials fill
  // less than half of it has them copied into one new pack, committed
  // (fdatasync, rename, directory sync) before the old packs are deleted;
  // other packs stay as they are, so a month is not rewritten for an hour.
  // Crash-safe: until the deletes, every live partial is in an old pack or
  // in the newer copy (the highest pack wins, and both hold the same bytes).
  // REQUIRES: nothing staged (Commit() first).
  Result<Compaction> Compact();

  // Atomically writes a file at the top of the run directory.
  Status WriteFile(const std::string& name, std::string_view data) const;
  // Removes a file at the top of the run directory (missing is fine) and
  // syncs the directory, so the removal survives a crash: `refresh` removes
  // summary.json first, and a refresh cut short leaves an unfinished run.
  Status RemoveFile(const std::string& name) const;

 private:
  RunDirectory(Platform& platform, std::string path, std::unique_ptr<FileLock> lock);
  static Result<std::unique_ptr<FileLock>> Lock(Platform& platform, const std::string& path);
  // Appends one entry (frame + partial) for slot to the batch's pack.
  Status StageEntry(uint32_t slot, std::string_view bytes);
  // The sequence numbers of the committed packs (pack-N.ffpk), ascending.
  std::vector<uint64_t> CommittedPacks() const;
  static constexpr size_t kFrameBytes = 24;  // magic, slot, length, hash
  // Reads every committed pack into index_.
  void IndexPacks();
  std::string PackPath(uint64_t seq) const;
  Status ReadRange(const std::string& path, uint64_t offset, uint64_t length, std::string* out) const;

  struct Location {
    uint64_t pack = 0;    // pack sequence number
    uint64_t offset = 0;  // of the partial's first byte
    uint64_t length = 0;
  };
  Platform& platform_;
  std::string path_;
  std::unique_ptr<FileLock> lock_;
  // Takes the manifest's slots (shard index -> slot).
  void UseSlots(const RunManifest& manifest) { slots_ = manifest.AllSlots(); }
  uint32_t SlotOf(uint32_t shard) const { return shard < slots_.size() ? slots_[shard] : shard; }
  std::vector<uint32_t> slots_;         // by shard index
  std::map<uint32_t, Location> index_;  // committed partials by slot
  uint64_t next_pack_ = 1;
  static constexpr size_t kStageBufferBytes = size_t{1} << 20;
  // Writes the stage buffer to the temporary pack; on failure drops the
  // whole batch (those shards are simply not done).
  Status FlushStaged();
  // True iff the journal is missing, empty, unreadable or ends in a newline.
  bool JournalEndsLine(const std::string& journal) const;
  // Drops the batch: closes and removes the temporary pack.
  void DropBatch();

  std::unique_ptr<StagedFile> pack_;    // the batch's temporary pack, or null
  uint64_t pack_size_ = 0;              // bytes staged in it, buffered ones included
  std::string stage_buffer_;            // its last bytes, not yet written
  std::vector<std::pair<uint32_t, Location>> staged_;  // by slot
  std::vector<std::string> journal_lines_;
  // Until this process's first journal append: whether the journal may end
  // in a torn line (a crash mid-append) that the next line must not join,
  // and whether the run directory must be synced so the journal's name
  // survives a power loss.
  bool journal_checked_ = false;
  uint64_t first_staged_ns_ = 0;        // platform_.MonotonicNanos() at the batch's first item
};

}  // namespace fanfold
