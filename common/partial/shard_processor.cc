#include "common/partial/shard_processor.h"

#include <algorithm>
#include <array>
#include <chrono>
#include <cmath>
#include <cstdio>

#include "common/input/chunk_source.h"
#include "common/input/presence_counter.h"
#include "common/partial/group_key.h"
#include "common/partial/record_batch.h"
#include "common/partial/table_overflow.h"
#include "common/partial/worker_group_table.h"
#include "common/port/clock.h"
#include "common/port/files/file_identity.h"
#include "common/input/record_reader.h"
#include "common/base/scratch_arena.h"

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

// One measure's inputs of the current batch, in record order: the group of
// each and its arguments (`stride` of them each), fed to the measure's
// column in one call when the batch ends. Sized for a whole batch, so that
// queueing never allocates or checks for room.
struct MeasureInputs {
  size_t stride = 0;
  size_t n = 0;
  std::unique_ptr<uint32_t[]> groups;
  std::unique_ptr<Value[]> args;
};

// One reduction's view of the plan for the aggregator: its group table and
// where its keys and measure arguments can be read without evaluating.
struct ReductionFeed {
  const ReductionPlan* plan = nullptr;
  std::unique_ptr<WorkerGroupTable> table;
  uint64_t kept = 0;
  std::vector<int> group_direct;              // Expr::DirectSlot of each key
  std::vector<std::array<int, 2>> arg_direct;  // ... of each measure argument
  // Per measure, bit a: argument a is a field the measure reads as a
  // number; its text is read once in the batch (Value::ReadTextNumber), so
  // every measure and reduction reading that field shares one parse.
  std::vector<uint8_t> arg_numeric;
  std::vector<MeasureInputs> inputs;          // per measure
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
class Aggregator final : public RecordSink {
 public:
  // REQUIRES: batch is empty, has the plan's width and outlives this. Makes
  // one WorkerGroupTable per reduction of the plan, each with an equal share
  // of table_bytes (0 = no limit).
  Aggregator(const Plan& plan, RecordBatch* batch, const std::function<void(uint64_t)>& hook, bool every,
             uint64_t table_bytes)
      : plan_(plan), hook_(hook), hook_mask_(every ? 0 : 4095), batch_(*batch) {
    const size_t share = plan.reductions.empty() ? 0 : table_bytes / plan.reductions.size();
    budget_ = table_bytes == 0 ? 0 : std::max<size_t>(share, 1);
    for (size_t r = 0; r < plan.reductions.size(); ++r) {
      ReductionFeed f;
      f.plan = &plan.reductions[r];
      f.table = std::make_unique<WorkerGroupTable>(&f.plan->configs);
      f.table->set_budget(budget_);
      for (const Expr& g : f.plan->group) f.group_direct.push_back(g.DirectSlot());
      const size_t cap = RecordBatch::kCapacity;
      f.sel.reserve(cap);
      f.key_values.resize(f.plan->group.size() * cap);
      f.only_values.resize(f.plan->measures.size() * cap);
      for (const CompiledMeasure& m : f.plan->measures) {
        std::array<int, 2> d = {-1, -1};
        uint8_t numeric = 0;
        for (size_t a = 0; a < m.args.size() && a < 2; ++a) {
          d[a] = m.args[a].DirectSlot();
          if (d[a] >= 0 && MeasureReadsNumber(m.config.kind, a)) numeric |= static_cast<uint8_t>(1u << a);
        }
        f.arg_direct.push_back(d);
        f.arg_values.emplace_back(cap * std::max<size_t>(m.args.size(), 1));
        f.arg_numeric.push_back(numeric);
        MeasureInputs in;
        in.stride = m.args.size();
        in.groups = std::make_unique<uint32_t[]>(RecordBatch::kCapacity);
        in.args = std::make_unique<Value[]>(RecordBatch::kCapacity * std::max<size_t>(in.stride, 1));
        f.inputs.push_back(std::move(in));
      }
      feeds_.push_back(std::move(f));
    }
    unmatched_.assign(plan.lookups.size(), 0);
    sel_.reserve(RecordBatch::kCapacity);
    truth_ = std::make_unique<Value[]>(RecordBatch::kCapacity);
  }

