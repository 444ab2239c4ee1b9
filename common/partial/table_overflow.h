// TableOverflow: how a worker finishes a reduction whose group table
// (WorkerGroupTable) ran past its budget, in bounded memory and with the
// partial's bytes identical to an unbounded table's (docs/worker-table-budget.md).
//
// Once the table is full it keeps its groups and their records; every record
// of a key it does not hold is written here, in record order, as the key's
// bytes plus each measure's arguments (or "not this measure's input"), to a
// nameless temporary file (common/port/files/unlinked_temp_file.h). Finish then
//   1. writes the full table as a key-sorted run file and frees it;
//   2. hash-partitions the overflow records by key into P files (P from the
//      bytes per group the table showed), keeping record order in each;
//   3. aggregates each partition alone, in record order, into a table with
//      the same budget; a partition still too big leaves its new keys'
//      records to a further pass (so any budget that holds one group
//      finishes), and each pass writes a key-sorted run.
// Every key lives in exactly one run and each of its states was built from
// all its records in their order, so Encode only interleaves the runs by key
// (a k-way merge, no folding): the same bytes as WorkerGroupTable::Encode of
// one table holding everything. Floating-point states never meet twice.
//
// Memory: one table's budget, plus an I/O buffer per open file; the encoded
// partial itself is the caller's. Files vanish on every exit path. Not
// thread-safe; one per reduction.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/byte_io.h"
#include "common/base/status.h"
#include "common/base/value.h"
#include "common/measures/measure.h"
#include "common/partial/worker_group_table.h"
#include "common/port/files/unlinked_temp_file.h"

namespace fanfold {

class TableOverflow {
 public:
  // strides[m]: how many arguments measure m takes per record. configs must
  // outlive this. budget_bytes: each pass's table budget (> 0).
  TableOverflow(const std::vector<MeasureConfig>* configs, std::vector<size_t> strides, size_t budget_bytes);
  ~TableOverflow();
  TableOverflow(const TableOverflow&) = delete;
  TableOverflow& operator=(const TableOverflow&) = delete;

  // One record of a key the table does not hold: BeginRecord, then for each
  // measure in order either AddArgs (its stride of arguments) or SkipMeasure,
  // then EndRecord, which fails only if the temporary file cannot be made.
  void BeginRecord(std::string_view key);
  void AddArgs(const Value* args);
  void SkipMeasure();
  Status EndRecord();

  uint64_t records() const { return records_; }

  // After the shard's last record: turns `table` (full) and the overflow
  // into runs, as above. On a measure past its limit, returns
  // LimitExceeded and sets *over_limit_measure to its index.
  Status Finish(std::unique_ptr<WorkerGroupTable> table, int* over_limit_measure);

  // The groups of every run, merged by key: GroupTable::Encode's layout
  // (count, then groups in strictly ascending key order). After Finish.
  Status Encode(ByteWriter& w);

  size_t run_count() const { return runs_.size(); }
  // A pass that leaves more than this many records behind (and more than
  // four tables' worth) has them partitioned again; tests lower it.
  void set_split_again_records(uint64_t n) { split_again_records_ = n; }
  // Bytes of the groups in the runs (Encode writes these and the count).
  uint64_t encoded_bytes() const { return run_bytes_; }
  uint64_t group_count() const { return groups_; }

 private:
  struct Run;
  Status WriteRun(const WorkerGroupTable& table);
  Status MergeRuns(const std::function<void(std::string_view)>& emit);
  Status CompactRuns();
  Status Partition(std::unique_ptr<UnlinkedTempFile> in, uint64_t records, int depth, int* over_limit_measure);
  Status AggregateAll(std::unique_ptr<UnlinkedTempFile> in, int depth, int* over_limit_measure);
  Status AggregatePass(UnlinkedTempFile& in, std::unique_ptr<UnlinkedTempFile>* rest, uint64_t* rest_records,
                       int* over_limit_measure);

  const std::vector<MeasureConfig>* configs_;
  std::vector<size_t> strides_;
  size_t budget_;
  size_t bytes_per_group_ = 64;  // measured on the first full table
  std::string record_;           // the record being written
  size_t measure_at_ = 0;        // its next measure
  std::unique_ptr<UnlinkedTempFile> spill_;
  uint64_t records_ = 0;
  std::vector<std::unique_ptr<Run>> runs_;
  uint64_t groups_ = 0;
  uint64_t run_bytes_ = 0;
  uint64_t split_again_records_ = uint64_t{1} << 16;
};

}  // namespace fanfold
