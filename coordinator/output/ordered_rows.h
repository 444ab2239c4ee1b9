// OrderedRows: the output stage's ordering of a reduction's result rows —
// SortRows' order (emit.order, then the key columns, ties in arrival order;
// coordinator/output/sort_key.h) and emit.limit — for rows handed over one
// at a time, in bounded memory:
// - with a limit, a heap of the `limit` first rows so far (a row after them
//   all is dropped at once); should those rows outgrow the budget, they go
//   to a RowSorter and the rest follow them there;
// - without one, a RowSorter (sorted in memory, or spilled as sorted files
//   in spill_dir and merged).
// Either way the rows come out as SortRows then the limit would leave them,
// and can be read more than once (the aligned table reads them twice).
// Not thread-safe.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "common/base/cell.h"
#include "common/base/status.h"
#include "common/port/platform.h"
#include "coordinator/output/row_sorter.h"
#include "coordinator/output/sort_key.h"

namespace fanfold {

class OrderedRows {
 public:
  // REQUIRES: platform outlives this. budget: bytes of rows held in memory
  // (the output stage's share of the memory budget).
  OrderedRows(std::vector<SortColumn> order, std::optional<uint64_t> limit, uint64_t budget, Platform& platform,
              std::string spill_dir, size_t fan_in = RowSorter::kFanIn);

  // Takes one row (the next in arrival order). REQUIRES: before Finish.
  Status Add(const std::vector<Cell>& row);
  Status Finish();  // REQUIRES: called once, after the last Add

  // Calls visit for every kept row in order (at most limit). REQUIRES:
  // Finish() succeeded; may be called again.
  using Visitor = std::function<Status(const std::vector<Cell>& row)>;
  Status Replay(const Visitor& visit) const;

  // Rows held in the heap or the sorter (not yet dropped by the limit).
  uint64_t rows_added() const { return arrival_; }
  // Sort files the sorter wrote (0 iff the rows were ordered in memory).
  uint64_t sort_files() const { return sorter_ ? sorter_->files_written() : 0; }

 private:
  struct Held {
    std::string key;
    std::string row;  // row_codec.h
  };
  static bool KeyLess(const Held& a, const Held& b) { return a.key < b.key; }
  Status ToSorter();  // moves the heap's rows to a new sorter

  std::vector<SortColumn> order_;
  std::optional<uint64_t> limit_;
  uint64_t budget_;
  Platform& platform_;
  std::string spill_dir_;
  size_t fan_in_;
  uint64_t arrival_ = 0;
  std::vector<Held> heap_;  // max-heap by key while heap_mode_
  uint64_t heap_bytes_ = 0;
  bool heap_mode_;
  std::unique_ptr<RowSorter> sorter_;
  std::string key_, row_;  // scratch
};

}  // namespace fanfold
