// BatchAggregator: the record sink of a shard's read — it applies the plan to
// each record (lookups, the job's derived fields and filter once, then every
// reduction's own derived fields, filter, group and measures), a batch of
// records at a time, into one WorkerGroupTable per reduction; a table past its
// budget sends the records of new keys to a TableOverflow
// (common/partial/table_overflow.h). The Plan, the RecordBatch and the hook
// are the caller's and must remain live while this is; the tables and
// overflows are owned here until the caller encodes them. Not thread-safe;
// one shard at a time: ShardProcessor keeps one across shards (Restart, then
// ReleaseTables once the shard's partial is encoded), so the batch buffers
// (thousands of Values) are made once per worker, not once per tiny shard,
// and the group tables' memory once, not once per shard of many groups.
#pragma once

#include <array>
#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/base/status.h"
#include "common/base/value.h"
#include "common/input/presence_counter.h"
#include "common/input/record_reader.h"
#include "common/job/plan.h"
#include "common/partial/record_batch.h"
#include "common/partial/table_overflow.h"
#include "common/partial/worker_group_table.h"

namespace fanfold {

// Records of the current batch fed to a reduction's table, in record order:
// each one's record index and group. When the batch ends every measure
// takes them (or those its `only` test keeps) in one call to its column,
// reading the arguments where they are (MeasureColumn::AddRows). Sized for
// a whole batch, so that queueing never allocates or checks for room.
struct MeasureInputs {
  size_t n = 0;
  std::unique_ptr<uint32_t[]> rows;
  std::unique_ptr<uint32_t[]> groups;
};

// One reduction's view of the plan for the aggregator: its group table and
// where its keys and measure arguments can be read without evaluating.
struct ReductionFeed {
  const ReductionPlan* plan = nullptr;
  std::unique_ptr<WorkerGroupTable> table;
  uint64_t kept = 0;
  std::vector<int> group_direct;               // Expr::DirectSlot of each key
  std::vector<std::array<int, 2>> arg_direct;  // ... of each measure argument
  // The fields a measure reads as a number, each once: their text is read
  // once in the batch (Value::ReadTextNumber), so every measure and
  // reduction reading that field shares one parse.
  std::vector<int> numeric_slots;
  MeasureInputs fed;       // the batch's records in the table
  MeasureInputs only_fed;  // those of one measure with `only`, while flushing
  // The records of keys the full table does not hold (made when needed).
  std::unique_ptr<TableOverflow> overflow;
  std::vector<Value> spill_args;  // one measure's arguments, while spilling
  // The current batch, by record index (RecordBatch::kCapacity each): the
  // records this reduction keeps, its evaluated keys (those not read from a
  // field), each measure's `only` test and evaluated arguments.
  std::vector<uint32_t> sel;
  std::vector<Value> key_values;
  std::vector<Value> only_values;
  std::vector<std::vector<Value>> arg_values;  // per measure: kCapacity x stride
};

// Receives records from the reader and applies the plan to them: the job's
// derived fields and filter once per record, then every reduction.
class BatchAggregator final : public RecordSink {
 public:
  // REQUIRES: batch is empty, has the plan's width and outlives this. Makes
  // one WorkerGroupTable per reduction of the plan, each with an equal share
  // of table_bytes (0 = no limit).
  BatchAggregator(const Plan& plan, RecordBatch* batch, const std::function<void(uint64_t)>& hook, bool every,
                  uint64_t table_bytes);

  // Starts the next shard as a new aggregator would: empty tables (each with
  // an equal share of table_bytes), no overflow, every count zero; keeps the
  // batch buffers, and the last shard's tables' memory unless the share is
  // smaller than it was (WorkerGroupTable::Clear: a cleared table counts
  // and fills as a new one). REQUIRES: the batch is empty.
  void Restart(uint64_t table_bytes, bool every);
  // Drops the overflows (their memory and spill files), the tables'
  // groups and the presence counter once the shard's partial is encoded;
  // the tables keep their memory for the next shard.
  void ReleaseTables();

  // Records wait in a batch and are aggregated a batch at a time, so the
  // aggregation is timed with two clock reads per batch, not per record.
  bool OnRecord(Value* slots) override;
  // The batch's next row: a reader builds the record there, no copy.
  Value* RecordBuffer() override { return batch_.NextRow(); }
  // During a reader's loan (common/input/record_reader.h) the batch keeps
  // views of the strings; the records are aggregated before the loan ends.
  void LendStrings() override { batch_.set_copy_strings(false); }
  bool EndLoan() override {
    const bool go_on = batch_.size() == 0 || Drain();
    batch_.set_copy_strings(true);
    return go_on;
  }
  // Counts the raw fields' values of every record drained from now on, a
  // batch at a time, into `counter` (null: none). Restart forgets it.
  // REQUIRES: counter built from the plan's fields, live while set.
  void CountPresence(PresenceCounter* counter) { presence_ = counter; }
  // Set when an overflow file could not be made (the shard fails).
  const Status& spill_error() const { return spill_error_; }

