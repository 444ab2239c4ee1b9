// StoredRun: one reduction's run (docs/streaming-merge.md) where it is
// kept — in memory (a table's encoding, or the pieces a fold wrote, one per
// key range) or in spill files of the run directory's merge/ folder, mapped
// read-only while the run is walked (RunCursor hands the walked pages
// back). A spilled run removes its files when destroyed. Owned by
// RunResults; not thread-safe, but pieces() may be walked from several
// threads at once.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/port/files/mapped_file.h"
#include "coordinator/merge/run_cursor.h"
#include "coordinator/merge/spill_folder.h"

namespace fanfold {

class StoredRun {
 public:
  // A whole GroupTable encoding (count, then the groups).
  static std::unique_ptr<StoredRun> FromEncoding(std::string encoding);
  // Pieces in memory: bodies[i] holds groups[i] groups.
  static std::unique_ptr<StoredRun> InMemory(std::vector<std::string> bodies, std::vector<uint64_t> groups);
  // Pieces in the folder's files names[i], holding groups[i] groups, mapped
  // now. The run owns the files from here on, even when this fails.
  static Result<std::unique_ptr<StoredRun>> Spilled(SpillFolder* folder, std::vector<std::string> names,
                                                    std::vector<uint64_t> groups);
  ~StoredRun();
  StoredRun(const StoredRun&) = delete;
  StoredRun& operator=(const StoredRun&) = delete;

  // The pieces, in key order; valid while the run lives.
  std::vector<RunPiece> pieces() const;
  uint64_t groups() const { return groups_total_; }
  uint64_t bytes() const { return bytes_; }
  bool spilled() const { return folder_ != nullptr; }

 private:
  StoredRun() = default;
  std::vector<std::string> bodies_;  // in memory
  size_t skip_ = 0;                  // bytes before bodies_[0]'s first group (an encoding's count)
  std::vector<uint64_t> groups_;     // per piece
  uint64_t groups_total_ = 0;
  uint64_t bytes_ = 0;
  SpillFolder* folder_ = nullptr;    // spilled: its files' folder
  std::vector<std::string> names_;
  std::vector<std::unique_ptr<MappedFile>> maps_;
};

}  // namespace fanfold
