#include "common/partial/shard_processor.h"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>

#include "common/input/chunk_source.h"
#include "common/input/presence_counter.h"
#include "common/partial/batch_aggregator.h"
#include "common/partial/record_batch.h"
#include "common/partial/table_overflow.h"
#include "common/partial/worker_group_table.h"
#include "common/port/clock.h"
#include "common/port/files/file_identity.h"
#include "common/input/record_reader.h"

namespace fanfold {
namespace {

// Counts the time spent inside the inner source (reading + decompressing).
class TimedSource final : public ByteSource, public BlockLender {
 public:
  explicit TimedSource(ByteSource* inner) : inner_(inner) {}
  Result<size_t> Read(char* dst, size_t cap) override {
    uint64_t t0 = MonotonicNanos();
    Result<size_t> r = inner_->Read(dst, cap);
    ns_ += MonotonicNanos() - t0;
    return r;
  }
  uint64_t compressed_bytes() const override { return inner_->compressed_bytes(); }
  bool starts_file() const override { return inner_->starts_file(); }
  // A lending source's blocks pass through, timed the same way (with a
  // helper thread: the time the parser waited for a block).
  BlockLender* lender() override {
    lender_ = inner_->lender();
    return lender_ != nullptr ? this : nullptr;
  }
  void SetStudy(std::shared_ptr<BlockStudy> study) override { lender_->SetStudy(std::move(study)); }
  Result<size_t> Lend(LentBlock* out) override {
    uint64_t t0 = MonotonicNanos();
    Result<size_t> r = lender_->Lend(out);
    ns_ += MonotonicNanos() - t0;
    return r;
  }
  uint64_t ns() const { return ns_; }