  // Aggregates the waiting records: the lookups record by record, then each
  // derived field and filter as one batch evaluation over the records still
  // selected (Expr::EvalBatch), then every reduction (FeedBatch), then every
  // measure's inputs of the batch in one call to its column. Returns false
  // iff a measure ran past its limit (the shard fails; when two measures do
  // so in one batch, the first in job order is named).
  bool Drain();

  // The tables, once every record is drained.
  const WorkerGroupTable& table(size_t r) const { return *feeds_[r].table; }
  // Presizes reduction r's table for about `groups` groups (see
  // WorkerGroupTable::Reserve). Call before the first record.
  void ReserveGroups(size_t r, size_t groups) { feeds_[r].table->Reserve(groups); }
  // Reduction r's overflow, or null when its table held every key; Finish
  // hands it the table.
  TableOverflow* overflow(size_t r) { return feeds_[r].overflow.get(); }
  Status FinishOverflow(size_t r, int* over_limit_measure);

  uint64_t aggregate_ns() const { return aggregate_ns_; }
  uint64_t kept() const { return kept_; }
  uint64_t kept_by(size_t r) const { return feeds_[r].kept; }
  // The reduction and measure that ran past its limit, or {-1, -1}.
  std::pair<int, int> over_limit() const { return over_limit_; }
  // Per lookup table: the records whose match value found no row.
  const std::vector<uint64_t>& unmatched() const { return unmatched_; }

 private:
  Value* rows() { return batch_.record(0); }

  // Derived field i of the selected records, written into their slots.
  void Derive(size_t i, const std::vector<uint32_t>& sel);
  // Keeps the selected records for which `keep` is true, in order.
  void Filter(const Expr& keep, std::vector<uint32_t>* sel);
  // Expression e of the selected records into column[r * stride], or nothing
  // when e is a plain field (direct >= 0: read from the record itself).
  void EvalColumn(const Expr& e, int direct, const std::vector<uint32_t>& sel, Value* column, size_t stride);
  // One reduction over the records the job kept (see the definition).
  void FeedBatch(ReductionFeed& f);
  // The value of record r's key g, of measure m's argument a, and whether
  // record r is measure m's input.
  const Value& KeyValue(const ReductionFeed& f, size_t g, uint32_t r);
  const Value& ArgValue(const ReductionFeed& f, size_t m, size_t a, uint32_t r);
  bool MeasureTakes(const ReductionFeed& f, size_t m, uint32_t r) const;
  // Finds the group of each selected record in one reduction (in record
  // order) and queues its measures' inputs.
  void Feed(ReductionFeed& f, const std::vector<uint32_t>& sel);
  // Writes a record of a key the full table does not hold to the reduction's
  // overflow: the key and each measure's arguments, evaluated as Feed does.
  void Spill(ReductionFeed& f, uint32_t r);
  // Feeds every measure its queued inputs. Returns false iff one ran past
  // its limit.
  bool Flush();

  const Plan& plan_;
  const std::function<void(uint64_t)>& hook_;
  uint64_t hook_mask_;  // the hook runs when (records & mask) == 0
  ScratchArena arena_;  // the batch's evaluated strings
  Expr::BatchScratch scratch_;
  const size_t width_ = plan_.fields.size();  // slots per record of the batch
  std::vector<uint32_t> sel_;                 // the records the job's filter keeps
  std::unique_ptr<Value[]> truth_;            // a filter's value per record
  std::string key_;            // room for a batch's group keys, end to end (see Feed)
  std::unique_ptr<uint32_t[]> key_end_;   // per selected record: where its key ends in key_
  std::unique_ptr<uint64_t[]> key_hash_;  // ... and its key's hash
  std::string_view key_view_;  // the record's key, in key_
  std::string lookup_key_;
  std::vector<uint64_t> unmatched_;
  uint64_t seen_ = 0;
  uint64_t kept_ = 0;
  std::pair<int, int> over_limit_ = {-1, -1};
  RecordBatch& batch_;
  PresenceCounter* presence_ = nullptr;
  uint64_t aggregate_ns_ = 0;  // inside Drain
  std::vector<ReductionFeed> feeds_;
  size_t budget_ = 0;  // each table's, 0 = none
  Status spill_error_;
};

}  // namespace fanfold
