#include "common/partial/batch_aggregator.h"

#include <algorithm>

#include "common/measures/measure.h"
#include "common/partial/group_key.h"
#include "common/port/clock.h"

namespace fanfold {

BatchAggregator::BatchAggregator(const Plan& plan, RecordBatch* batch, const std::function<void(uint64_t)>& hook,
                                 bool every, uint64_t table_bytes)
    : plan_(plan), hook_(hook), hook_mask_(every ? 0 : 4095), batch_(*batch) {
  for (size_t r = 0; r < plan.reductions.size(); ++r) {
    ReductionFeed f;
    f.plan = &plan.reductions[r];
    for (const Expr& g : f.plan->group) f.group_direct.push_back(g.DirectSlot());
    const size_t cap = RecordBatch::kCapacity;
    f.sel.reserve(cap);
    f.key_values.resize(f.plan->group.size() * cap);
    f.only_values.resize(f.plan->measures.size() * cap);
    for (const CompiledMeasure& m : f.plan->measures) {
      std::array<int, 2> d = {-1, -1};
      for (size_t a = 0; a < m.args.size() && a < 2; ++a) {
        d[a] = m.args[a].DirectSlot();
        if (d[a] >= 0 && MeasureReadsNumber(m.config.kind, a) &&
            std::find(f.numeric_slots.begin(), f.numeric_slots.end(), d[a]) == f.numeric_slots.end())
          f.numeric_slots.push_back(d[a]);
      }
      f.arg_direct.push_back(d);
      f.arg_values.emplace_back(cap * std::max<size_t>(m.args.size(), 1));
    }
    for (MeasureInputs* in : {&f.fed, &f.only_fed}) {
      in->rows = std::make_unique<uint32_t[]>(RecordBatch::kCapacity);
      in->groups = std::make_unique<uint32_t[]>(RecordBatch::kCapacity);
    }
    feeds_.push_back(std::move(f));
  }
  sel_.reserve(RecordBatch::kCapacity);
  key_end_ = std::make_unique<uint32_t[]>(RecordBatch::kCapacity);
  key_hash_ = std::make_unique<uint64_t[]>(RecordBatch::kCapacity);
  truth_ = std::make_unique<Value[]>(RecordBatch::kCapacity);
  Restart(table_bytes, every);
}

void BatchAggregator::Restart(uint64_t table_bytes, bool every) {
  hook_mask_ = every ? 0 : 4095;
  const size_t share = plan_.reductions.empty() ? 0 : table_bytes / plan_.reductions.size();
  const size_t last_budget = budget_;
  budget_ = table_bytes == 0 ? 0 : std::max<size_t>(share, 1);
  // The last shard's table is kept, cleared, with its memory (faulted in
  // once per worker, not once per shard) unless this budget is smaller:
  // the memory it keeps is within the last budget, and so within this one.
  const bool keep = budget_ == 0 ? last_budget == 0 : last_budget != 0 && budget_ >= last_budget;
  for (ReductionFeed& f : feeds_) {
    f.overflow.reset();
    if (f.table && keep)
      f.table->Clear();
    else
      f.table = std::make_unique<WorkerGroupTable>(&f.plan->configs);
    f.table->set_budget(budget_);
    f.kept = 0;
    f.fed.n = 0;
    f.only_fed.n = 0;
  }
  unmatched_.assign(plan_.lookups.size(), 0);
  sel_.clear();
  arena_.Reset();
  seen_ = 0;
  kept_ = 0;
  over_limit_ = {-1, -1};
  aggregate_ns_ = 0;
  spill_error_ = Status::Ok();
  presence_ = nullptr;
}

void BatchAggregator::ReleaseTables() {
  presence_ = nullptr;
  for (ReductionFeed& f : feeds_) {
    f.overflow.reset();
    if (f.table) f.table->Clear();
  }
}

bool BatchAggregator::OnRecord(Value* slots) {
  if (slots == batch_.NextRow())
    batch_.Commit();  // built in place (RecordBuffer)
  else
    batch_.Add(slots);
  return !batch_.full() || Drain();
}

bool BatchAggregator::Drain() {
  const uint64_t t0 = MonotonicNanos();
  const size_t n = batch_.size();
  if (presence_ != nullptr) presence_->CountRows(rows(), n);  // before anything writes into the rows
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

Status BatchAggregator::FinishOverflow(size_t r, int* over_limit_measure) {
  return feeds_[r].overflow->Finish(std::move(feeds_[r].table), over_limit_measure);
}

void BatchAggregator::Derive(size_t i, const std::vector<uint32_t>& sel) {
  const CompiledDerive& d = plan_.derive[i];
  d.expr.EvalBatch(rows(), width_, sel.data(), sel.size(), batch_.size(), rows() + d.slot, width_, &scratch_, &arena_);
}

void BatchAggregator::Filter(const Expr& keep, std::vector<uint32_t>* sel) {
  keep.EvalBatch(rows(), width_, sel->data(), sel->size(), batch_.size(), truth_.get(), 1, &scratch_, &arena_);
  size_t kept = 0;
  for (const uint32_t r : *sel) {
    const Value& t = truth_[r];  // a comparison's bool, mostly: read inline
    if (t.kind == ValueKind::kBool ? t.boolean : t.Truthy()) (*sel)[kept++] = r;
  }
  sel->resize(kept);
}

void BatchAggregator::EvalColumn(const Expr& e, int direct, const std::vector<uint32_t>& sel, Value* column,
                                 size_t stride) {
  if (direct < 0)
    e.EvalBatch(rows(), width_, sel.data(), sel.size(), batch_.size(), column, stride, &scratch_, &arena_);
}

// One reduction over the records the job kept: its own derived fields and
// filter, its keys and measure inputs as columns, then record by record
// (in record order) its group and its measures' queued inputs.
// The strings evaluated for a record stay in arena_ until the batch ends:
// its measures take them then.
void BatchAggregator::FeedBatch(ReductionFeed& f) {
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
    if (cm.only)
      cm.only->EvalBatch(rows(), width_, sel.data(), sel.size(), batch_.size(), &f.only_values[m * cap], 1, &scratch_,
                         &arena_);
    const size_t stride = cm.args.size();
    for (size_t a = 0; a < cm.args.size(); ++a)
      EvalColumn(cm.args[a], f.arg_direct[m][a], sel, &f.arg_values[m][a], stride);
  }
  Feed(f, sel);
}

const Value& BatchAggregator::KeyValue(const ReductionFeed& f, size_t g, uint32_t r) {
  const int d = f.group_direct[g];
  return d >= 0 ? batch_.record(r)[d] : f.key_values[g * RecordBatch::kCapacity + r];
}

const Value& BatchAggregator::ArgValue(const ReductionFeed& f, size_t m, size_t a, uint32_t r) {
  const int d = f.arg_direct[m][a];
  return d >= 0 ? batch_.record(r)[d] : f.arg_values[m][r * f.plan->measures[m].args.size() + a];
}

bool BatchAggregator::MeasureTakes(const ReductionFeed& f, size_t m, uint32_t r) const {
  return !f.plan->measures[m].only || f.only_values[m * RecordBatch::kCapacity + r].Truthy();
}

void BatchAggregator::Feed(ReductionFeed& f, const std::vector<uint32_t>& sel) {
  const ReductionPlan& rp = *f.plan;
  const size_t n = sel.size();
  // Every record's key is written into key_'s bytes, end to end (grown when
  // a value could pass its end), ...
  size_t length = 0;
  for (size_t i = 0; i < n; ++i) {
    for (size_t g = 0; g < rp.group.size(); ++g) {
      const Value& v = KeyValue(f, g, sel[i]);
      if (const size_t need = length + KeyValueBound(v); need > key_.size())
        key_.resize(std::max(need, 2 * key_.size()));
      length += WriteKeyValue(v, key_.data() + length);
    }
    key_end_[i] = static_cast<uint32_t>(length);
  }
  // ... then hashed, their index slots fetched, and only then looked up: a
  // lookup rarely waits on memory, nor on the stores that wrote its key.
  WorkerGroupTable& table = *f.table;
  const auto key_of = [this](size_t i) {
    const size_t begin = i == 0 ? 0 : key_end_[i - 1];
    return std::string_view(key_.data() + begin, key_end_[i] - begin);
  };
  table.HashBatch(key_.data(), key_end_.get(), n, key_hash_.get());
  for (size_t i = 0; i < n; ++i) {
    key_view_ = key_of(i);
    const uint32_t group = table.FindOrAdd(key_view_, key_hash_[i]);
    if (group == WorkerGroupTable::kOverBudget) {
      Spill(f, sel[i]);
      continue;
    }
    f.fed.rows[f.fed.n] = sel[i];  // the measures take it in Flush
    f.fed.groups[f.fed.n++] = group;
  }
}

void BatchAggregator::Spill(ReductionFeed& f, uint32_t r) {
  const ReductionPlan& rp = *f.plan;
  if (!f.overflow) {
    std::vector<size_t> strides;
    for (const CompiledMeasure& cm : rp.measures) strides.push_back(cm.args.size());
    f.overflow = std::make_unique<TableOverflow>(&rp.configs, std::move(strides), budget_);
  }
  f.overflow->BeginRecord(key_view_);
  for (size_t m = 0; m < rp.measures.size(); ++m) {
    if (!MeasureTakes(f, m, r)) {
      f.overflow->SkipMeasure();
      continue;
    }
    const size_t stride = rp.measures[m].args.size();
    f.spill_args.resize(stride);
    for (size_t a = 0; a < stride; ++a) f.spill_args[a] = ArgValue(f, m, a, r);
    f.overflow->AddArgs(f.spill_args.data());
  }
  if (Status s = f.overflow->EndRecord(); !s.ok() && spill_error_.ok()) spill_error_ = s;
}

bool BatchAggregator::Flush() {
  bool ok = true;
  Value* const rows = this->rows();
  for (size_t r = 0; r < feeds_.size(); ++r) {
    ReductionFeed& f = feeds_[r];
    // A field numeric measures read is parsed once, in the batch, and
    // shared by every measure (and reduction) reading it.
    for (const int d : f.numeric_slots)
      for (size_t i = 0; i < f.fed.n; ++i) rows[f.fed.rows[i] * width_ + d].ReadTextNumber();
    for (size_t m = 0; ok && m < f.plan->measures.size(); ++m) {
      const CompiledMeasure& cm = f.plan->measures[m];
      const MeasureInputs* in = &f.fed;
      if (cm.only) {  // the records its own test keeps, in order
        const Value* only = &f.only_values[m * RecordBatch::kCapacity];
        size_t k = 0;
        for (size_t i = 0; i < f.fed.n; ++i) {
          const uint32_t row = f.fed.rows[i];
          if (!only[row].Truthy()) continue;
          f.only_fed.rows[k] = row;
          f.only_fed.groups[k++] = f.fed.groups[i];
        }
        f.only_fed.n = k;
        in = &f.only_fed;
      }
      const size_t n = in->n;
      if (n == 0) continue;
      ArgColumns args;
      args.count = std::min<size_t>(cm.args.size(), 2);
      for (size_t a = 0; a < args.count; ++a) {
        const int d = f.arg_direct[m][a];
        if (d < 0) {  // evaluated: record row's at arg_values[m][row * stride + a]
          args.base[a] = f.arg_values[m].data() + a;
          args.step[a] = cm.args.size();
          continue;
        }
        args.base[a] = rows + d;
        args.step[a] = width_;
      }
      if (f.table->column(m).AddRows(in->groups.get(), in->rows.get(), args, n) < n) {
        over_limit_ = {static_cast<int>(r), static_cast<int>(m)};
        ok = false;
      }
    }
    f.fed.n = 0;
  }
  return ok;
}

}  // namespace fanfold