 private:
  ByteSource* inner_;
  BlockLender* lender_ = nullptr;
  uint64_t ns_ = 0;
};

std::string Percent(double f) {
  char buf[32];
  snprintf(buf, sizeof buf, "%.3g%%", f * 100);
  return buf;
}

}  // namespace

ShardProcessor::ShardProcessor(const Plan* plan) : plan_(plan), batch_(plan->fields.size()) {
  for (const ReductionPlan& r : plan->reductions) configs_.push_back(&r.configs);
}

ShardProcessor::~ShardProcessor() = default;

Status ShardProcessor::Process(const ShardTask& task, std::string* partial) {
  uint64_t encode_from = 0;
  Status s = ProcessShard(task, partial, &encode_from);
  // Measured after ProcessShard's locals are gone: releasing the shard's
  // tables, state and source counts as encoding, not as time outside the phases.
  if (s.ok()) SetPartialEncodeTime(MonotonicNanos() - encode_from, partial);
  return s;
}

Status ShardProcessor::ProcessShard(const ShardTask& task, std::string* partial, uint64_t* encode_from) {
  // The four phases partition the time from here to the encoded partial:
  // reading = finding and opening the file plus every read of the source
  // (decompression included; with decode ahead threaded, the time spent
  // waiting for the helper's blocks); aggregating = the batches of records
  // (BatchAggregator::Drain); parsing = the rest of the reader's loop (splitting,
  // parsing, handing records over); encoding = the checks after the last
  // record and the encoding. Each is measured, none extrapolated.
  const uint64_t t_open = MonotonicNanos();
  const std::string where = "shard " + std::to_string(task.index) + " '" + task.path + "'";
  FileIdentity id;
  if (!IdentifyFile(task.path, &id).ok()) return Status::IoError(where + ": cannot stat the file");

  Result<std::unique_ptr<ByteSource>> src = task.length == UINT64_MAX
                                                ? OpenShardSource(task.path, task.compression)
                                                : OpenChunkSource(task.path, task.offset, task.length);
  if (!src.ok()) return src.status().WithContext(where);
  if ((task.length == UINT64_MAX ? id.size : task.length) >= kAheadMinFileBytes) {
    if (ahead_ == nullptr || ahead_->threaded() != ahead_threaded) ahead_ = std::make_unique<DecodeAhead>(ahead_threaded);
    src = ahead_->Wrap(std::move(src.value()));
  }

  PartialState state(configs_);
  batch_.Clear();  // a failed shard may have left records behind
  const uint64_t table_bytes = table_bytes_override != 0 ? table_bytes_override
                               : task.table_bytes != 0   ? task.table_bytes
                                                         : kDefaultTableBytes;
  if (!agg_) agg_ = std::make_unique<BatchAggregator>(*plan_, &batch_, on_record, on_every_record, table_bytes);
  else agg_->Restart(table_bytes, on_every_record);
  BatchAggregator& agg = *agg_;
  // The tables (and any overflow's files) go when this shard is done, as
  // they would with an aggregator of its own.
  struct ReleaseAtEnd {
    BatchAggregator* agg;
    ~ReleaseAtEnd() { agg->ReleaseTables(); }
  } release_at_end{agg_.get()};
  last_groups_.resize(plan_->reductions.size(), 0);
  for (size_t r = 0; r < last_groups_.size(); ++r) agg.ReserveGroups(r, last_groups_[r]);
  PresenceCounter present(plan_->fields);  // counts each raw field's values, a batch at a time
  agg.CountPresence(&present);
  ReadStats stats;
  TimedSource timed(src->get());
  const uint64_t t0 = MonotonicNanos();
  if (!reader_) {
    Result<std::unique_ptr<RecordReader>> r = RecordReader::Create(
        plan_->format, plan_->fields,
        plan_->spec.check_unread_values ? ValueChecks::kEveryValue : ValueChecks::kReadValues);
    if (!r.ok()) return r.status().WithContext(where);
    reader_ = std::move(r.value());
  }
  Status s = reader_->Read(timed, agg, &stats);
  if (s.ok() && agg.over_limit().first < 0 && agg.spill_error().ok()) agg.Drain();
  const uint64_t t1 = MonotonicNanos();
  *encode_from = t1;
  if (!s.ok()) return s.WithContext(where);
  if (!agg.spill_error().ok()) return agg.spill_error().WithContext(where);
  // Tables that ran past their budget: their overflow becomes sorted runs.
  std::pair<int, int> over_limit = agg.over_limit();
  for (size_t r = 0; r < plan_->reductions.size() && over_limit.first < 0; ++r) {
    if (agg.overflow(r) == nullptr) continue;
    int m = -1;
    Status f = agg.FinishOverflow(r, &m);
    if (m >= 0) over_limit = {static_cast<int>(r), m};
    else if (!f.ok()) return f.WithContext(where);
  }
  if (const auto [r, m_index] = over_limit; r >= 0) {
    const ReductionPlan& red = plan_->reductions[static_cast<size_t>(r)];
    const CompiledMeasure& m = red.measures[static_cast<size_t>(m_index)];
    const std::string in = red.name.empty() ? "" : " of reduction \"" + red.name + "\"";
    return Status::LimitExceeded(where + ": measure \"" + m.name + "\"" + in + " kept more than its limit of " +
                                 std::to_string(m.config.limit) +
                                 " values in one group; raise \"limit\" or use an approximate measure");
  }
  const uint64_t total = stats.records + stats.malformed;
  if (plan_->spec.bad_record_limit && total > 0) {
    double frac = static_cast<double>(stats.malformed) / static_cast<double>(total);
    if (frac > *plan_->spec.bad_record_limit)
      return Status::Corrupt(where + ": " + std::to_string(stats.malformed) + " of " + std::to_string(total) +
                             " records malformed (" + Percent(frac) + "), above the job's bad_record_limit of " +
                             Percent(*plan_->spec.bad_record_limit));
  }

  PartialHeader& h = state.header;
  h.fingerprint = plan_->fingerprint;
  h.shard_index = task.index;
  h.file_size = id.size;
  h.mtime_ns = id.mtime_ns;
  h.offset = task.offset;
  h.length = task.length;
  h.path_hash = PathHash(task.path);
  h.records = stats.records + stats.malformed;
  h.kept = agg.kept();
  h.malformed = stats.malformed;
  h.raw_bytes = stats.raw_bytes;
  h.compressed_bytes = (*src)->compressed_bytes();
  const uint64_t in_reader = t1 - t0;
  h.read_ns = (t0 - t_open) + std::min(timed.ns(), in_reader);
  h.aggregate_ns = std::min(agg.aggregate_ns(), in_reader - std::min(timed.ns(), in_reader));
  h.parse_ns = in_reader - std::min(in_reader, timed.ns() + h.aggregate_ns);
  state.samples = std::move(stats.samples);
  state.field_present = present.counts();
  Status merged;  // the first failure to read an overflow's runs back
  // A table whose body may be compressed while it is written
  // (encode_threaded; about BodyCompressor::kMinBytes or more) needs its
  // exact length first: measured on the compressor's thread while this one
  // deals the table's keys for its sort.
  std::vector<std::unique_ptr<KeyOrderStretches>> orders;  // per reduction, when any is sized
  std::vector<size_t> sized;  // reductions whose exact length is measured
  for (size_t r = 0; r < state.reductions.size() && encode_threaded; ++r)
    if (agg.overflow(r) == nullptr && agg.table(r).EncodedBytesHint() >= BodyCompressor::kMinBytes / 2) sized.push_back(r);
  if (!sized.empty()) {
    orders.resize(state.reductions.size());
    if (!compressor_) compressor_ = std::make_unique<BodyCompressor>();
    std::vector<const WorkerGroupTable*> tables;
    for (size_t r : sized) {
      tables.push_back(&agg.table(r));
      tables.back()->Sync();  // the columns are not resized while both threads read
    }
    compressor_->Post([&tables, &sized, &state] {
      for (size_t i = 0; i < sized.size(); ++i) state.reductions[sized[i]].encode_bytes_exact = tables[i]->EncodedBytes();
    });
    for (size_t i = 0; i < sized.size(); ++i) orders[sized[i]] = tables[i]->StartOrder();
    compressor_->WaitPosted();
  }
  for (size_t r = 0; r < state.reductions.size(); ++r) {
    state.reductions[r].kept = agg.kept_by(r);
    if (TableOverflow* o = agg.overflow(r)) {
      state.reductions[r].encode_groups = [o, &merged](ByteWriter& w, const BodyProgress&) {
        if (Status e = o->Encode(w); !e.ok() && merged.ok()) merged = e;
      };
      state.reductions[r].encode_bytes_hint = o->encoded_bytes();
    } else {
      const WorkerGroupTable& table = agg.table(r);
      last_groups_[r] = table.group_count();
      state.reductions[r].encode_groups = [&table, order = orders.empty() ? nullptr : orders[r].get()](ByteWriter& w, const BodyProgress& progress) {
        table.Encode(w, progress, order);
      };
      state.reductions[r].encode_bytes_hint = table.EncodedBytesHint();
    }
  }
  state.lookup_unmatched = agg.unmatched();
  EncodePartial(state, partial, sized.empty() ? nullptr : compressor_.get());
  if (!merged.ok()) return merged.WithContext(where);
  return Status::Ok();
}

}  // namespace fanfold