  // Records wait in a batch and are aggregated a batch at a time, so the
  // aggregation is timed with two clock reads per batch, not per record.
  bool OnRecord(Value* slots) override {
    batch_.Add(slots);
    return !batch_.full() || Drain();
  }
  // Set when an overflow file could not be made (the shard fails).
  const Status& spill_error() const { return spill_error_; }

  // Aggregates the waiting records: the lookups record by record, then each
  // derived field and filter as one batch evaluation over the records still
  // selected (Expr::EvalBatch), then every reduction (FeedBatch), then every
  // measure's inputs of the batch in one call to its column. Returns false
  // iff a measure ran past its limit (the shard fails; when two measures do
  // so in one batch, the first in job order is named).
  bool Drain() {
    const uint64_t t0 = MonotonicNanos();
    const size_t n = batch_.size();
    sel_.clear();
    for (size_t i = 0; i < n; ++i) {
      ++seen_;
      if ((seen_ & hook_mask_) == 0 && hook_) hook_(seen_);
      Value* slots = batch_.record(i);
      for (size_t t = 0; t < plan_.lookups.size(); ++t)
        if (!plan_.lookups[t].Fill(slots, &arena_, &lookup_key_)) ++unmatched_[t];
      sel_.push_back(static_cast<uint32_t>(i));
    }
    for (size_t i : plan_.derive_before_keep) Derive(i, sel_);
    if (plan_.keep) Filter(*plan_.keep, &sel_);
    for (size_t i : plan_.derive_after_keep) Derive(i, sel_);
    kept_ += sel_.size();
    for (ReductionFeed& f : feeds_) FeedBatch(f);
    const bool go_on = Flush() && spill_error_.ok();
    batch_.Clear();
    arena_.Reset();
    aggregate_ns_ += MonotonicNanos() - t0;
    return go_on;
  }

  // The tables, once every record is drained.
  const WorkerGroupTable& table(size_t r) const { return *feeds_[r].table; }
  // Reduction r's overflow, or null when its table held every key; Finish
  // hands it the table.
  TableOverflow* overflow(size_t r) { return feeds_[r].overflow.get(); }
  Status FinishOverflow(size_t r, int* over_limit_measure) {
    return feeds_[r].overflow->Finish(std::move(feeds_[r].table), over_limit_measure);
  }

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
  void Derive(size_t i, const std::vector<uint32_t>& sel) {
    const CompiledDerive& d = plan_.derive[i];
    d.expr.EvalBatch(rows(), width_, sel.data(), sel.size(), batch_.size(), rows() + d.slot, width_, &scratch_,
                     &arena_);
  }

  // Keeps the selected records for which `keep` is true, in order.
  void Filter(const Expr& keep, std::vector<uint32_t>* sel) {
    keep.EvalBatch(rows(), width_, sel->data(), sel->size(), batch_.size(), truth_.get(), 1, &scratch_, &arena_);
    size_t kept = 0;
    for (const uint32_t r : *sel)
      if (truth_[r].Truthy()) (*sel)[kept++] = r;
    sel->resize(kept);
  }

  // Expression e of the selected records into column[r * stride], or nothing
  // when e is a plain field (direct >= 0: read from the record itself).
  void EvalColumn(const Expr& e, int direct, const std::vector<uint32_t>& sel, Value* column, size_t stride) {
    if (direct < 0)
      e.EvalBatch(rows(), width_, sel.data(), sel.size(), batch_.size(), column, stride, &scratch_, &arena_);
  }

