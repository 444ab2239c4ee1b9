#include "common/lookup/table_loader.h"

#include <xxhash.h>

#include "common/base/number_text.h"
#include "common/base/scratch_arena.h"
#include "common/expr/expr.h"
#include "common/expr/functions.h"
#include "common/input/field_table.h"
#include "common/input/record_reader.h"
#include "common/port/files/file_identity.h"

namespace fanfold {
namespace {

// Passes the decompressed bytes on, hashing them and refusing to go past
// the byte limit.
class MeasuredSource final : public ByteSource {
 public:
  MeasuredSource(ByteSource* inner, uint64_t limit, std::string where)
      : inner_(inner), limit_(limit), where_(std::move(where)), state_(XXH3_createState()) {
    XXH3_64bits_reset(state_);
  }
  ~MeasuredSource() override { XXH3_freeState(state_); }
  MeasuredSource(const MeasuredSource&) = delete;
  MeasuredSource& operator=(const MeasuredSource&) = delete;

  Result<size_t> Read(char* dst, size_t cap) override {
    Result<size_t> n = inner_->Read(dst, cap);
    if (!n.ok()) return n;
    bytes_ += *n;
    if (bytes_ > limit_)
      return Status::InvalidArgument(where_ + ": more than " + std::to_string(limit_) +
                                     " bytes (decompressed); expected a table within the limit of " +
                                     std::to_string(limit_) + " bytes");
    XXH3_64bits_update(state_, dst, *n);
    return n;
  }
  uint64_t compressed_bytes() const override { return inner_->compressed_bytes(); }
  uint64_t bytes() const { return bytes_; }
  uint64_t hash() const { return XXH3_64bits_digest(state_); }

 private:
  ByteSource* inner_;
  uint64_t limit_;
  std::string where_;
  XXH3_state_t* state_;
  uint64_t bytes_ = 0;
};

// "\"L-17\"" or "17": a key as it reads, for messages.
std::string Shown(const Value& v) {
  char buf[kNumberTextMax];
  std::string_view text;
  if (!ValueText(v, buf, &text)) return "(none)";
  std::string s(text.substr(0, 60));
  return v.kind == ValueKind::kString ? "\"" + s + "\"" : s;
}

// Why v is no key, for "its key ... ".
std::string NoKeyReason(const Value& v) {
  switch (v.kind) {
    case ValueKind::kMissing: return "has no value";
    case ValueKind::kNull: return "is null";
    case ValueKind::kOther: return "is an object or array";
    default: return "is NaN, which equals nothing";
  }
}

// Fills the table from the records the reader hands over; stops at the
// first problem, which it keeps with its line.
class RowSink final : public RecordSink {
 public:
  RowSink(LookupTable* table, const Expr* key, const std::vector<Expr>* values, uint64_t max_rows,
          std::string where)
      : table_(table), key_(key), values_(values), max_rows_(max_rows), where_(std::move(where)),
        row_(values->size()) {}

  bool OnRecord(Value* slots) override {
    arena_.Reset();
    const uint64_t line = record_line();
    const Value key = key_->Eval(slots, &arena_);
    if (!LookupTable::MakeKey(key, &key_bytes_))
      return Fail(line, "its key " + key_->text() + " " + NoKeyReason(key) + "; expected every row to have a key");
    for (size_t f = 0; f < values_->size(); ++f) row_[f] = (*values_)[f].Eval(slots, &arena_);
    if (table_->row_count() >= max_rows_)
      return Fail(line, "more than " + std::to_string(max_rows_) + " rows; expected a table within the limit of " +
                            std::to_string(max_rows_) + " rows");
    const uint64_t first = table_->AddRow(key_bytes_, row_.data(), line);
    if (first != 0)
      return Fail(line, "key " + Shown(key) + " again (first on line " + std::to_string(first) +
                            "); expected each key once");
    return true;
  }

  // The first problem (line 0 = none) and its message.
  uint64_t error_line() const { return error_line_; }
  const Status& error() const { return error_; }

 private:
  bool Fail(uint64_t line, const std::string& what) {
    error_line_ = line;
    error_ = Status::InvalidArgument(where_ + " line " + std::to_string(line) + ": " + what);
    return false;
  }

