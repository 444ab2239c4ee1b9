// ShardProcessor: the whole of a worker's job for one shard — open and
// decompress it, read records once, derive fields, filter, and for every
// reduction filter again, group and feed the measures — producing the
// shard's encoded partial state. Holds the
// per-worker buffers (arena, key scratch) so they are reused across shards.
// Each reduction's group table keeps to the task's budget (table_bytes): past
// it, the records of new keys go through a TableOverflow
// (common/partial/table_overflow.h) and the partial's bytes are the same.
// One instance per worker thread/process; the Plan must outlive it.
#pragma once

#include <cstdint>
#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "common/partial/partial_codec.h"
#include "common/partial/record_batch.h"
#include "common/job/plan.h"
#include "common/input/decode_ahead.h"
#include "common/input/record_reader.h"
#include "common/job/shard_task.h"
#include "common/base/status.h"

namespace fanfold {

class BatchAggregator;

class ShardProcessor {
 public:
  explicit ShardProcessor(const Plan* plan);
  ~ShardProcessor();

  // Processes task and writes its encoded partial state to *partial, whose
  // header holds the time spent reading, parsing, aggregating and encoding,
  // each measured (with a clock read per block read and per batch of
  // records) and together the whole of this call.
  // Fails (naming the shard's path) on an unreadable, truncated or corrupt
  // shard, a bounded measure past its limit, or a malformed fraction above
  // the job's bad_record_limit.
  Status Process(const ShardTask& task, std::string* partial);

  // Called with the running record count every 4096 records (progress), or
  // after every record when on_every_record is set (test-only fault
  // injection, which needs exact counts).
  std::function<void(uint64_t records)> on_record;
  bool on_every_record = false;

  // The group tables' budget when the task gives none (task.table_bytes 0).
  static constexpr uint64_t kDefaultTableBytes = uint64_t{1} << 30;
  // Test-only: when nonzero, the budget whatever the task says.
  uint64_t table_bytes_override = 0;

  // Shards of at least kAheadMinFileBytes are read through a DecodeAhead
  // (common/input/decode_ahead.h): its blocks filled by a helper thread iff
  // ahead_threaded, else inline. Set before the first Process.
  bool ahead_threaded = false;
  // A many-group partial's body is compressed on a helper thread while it
  // is written (common/partial/body_compressor.h; the same bytes) iff
  // encode_threaded: set, as decode ahead's "auto", when the workers on the
  // machine are fewer than its hardware threads. The helper idles while
  // records are read.
  bool encode_threaded = false;

 private:
  // Process less the encoding time's stamp: sets *encode_from to when the
  // last record was aggregated (the encoding phase's start).
  Status ProcessShard(const ShardTask& task, std::string* partial, uint64_t* encode_from);

  const Plan* plan_;
  std::vector<const std::vector<MeasureConfig>*> configs_;  // per reduction, the plan's
  std::unique_ptr<DecodeAhead> ahead_;    // made on the first large shard
  std::unique_ptr<RecordReader> reader_;  // made on first use, kept across shards
  RecordBatch batch_;                      // records waiting to be aggregated
  // Per reduction, the groups of the last shard's table: the next shard's
  // table is presized to it (shards of one job tend to be alike).
  std::vector<size_t> last_groups_;
  std::unique_ptr<BatchAggregator> agg_;   // made on the first shard, restarted for each
  std::unique_ptr<BodyCompressor> compressor_;  // made on first use when encode_threaded
};

}  // namespace fanfold