  // One reduction over the records the job kept: its own derived fields and
  // filter, its keys and measure inputs as columns, then record by record
  // (in record order) its group and its measures' queued inputs.
  // The strings evaluated for a record stay in arena_ until the batch ends:
  // its measures take them then.
  void FeedBatch(ReductionFeed& f) {
    const ReductionPlan& rp = *f.plan;
    std::vector<uint32_t>& sel = f.sel;
    sel.assign(sel_.begin(), sel_.end());
    for (size_t i : rp.derive_before_keep) Derive(i, sel);
    if (rp.keep) Filter(*rp.keep, &sel);
    for (size_t i : rp.derive_after_keep) Derive(i, sel);
    f.kept += sel.size();
    const size_t cap = RecordBatch::kCapacity;
    for (size_t g = 0; g < rp.group.size(); ++g)
      EvalColumn(rp.group[g], f.group_direct[g], sel, &f.key_values[g * cap], 1);
    for (size_t m = 0; m < rp.measures.size(); ++m) {
      const CompiledMeasure& cm = rp.measures[m];
      if (cm.only) cm.only->EvalBatch(rows(), width_, sel.data(), sel.size(), batch_.size(), &f.only_values[m * cap], 1,
                                      &scratch_, &arena_);
      const size_t stride = f.inputs[m].stride;
      for (size_t a = 0; a < cm.args.size(); ++a)
        EvalColumn(cm.args[a], f.arg_direct[m][a], sel, &f.arg_values[m][a], stride);
    }
    for (const uint32_t r : sel) Feed(f, r);
  }

  // The value of record r's key g, of measure m's argument a, and whether
  // record r is measure m's input.
  const Value& KeyValue(const ReductionFeed& f, size_t g, uint32_t r) {
    const int d = f.group_direct[g];
    return d >= 0 ? batch_.record(r)[d] : f.key_values[g * RecordBatch::kCapacity + r];
  }
  const Value& ArgValue(const ReductionFeed& f, size_t m, size_t a, uint32_t r) {
    const int d = f.arg_direct[m][a];
    return d >= 0 ? batch_.record(r)[d] : f.arg_values[m][r * f.inputs[m].stride + a];
  }
  bool MeasureTakes(const ReductionFeed& f, size_t m, uint32_t r) const {
    return !f.plan->measures[m].only || f.only_values[m * RecordBatch::kCapacity + r].Truthy();
  }

  // Finds record r's group in one reduction and queues its measures' inputs.
  void Feed(ReductionFeed& f, uint32_t r) {
    const ReductionPlan& rp = *f.plan;
    key_.clear();
    for (size_t g = 0; g < rp.group.size(); ++g) AppendKeyValue(KeyValue(f, g, r), &key_);
    const uint32_t group = f.table->FindOrAdd(key_);
    if (group == WorkerGroupTable::kOverBudget) return Spill(f, r);
    for (size_t m = 0; m < rp.measures.size(); ++m) {
      if (!MeasureTakes(f, m, r)) continue;  // not this measure's input
      MeasureInputs& in = f.inputs[m];
      Value* args = &in.args[in.n * in.stride];
      in.groups[in.n++] = group;
      const uint8_t numeric = f.arg_numeric[m];
      for (size_t a = 0; a < in.stride; ++a) {
        const int d = f.arg_direct[m][a];
        // A field a numeric measure reads is parsed once, in the batch, and shared.
        if (d >= 0 && (numeric >> a & 1)) batch_.record(r)[d].ReadTextNumber();
        args[a] = ArgValue(f, m, a, r);
      }
    }
  }

  // Writes a record of a key the full table does not hold to the reduction's
  // overflow: the key and each measure's arguments, evaluated as Feed does.
  void Spill(ReductionFeed& f, uint32_t r) {
    const ReductionPlan& rp = *f.plan;
    if (!f.overflow) {
      std::vector<size_t> strides;
      for (const CompiledMeasure& cm : rp.measures) strides.push_back(cm.args.size());
      f.overflow = std::make_unique<TableOverflow>(&rp.configs, std::move(strides), budget_);
    }
    f.overflow->BeginRecord(key_);
    for (size_t m = 0; m < rp.measures.size(); ++m) {
      if (!MeasureTakes(f, m, r)) {
        f.overflow->SkipMeasure();
        continue;
      }
      const size_t stride = f.inputs[m].stride;
      f.spill_args.resize(stride);
      for (size_t a = 0; a < stride; ++a) f.spill_args[a] = ArgValue(f, m, a, r);
      f.overflow->AddArgs(f.spill_args.data());
    }
    if (Status s = f.overflow->EndRecord(); !s.ok() && spill_error_.ok()) spill_error_ = s;
  }

