// RunDirectory::Compact: the garbage collection of partials no shard uses
// (its contract is in run_directory.h).
#include <algorithm>
#include <filesystem>
#include <map>

#include "coordinator/rundir/run_directory.h"

namespace fs = std::filesystem;

namespace fanfold {

Result<RunDirectory::Compaction> RunDirectory::Compact() {
  if (pack_ || !staged_.empty() || !journal_lines_.empty())
    return Status::Internal("run directory compacted with a batch open");
  const std::string partials = (fs::path(path_) / "partials").string();
  // Every committed pack, with its size and the live partials it holds.
  struct PackUse {
    uint64_t file_bytes = 0;
    uint64_t live_bytes = 0;
    std::vector<uint32_t> live;  // slots whose winning entry is here
  };
  std::map<uint64_t, PackUse> packs;
  for (uint64_t seq : CommittedPacks()) {
    std::unique_ptr<ReadableFile> file;
    uint64_t size = 0;
    if (platform_.OpenForRead(PackPath(seq), &file).ok() && file->Size(&size).ok()) packs[seq].file_bytes = size;
  }
  std::vector<uint32_t> live_slots = slots_;
  std::sort(live_slots.begin(), live_slots.end());
  for (uint32_t slot : live_slots) {
    auto it = index_.find(slot);
    if (it == index_.end() || !packs.count(it->second.pack)) continue;
    PackUse& u = packs[it->second.pack];
    u.live.push_back(slot);
    u.live_bytes += kFrameBytes + it->second.length;
  }
  Compaction c;
  std::vector<uint64_t> doomed;
  std::vector<uint32_t> copy;
  uint64_t freed = 0;
  for (const auto& [seq, u] : packs) {
    if (!u.live.empty() && u.live_bytes * 2 >= u.file_bytes) continue;  // mostly live: kept as it is
    doomed.push_back(seq);
    freed += u.file_bytes;
    if (!u.live.empty()) ++c.packs_rewritten;
    copy.insert(copy.end(), u.live.begin(), u.live.end());
  }
  if (doomed.empty()) return c;
  // First the copies, durably: a crash from here on leaves them beside the
  // originals, and the newer pack wins.
  std::sort(copy.begin(), copy.end());
  for (uint32_t slot : copy) {
    const Location loc = index_.at(slot);
    std::string bytes;
    FF_RETURN_IF_ERROR(ReadRange(PackPath(loc.pack), loc.offset, loc.length, &bytes));
    Status s = StageEntry(slot, bytes);
    if (!s.ok()) {
      DropBatch();
      return s;
    }
  }
  const uint64_t written = pack_size_;
  FF_RETURN_IF_ERROR(Commit());
  c.partials_copied = copy.size();
  // Then the old packs. What a crash leaves undeleted is deleted next time.
  for (uint64_t seq : doomed) {
    OsError e = platform_.Remove(PackPath(seq));
    if (!e.ok()) return e.ToStatus("remove", PackPath(seq));
    ++c.packs_removed;
  }
  for (auto it = index_.begin(); it != index_.end();)
    it = std::find(doomed.begin(), doomed.end(), it->second.pack) != doomed.end() ? index_.erase(it) : std::next(it);
  OsError e = platform_.SyncDirectory(partials);
  if (!e.ok()) return e.ToStatus("fsync", partials);
  c.bytes_freed = freed > written ? freed - written : 0;
  return c;
}

}  // namespace fanfold
