// RowSorter: orders the output stage's rows by their sort keys
// (coordinator/output/sort_key.h) within a memory budget. Rows collect in
// memory; when the next would pass the budget, the collected ones are
// sorted and written as one sorted file, and at the end the files are
// merged k-way (at most kFanIn at a time: past that, the oldest kFanIn are
// first merged into one). A result that fits is sorted in memory and never
// touches the disk. Keys are distinct (they end in the row's arrival
// number), so the order is the same whatever the budget.
//
// Sort files: `<dir>/sort-<pid>-<n>.rows`, written and read only by this
// process while it writes its result, so neither synced nor versioned;
// removed when merged and by the destructor (every exit path but SIGKILL;
// RemoveStaleSortFiles clears those at the next start). Layout: the magic
// "FFROWS1\n", then per row in key order: varint key length, varint row
// length, the key, the row's bytes (row_codec.h). Not thread-safe.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"
#include "common/port/platform.h"

namespace fanfold {

// Removes every sort file (sort-*.rows) in dir, left by a process that was
// killed. REQUIRES: no live process sorts there (the run directory's lock).
Status RemoveStaleSortFiles(Platform& platform, const std::string& dir);

class RowSorter {
 public:
  static constexpr size_t kFanIn = 64;

  // REQUIRES: platform outlives the sorter; fan_in >= 2. dir: where sort
  // files go (created when first needed); budget: bytes of rows (keys
  // included) held in memory (a file holds one row at least, so a budget
  // below a row is slow but works); fan_in: files merged at once.
  RowSorter(Platform& platform, std::string dir, uint64_t budget, size_t fan_in = kFanIn);
  ~RowSorter();
  RowSorter(const RowSorter&) = delete;
  RowSorter& operator=(const RowSorter&) = delete;

  // Adds a row. REQUIRES: key distinct from every other row's; before Finish.
  Status Add(std::string_view key, std::string_view row);
  // Ends the adding: sorts what is in memory (or spills it and merges the
  // files down to at most kFanIn). REQUIRES: called once.
  Status Finish();

  // Calls visit(row) for every row in key order until it returns an error
  // or sets *stop. REQUIRES: Finish() succeeded. May be called again: each
  // call reads the rows anew.
  using Visitor = std::function<Status(std::string_view row, bool* stop)>;
  Status Replay(const Visitor& visit) const;

  uint64_t rows() const { return rows_; }
  // Sort files written so far (merged ones included).
  uint64_t files_written() const { return files_written_; }

 private:
  struct Entry {
    uint64_t offset;  // in arena_: the key, then the row
    uint32_t key_len;
    uint32_t row_len;
  };
  class FileReader;
  Status Spill();  // sorts and writes the rows in memory as one file
  using KeyedVisitor = std::function<Status(std::string_view key, std::string_view row, bool* stop)>;
  // Merges files k-way by key, calling visit per row until *stop or an error.
  Status Walk(const std::vector<std::string>& files, const KeyedVisitor& visit) const;
  Status MergeInto(const std::vector<std::string>& inputs, const std::string& out) const;
  std::string NewPath();
  void SortEntries();
  std::string_view KeyOf(const Entry& e) const { return {arena_.data() + e.offset, e.key_len}; }

  Platform& platform_;
  std::string dir_;
  uint64_t budget_;
  size_t fan_in_;
  std::string arena_;
  std::vector<Entry> entries_;
  std::vector<std::string> files_;  // live sort files, oldest first
  uint64_t rows_ = 0;
  uint64_t files_written_ = 0;
  bool dir_made_ = false;
  bool finished_ = false;
};

}  // namespace fanfold