  // Feeds every measure its queued inputs. Returns false iff one ran past
  // its limit.
  bool Flush() {
    bool ok = true;
    for (size_t r = 0; r < feeds_.size(); ++r) {
      ReductionFeed& f = feeds_[r];
      for (size_t m = 0; m < f.inputs.size(); ++m) {
        MeasureInputs& in = f.inputs[m];
        const size_t n = in.n;
        if (ok && n > 0 && f.table->column(m).AddBatch(in.groups.get(), in.args.get(), in.stride, n) < n) {
          over_limit_ = {static_cast<int>(r), static_cast<int>(m)};
          ok = false;
        }
        in.n = 0;
      }
    }
    return ok;
  }

  const Plan& plan_;
  const std::function<void(uint64_t)>& hook_;
  uint64_t hook_mask_;  // the hook runs when (records & mask) == 0
  ScratchArena arena_;  // the batch's evaluated strings
  Expr::BatchScratch scratch_;
  const size_t width_ = plan_.fields.size();  // slots per record of the batch
  std::vector<uint32_t> sel_;               // the records the job's filter keeps
  std::unique_ptr<Value[]> truth_;          // a filter's value per record
  std::string key_;
  std::string lookup_key_;
  std::vector<uint64_t> unmatched_;
  uint64_t seen_ = 0;
  uint64_t kept_ = 0;
  std::pair<int, int> over_limit_ = {-1, -1};
  RecordBatch& batch_;
  uint64_t aggregate_ns_ = 0;  // inside Drain
  std::vector<ReductionFeed> feeds_;
  size_t budget_ = 0;  // each table's, 0 = none
  Status spill_error_;
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

Status ShardProcessor::Process(const ShardTask& task, std::string* partial) {
  // The four phases partition the time from here to the encoded partial:
  // reading = finding and opening the file plus every read of the source
  // (decompression included; with decode ahead threaded, the time spent
  // waiting for the helper's blocks); aggregating = the batches of records
  // (Aggregator::Drain); parsing = the rest of the reader's loop (splitting,
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
  Aggregator agg(*plan_, &batch_, on_record, on_every_record, table_bytes);
  PresenceCounter present(plan_->fields, &agg);  // counts each raw field's values
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
  Status s = reader_->Read(timed, present, &stats);
  if (s.ok() && agg.over_limit().first < 0 && agg.spill_error().ok()) agg.Drain();
  const uint64_t t1 = MonotonicNanos();
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
  for (size_t r = 0; r < state.reductions.size(); ++r) {
    state.reductions[r].kept = agg.kept_by(r);
    if (TableOverflow* o = agg.overflow(r)) {
      state.reductions[r].encode_groups = [o, &merged](ByteWriter& w) {
        if (Status e = o->Encode(w); !e.ok() && merged.ok()) merged = e;
      };
      state.reductions[r].encode_bytes_hint = o->encoded_bytes();
    } else {
      const WorkerGroupTable& table = agg.table(r);
      state.reductions[r].encode_groups = [&table](ByteWriter& w) { table.Encode(w); };
      state.reductions[r].encode_bytes_hint = table.EncodedBytesHint();
    }
  }
  state.lookup_unmatched = agg.unmatched();
  EncodePartial(state, partial);
  if (!merged.ok()) return merged.WithContext(where);
  SetPartialEncodeTime(MonotonicNanos() - t1, partial);
  return Status::Ok();
}

}  // namespace fanfold