  LookupTable* table_;
  const Expr* key_;
  const std::vector<Expr>* values_;
  uint64_t max_rows_;
  std::string where_;
  ScratchArena arena_;
  std::string key_bytes_;
  std::vector<Value> row_;
  uint64_t error_line_ = 0;
  Status error_;
};

// Compiles one of the table's expressions against its own fields.
Result<Expr> CompileTableExpr(const TableSource& s, const TableExpr& e, FieldTable* fields) {
  const size_t before = fields->size();
  const std::string where = s.job_path + ": " + e.pointer;
  Result<Expr> x = Expr::Compile(e.text, fields);
  if (!x.ok()) return x.status().WithContext(where);
  for (size_t i = before; i < fields->size(); ++i) {
    const FieldTable::Slot& slot = fields->slot(i);
    if (slot.derived) continue;
    const auto problem = RecordFormatRowOf(s.format).raw_field_problem;
    const std::string why = problem == nullptr ? "" : problem(slot.name);
    if (!why.empty())
      return Status::InvalidArgument(where + ": field {" + slot.name + "} " + why + " (table \"" + s.name +
                                     "\" is " + FormatName(s.format) + ")");
  }
  return x;
}

}  // namespace

Result<std::shared_ptr<const LookupTable>> LoadLookupTable(const TableSource& s, const TableLimits& limits) {
  FieldTable fields;
  Result<Expr> key = CompileTableExpr(s, s.key, &fields);
  if (!key.ok()) return key.status();
  std::vector<Expr> values;
  for (const TableExpr& e : s.field_exprs) {
    Result<Expr> x = CompileTableExpr(s, e, &fields);
    if (!x.ok()) return x.status();
    values.push_back(std::move(x.value()));
  }
  const std::string where = s.job_path + ": " + s.pointer + ": lookup table \"" + s.name + "\" '" + s.path + "'";
  FileIdentity before;
  if (OsError e = IdentifyFile(s.path, &before); !e.ok())
    return Status::InvalidArgument(s.job_path + ": " + s.pointer + "/path: " +
                                   e.ToStatus("read lookup table \"" + s.name + "\"", s.path).message());
  if (s.compression == Compression::kNone && before.size > limits.max_bytes)
    return Status::InvalidArgument(where + ": " + std::to_string(before.size) +
                                   " bytes; expected a table within the limit of " +
                                   std::to_string(limits.max_bytes) + " bytes");
  Result<std::unique_ptr<ByteSource>> src = OpenShardSource(s.path, s.compression);
  if (!src.ok()) return Status::InvalidArgument(src.status().WithContext(where).message());
  MeasuredSource measured(src->get(), limits.max_bytes, where);
  Result<std::unique_ptr<RecordReader>> reader = RecordReader::Create(s.format, fields);
  if (!reader.ok()) return Status::InvalidArgument(reader.status().WithContext(where).message());
  auto table = std::make_shared<LookupTable>(s.field_names);
  RowSink sink(table.get(), &key.value(), &values, limits.max_rows, where);
  ReadStats stats;
  const Status read = (*reader)->Read(measured, sink, &stats);
  if (!read.ok()) return Status::InvalidArgument(read.WithContext(where).message());
  // The first problem in file order: a malformed row before the row the
  // sink stopped at, or that row.
  if (!stats.samples.empty() && (sink.error_line() == 0 || stats.samples[0].line < sink.error_line())) {
    const MalformedSample& m = stats.samples[0];
    const bool column = m.reason.rfind("column ", 0) == 0;
    return Status::InvalidArgument(where + " line " + std::to_string(m.line) + (column ? ", " : ": ") + m.reason +
                                   "; a table must be exact: no row is skipped");
  }
  if (sink.error_line() != 0) return sink.error();
  FileIdentity after;
  if (!IdentifyFile(s.path, &after).ok() || !(after == before))
    return Status::InvalidArgument(where + ": changed while it was read; expected a table that stays put during a run");
  table->set_identity(TableIdentity{s.path, before.size, before.mtime_ns, measured.hash(), measured.bytes()});
  return std::shared_ptr<const LookupTable>(std::move(table));
}

}  // namespace fanfold
