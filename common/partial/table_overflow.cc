#include "common/partial/table_overflow.h"

#include <algorithm>
#include <bit>
#include <cstring>
#include <queue>

#include <xxhash.h>

#include "common/base/scratch_arena.h"

namespace fanfold {
namespace {

// An overflow record: u32 body length, then the body — the key (varint
// length + bytes), then per measure a byte (1 = its input, 0 = not) and,
// when 1, its arguments. An argument: a byte of flags telling which of
// Value's fields differ from a default Value, its kind, then those fields.
// Every field but a string's kept numeric reading (Value::ReadTextNumber)
// is kept, so the Value read back is the Value written, less that reading:
// its text is parsed again when a measure asks (the same number).
enum : uint8_t { kHasBool = 1, kHasRep = 2, kHasNumber = 4, kHasBits = 8, kHasStr = 16 };

void PutValue(const Value& v, ByteWriter& w) {
  const uint64_t number_bits = std::bit_cast<uint64_t>(v.number);
  const uint8_t flags = (v.boolean ? kHasBool : 0) | (v.rep != NumberRep::kDouble ? kHasRep : 0) |
                        (number_bits != 0 ? kHasNumber : 0) | (v.bits != 0 ? kHasBits : 0) |
                        (!v.str.empty() ? kHasStr : 0);
  w.U8(flags);
  w.U8(static_cast<uint8_t>(v.kind));
  if (flags & kHasRep) w.U8(static_cast<uint8_t>(v.rep));
  if (flags & kHasNumber) w.U64(number_bits);
  if (flags & kHasBits) w.U64(v.bits);
  if (flags & kHasStr) w.Str(v.str);
}

// Reads a Value whose string points into the reader's bytes.
Value GetValue(ByteReader& r) {
  Value v;
  const uint8_t flags = r.U8();
  v.kind = static_cast<ValueKind>(r.U8());
  v.boolean = (flags & kHasBool) != 0;
  if (flags & kHasRep) v.rep = static_cast<NumberRep>(r.U8());
  if (flags & kHasNumber) v.number = std::bit_cast<double>(r.U64());
  if (flags & kHasBits) v.bits = r.U64();
  if (flags & kHasStr) v.str = r.Str();
  return v;
}

constexpr size_t kSpillBuffer = size_t{256} << 10;  // the overflow's write buffer
constexpr size_t kFileBuffer = size_t{64} << 10;    // partitions and runs
constexpr size_t kMaxPartitions = 64;
constexpr size_t kMaxRuns = 100;  // open at once; more are merged into one
constexpr size_t kBatch = 256;  // records per AddBatch call, as the reader's batches

Status Corrupt() { return Status::Internal("a worker's own overflow file reads back wrong"); }

// Views the next length-prefixed body (valid until f is read again). False
// at the end or on error (*error set then).
bool ReadFramed(UnlinkedTempFile& f, std::string_view* body, Status* error) {
  uint32_t n = 0;
  if (!f.Read(reinterpret_cast<char*>(&n), 4, error)) return false;
  if (!f.View(n, body, error)) {
    if (error->ok()) *error = Corrupt();
    return false;
  }
  return true;
}

void WriteFramed(UnlinkedTempFile& f, std::string_view body) {
  const uint32_t n = static_cast<uint32_t>(body.size());
  f.Write(std::string_view(reinterpret_cast<const char*>(&n), 4));
  f.Write(body);
}

std::string_view KeyOf(std::string_view body) {
  ByteReader r(body);
  return r.Str();
}

}  // namespace

// A run: a key-sorted sequence of encoded groups (each framed by its
// length), and while merging the group at its head.
struct TableOverflow::Run {
  UnlinkedTempFile file;
  std::string_view head;  // in file's buffer
  std::string_view key;   // head's key
  explicit Run(UnlinkedTempFile f) : file(std::move(f)) {}
};

TableOverflow::TableOverflow(const std::vector<MeasureConfig>* configs, std::vector<size_t> strides,
                             size_t budget_bytes)
    : configs_(configs), strides_(std::move(strides)), budget_(std::max<size_t>(budget_bytes, 1)) {}

TableOverflow::~TableOverflow() = default;

void TableOverflow::BeginRecord(std::string_view key) {
  record_.assign(4, '\0');
  ByteWriter(&record_).Str(key);
  measure_at_ = 0;
}

void TableOverflow::AddArgs(const Value* args) {
  ByteWriter w(&record_);
  w.U8(1);
  for (size_t a = 0; a < strides_[measure_at_]; ++a) PutValue(args[a], w);
  ++measure_at_;
}

void TableOverflow::SkipMeasure() {
  record_.push_back('\0');
  ++measure_at_;
}

Status TableOverflow::EndRecord() {
  if (!spill_) {
    Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("fanfold-overflow", kSpillBuffer);
    if (!f.ok()) return f.status();
    spill_ = std::make_unique<UnlinkedTempFile>(std::move(f.value()));
  }
  const uint32_t n = static_cast<uint32_t>(record_.size() - 4);
  std::memcpy(record_.data(), &n, 4);
  spill_->Write(record_);
  ++records_;
  return Status::Ok();
}

Status TableOverflow::WriteRun(const WorkerGroupTable& table) {
  Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("fanfold-run", kFileBuffer);
  if (!f.ok()) return f.status();
  auto run = std::make_unique<Run>(std::move(f.value()));
  std::string group;
  for (const uint32_t g : table.SortedGroups()) {
    group.clear();
    ByteWriter w(&group);
    table.EncodeGroup(g, w);
    WriteFramed(run->file, group);
    run_bytes_ += group.size();
  }
  groups_ += table.group_count();
  runs_.push_back(std::move(run));
  return runs_.size() >= kMaxRuns ? CompactRuns() : Status::Ok();
}

Status TableOverflow::Finish(std::unique_ptr<WorkerGroupTable> table, int* over_limit_measure) {
  if (table->group_count() > 0)
    bytes_per_group_ = std::max<size_t>(
        16, table->ApproxBytes() / table->group_count() + WorkerGroupTable::kSortBytesPerGroup);
  FF_RETURN_IF_ERROR(WriteRun(*table));
  table.reset();  // its memory is the next passes' budget
  if (!spill_) return Status::Ok();
  FF_RETURN_IF_ERROR(spill_->Rewind());
  return Partition(std::move(spill_), records_, 0, over_limit_measure);
}

// Splits `in` by a hash of the key (seeded by depth, so that a partition
// split again spreads) into as many files as the records would need tables
// if every record were a new key (at most kMaxPartitions), then aggregates
// each. Record order is kept within a partition.
Status TableOverflow::Partition(std::unique_ptr<UnlinkedTempFile> in, uint64_t records, int depth,
                                int* over_limit_measure) {
  const uint64_t per_table = std::max<uint64_t>(1, budget_ / bytes_per_group_);
  const size_t parts = static_cast<size_t>(std::min<uint64_t>(kMaxPartitions, (records + per_table - 1) / per_table));
  if (parts <= 1) return AggregateAll(std::move(in), depth, over_limit_measure);
  std::vector<std::unique_ptr<UnlinkedTempFile>> files;
  std::vector<uint64_t> counts(parts, 0);
  for (size_t p = 0; p < parts; ++p) {
    Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("fanfold-part", kFileBuffer);
    if (!f.ok()) return f.status();
    files.push_back(std::make_unique<UnlinkedTempFile>(std::move(f.value())));
  }
  std::string_view body;
  Status error;
  while (ReadFramed(*in, &body, &error)) {
    const std::string_view key = KeyOf(body);
    const size_t p = static_cast<size_t>(XXH3_64bits_withSeed(key.data(), key.size(), 0x0F1F + depth) % parts);
    WriteFramed(*files[p], body);
    ++counts[p];
  }
  FF_RETURN_IF_ERROR(error);
  in.reset();  // its disk space back before the partitions are read
  for (size_t p = 0; p < parts; ++p) {
    if (counts[p] == 0) continue;
    FF_RETURN_IF_ERROR(files[p]->Rewind());
    FF_RETURN_IF_ERROR(AggregateAll(std::move(files[p]), depth + 1, over_limit_measure));
  }
  return Status::Ok();
}

// Passes over `in` until every key has had its table. When a pass leaves
// many records behind (the partition's keys were underestimated), they are
// partitioned again rather than passed over table by table, which would
// re-read them once per table (a few levels at most, and only for more
// than 65,536 records; otherwise passes).
Status TableOverflow::AggregateAll(std::unique_ptr<UnlinkedTempFile> in, int depth, int* over_limit_measure) {
  constexpr int kMaxDepth = 4;
  const uint64_t per_table = std::max<uint64_t>(1, budget_ / bytes_per_group_);
  while (in) {
    std::unique_ptr<UnlinkedTempFile> rest;
    uint64_t rest_records = 0;
    FF_RETURN_IF_ERROR(AggregatePass(*in, &rest, &rest_records, over_limit_measure));
    in = std::move(rest);
    if (!in) break;
    FF_RETURN_IF_ERROR(in->Rewind());
    // Splitting again costs a file per partition: worth it only for many records.
    if (depth < kMaxDepth && rest_records > std::max<uint64_t>(4 * per_table, split_again_records_))
      return Partition(std::move(in), rest_records, depth + 1, over_limit_measure);
  }
  return Status::Ok();
}

// Aggregates `in`'s records in order into one table with the budget; the
// records of keys it cannot take go, in order, to *rest (made only then),
// for a further pass.
Status TableOverflow::AggregatePass(UnlinkedTempFile& in, std::unique_ptr<UnlinkedTempFile>* rest,
                                    uint64_t* rest_records, int* over_limit_measure) {
  const size_t measures = strides_.size();
  auto table = std::make_unique<WorkerGroupTable>(configs_);
  table->set_budget(budget_);
  std::vector<std::vector<uint32_t>> groups(measures);
  std::vector<std::vector<Value>> args(measures);
  for (size_t m = 0; m < measures; ++m) {
    groups[m].reserve(kBatch);
    args[m].reserve(kBatch * std::max<size_t>(strides_[m], 1));
  }
  ScratchArena bodies;  // the batch's records: their strings are the arguments'
  size_t batched = 0;
  auto flush = [&]() -> Status {
    for (size_t m = 0; m < measures; ++m) {
      const size_t n = groups[m].size();
      if (n > 0 && table->column(m).AddBatch(groups[m].data(), args[m].data(), strides_[m], n) < n) {
        *over_limit_measure = static_cast<int>(m);
        return Status::LimitExceeded("over limit");
      }
      groups[m].clear();
      args[m].clear();
    }
    bodies.Reset();
    batched = 0;
    return Status::Ok();
  };
  std::string_view body;
  Status error;
  while (ReadFramed(in, &body, &error)) {
    const std::string_view kept = bodies.Copy(body);
    ByteReader r(kept);
    const std::string_view key = r.Str();
    const uint32_t g = table->FindOrAdd(key);
    if (g == WorkerGroupTable::kOverBudget) {
      if (!*rest) {
        Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("fanfold-rest", kFileBuffer);
        if (!f.ok()) return f.status();
        *rest = std::make_unique<UnlinkedTempFile>(std::move(f.value()));
      }
      WriteFramed(**rest, body);
      ++*rest_records;
      continue;
    }
    for (size_t m = 0; m < measures; ++m) {
      if (r.U8() == 0) continue;
      groups[m].push_back(g);
      for (size_t a = 0; a < strides_[m]; ++a) args[m].push_back(GetValue(r));
    }
    if (!r.ok() || !r.at_end()) return Corrupt();
    if (++batched == kBatch) FF_RETURN_IF_ERROR(flush());
  }
  FF_RETURN_IF_ERROR(error);
  FF_RETURN_IF_ERROR(flush());
  return WriteRun(*table);
}

// Interleaves every run's groups by key into emit, and closes the runs.
Status TableOverflow::MergeRuns(const std::function<void(std::string_view)>& emit) {
  Status error;
  // Advances a run to its next group; false at its end (or on error).
  auto next = [&error](Run& run) {
    if (!ReadFramed(run.file, &run.head, &error)) return false;
    run.key = KeyOf(run.head);
    return true;
  };
  auto later = [this](size_t a, size_t b) { return runs_[a]->key > runs_[b]->key; };
  std::priority_queue<size_t, std::vector<size_t>, decltype(later)> heads(later);
  for (size_t i = 0; i < runs_.size(); ++i) {
    FF_RETURN_IF_ERROR(runs_[i]->file.Rewind());
    if (next(*runs_[i])) heads.push(i);
    FF_RETURN_IF_ERROR(error);
  }
  while (!heads.empty()) {
    const size_t i = heads.top();
    heads.pop();
    emit(runs_[i]->head);
    if (next(*runs_[i])) heads.push(i);
    FF_RETURN_IF_ERROR(error);
  }
  runs_.clear();
  return Status::Ok();
}

// Too many runs would hold too many files open: they become one.
Status TableOverflow::CompactRuns() {
  Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("fanfold-run", kFileBuffer);
  if (!f.ok()) return f.status();
  auto merged = std::make_unique<Run>(std::move(f.value()));
  FF_RETURN_IF_ERROR(MergeRuns([&merged](std::string_view group) { WriteFramed(merged->file, group); }));
  runs_.push_back(std::move(merged));
  return Status::Ok();
}

Status TableOverflow::Encode(ByteWriter& w) {
  w.Varint(groups_);
  uint64_t written = 0;
  FF_RETURN_IF_ERROR(MergeRuns([&w, &written](std::string_view group) {
    w.Bytes(group);
    ++written;
  }));
  return written == groups_ ? Status::Ok() : Corrupt();
}

}  // namespace fanfold
