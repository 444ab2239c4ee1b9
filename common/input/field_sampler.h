// FieldSampler: reads the first records of a job's shards (a bounded sample,
// before any work) to learn which raw fields the data has: each shard's
// header row (CSV/TSV), or the JSON Pointers of the members present in the
// first records (NDJSON, nested objects included) and how many of those
// records have each of the plan's raw fields. `check` and `run` compare the
// plan with it to catch misspelt fields. Bounded in records, bytes, names and
// time, so a huge or slow first shard cannot make it slow. Holds the table by
// reference (it must outlive the sampler); one per check; not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <unordered_set>
#include <vector>

#include "common/base/status.h"
#include "common/input/byte_source.h"
#include "common/input/field_table.h"
#include "common/input/record_format.h"

namespace fanfold {

// How much a sample may read. Defaults: what a check can afford before every
// run without anyone noticing.
struct SampleLimits {
  uint64_t max_records = 1000;             // NDJSON records, over all shards
  uint64_t max_bytes = uint64_t{8} << 20;  // decompressed bytes read, over all shards
  uint32_t max_shards = 64;                // shards read
  uint64_t max_nanos = 1'000'000'000;      // wall time from the first shard (monotonic clock)
  size_t max_names = 4096;                 // NDJSON pointers kept as names seen
};

class FieldSampler {
 public:
  FieldSampler(RecordFormat format, const FieldTable& fields, const SampleLimits& limits = {});
  ~FieldSampler();
  FieldSampler(const FieldSampler&) = delete;
  FieldSampler& operator=(const FieldSampler&) = delete;

  // True iff the limits leave room to read another shard.
  bool wants_more() const;

  // Reads the next shard's decompressed bytes: its header row only
  // (CSV/TSV; then header() is that row), or its records until the end or a
  // limit (NDJSON; malformed lines and blank lines are skipped). Returns the
  // source's error; what was read before it stays in the sample.
  Status AddShard(ByteSource& src);

  // Shards given to AddShard.
  uint32_t shards() const { return shards_; }
  // NDJSON: well-formed records sampled, over all shards.
  uint64_t records() const { return records_; }
  // NDJSON: true iff every shard given was read to its end (no limit cut
  // one short), so the sample is all the records of those shards.
  bool read_whole() const { return read_whole_; }
  // The names seen, first seen first: NDJSON, the JSON Pointer of every
  // member of a sampled record (into objects, and into the first elements
  // of arrays), at most max_names; CSV/TSV, every header's columns.
  const std::vector<std::string>& names() const { return names_; }
  // CSV/TSV: the header row of the last shard read.
  const std::vector<std::string>& header() const { return header_; }
  // Per raw field of the table (FieldTable order, derived fields skipped):
  // NDJSON, the sampled records in which it had a value (null included);
  // CSV/TSV, the shards whose header has it.
  const std::vector<uint64_t>& present() const { return present_; }
  // The raw fields' names, parallel to present().
  const std::vector<std::string>& raw_names() const { return raw_names_; }

 private:
  struct Json;  // keeps simdjson.h out of this header
  Status AddHeader(ByteSource& src);
  Status AddRecords(ByteSource& src);
  void OnLine(const char* p, size_t len);
  void AddName(const std::string& name);
  bool OutOfTime() const;
  bool BudgetLeft() const;  // bytes, time and (NDJSON) records left

  RecordFormat format_;
  SampleLimits limits_;
  std::vector<std::string> raw_names_;
  // NDJSON: each raw field's reference tokens (none iff not a valid pointer).
  std::vector<std::optional<std::vector<std::string>>> tokens_;
  std::vector<uint64_t> present_;
  std::vector<std::string> names_;
  std::unordered_set<std::string> name_set_;
  std::vector<std::string> header_;
  std::unique_ptr<Json> json_;
  uint64_t start_ns_ = 0;  // when the first shard was started
  uint64_t bytes_ = 0;
  uint64_t records_ = 0;
  uint32_t shards_ = 0;
  bool read_whole_ = true;
};

}  // namespace fanfold
