#include "common/input/field_sampler.h"

#include <simdjson.h>

#include <algorithm>
#include <cstring>

#include "common/base/json_location.h"
#include "common/input/csv/csv_reader.h"
#include "common/input/json_pointer.h"
#include "common/port/clock.h"

namespace fanfold {
namespace {

namespace dom = simdjson::dom;

// Names are collected this deep into a record, and from this many elements
// of each array: enough for suggestions, without a long array of objects
// filling the name budget with one entry per element.
constexpr size_t kMaxNameDepth = 16;
constexpr size_t kArrayItemsNamed = 4;
// Each read from a shard asks for this much: small enough that a sample of
// a few records reads little past them.
constexpr size_t kReadBytes = 64 << 10;

// True iff `tokens` lead from el to a value, as the NDJSON reader walks them
// (the first of duplicate keys; an index token into an array).
bool Resolves(dom::element el, const std::vector<std::string>& tokens) {
  for (const std::string& token : tokens) {
    if (el.type() == dom::element_type::OBJECT) {
      bool found = false;
      const dom::object obj = el.get_object().value_unsafe();  // a copy: the result is a temporary
      for (dom::key_value_pair kv : obj) {
        if (kv.key == token) {
          el = kv.value;
          found = true;
          break;
        }
      }
      if (!found) return false;
    } else if (el.type() == dom::element_type::ARRAY) {
      const int64_t index = JsonPointerIndex(token);
      if (index < 0) return false;
      int64_t i = 0;
      bool found = false;
      const dom::array arr = el.get_array().value_unsafe();
      for (dom::element item : arr) {
        if (i++ == index) {
          el = item;
          found = true;
          break;
        }
      }
      if (!found) return false;
    } else {
      return false;
    }
  }
  return true;
}

// The parser's helper: who collects names from one parsed record.
struct NameWalk {
  std::vector<std::string>* names;
  std::unordered_set<std::string>* seen;
  size_t max_names;

  bool full() const { return names->size() >= max_names; }
  void Add(const std::string& pointer) {
    if (!full() && seen->insert(pointer).second) names->push_back(pointer);
  }
  void Walk(dom::element el, const std::string& pointer, size_t depth) {
    if (depth >= kMaxNameDepth || full()) return;
    if (el.type() == dom::element_type::OBJECT) {
      const dom::object obj = el.get_object().value_unsafe();  // a copy: the result is a temporary
      for (dom::key_value_pair kv : obj) {
        const std::string child = ChildPointer(pointer, kv.key);
        Add(child);
        Walk(kv.value, child, depth + 1);
      }
    } else if (el.type() == dom::element_type::ARRAY) {
      size_t i = 0;
      const dom::array arr = el.get_array().value_unsafe();
      for (dom::element item : arr) {
        if (i == kArrayItemsNamed) break;
        const std::string child = ChildPointer(pointer, i++);
        Add(child);
        Walk(item, child, depth + 1);
      }
    }
  }
};

// The line with every number token outside strings replaced by "0" and
// spaces: the same structure and names, and no number the DOM parser refuses
// (integers beyond 64 bits, 1e400), which the reader's second pass reads.
std::string WithNumbersZeroed(const char* p, size_t len) {
  std::string line(p, len);
  bool in_string = false;
  for (size_t i = 0; i < line.size(); ++i) {
    const char c = line[i];
    if (in_string) {
      if (c == '\\') ++i;
      else if (c == '"') in_string = false;
    } else if (c == '"') {
      in_string = true;
    } else if (c == '-' || (c >= '0' && c <= '9')) {
      line[i] = '0';
      while (i + 1 < line.size() && std::strchr("+-.0123456789eE", line[i + 1]) != nullptr) line[++i] = ' ';
    }
  }
  return line;
}

// Stops the CSV reader at the first record: only the header is wanted.
class StopAtFirstRecord final : public RecordSink {
 public:
  bool OnRecord(Value*) override { return false; }
};

}  // namespace

struct FieldSampler::Json {
  dom::parser parser;
  std::string buffer;  // bytes read and not yet cut into lines
};

FieldSampler::FieldSampler(RecordFormat format, const FieldTable& fields, const SampleLimits& limits)
    : format_(format), limits_(limits), json_(std::make_unique<Json>()) {
  for (const FieldTable::Slot& slot : fields.slots()) {
    if (slot.derived) continue;
    raw_names_.push_back(slot.name);
    Result<std::vector<std::string>> tokens = ParseJsonPointer(slot.name);
    if (tokens.ok() && !tokens->empty())
      tokens_.emplace_back(std::move(*tokens));
    else
      tokens_.emplace_back(std::nullopt);
  }
  present_.assign(raw_names_.size(), 0);
}

FieldSampler::~FieldSampler() = default;

bool FieldSampler::OutOfTime() const { return shards_ > 0 && MonotonicNanos() - start_ns_ >= limits_.max_nanos; }

bool FieldSampler::BudgetLeft() const {
  if (bytes_ >= limits_.max_bytes || OutOfTime()) return false;
  return format_ != RecordFormat::kNdjson || records_ < limits_.max_records;
}

bool FieldSampler::wants_more() const { return shards_ < limits_.max_shards && BudgetLeft(); }

Status FieldSampler::AddShard(ByteSource& src) {
  if (shards_ == 0) start_ns_ = MonotonicNanos();
  ++shards_;
  switch (format_) {
    case RecordFormat::kCsv:
    case RecordFormat::kTsv: return AddHeader(src);
    case RecordFormat::kNdjson: return AddRecords(src);
  }
  return Status::Ok();
}

void FieldSampler::AddName(const std::string& name) {
  if (names_.size() < limits_.max_names && name_set_.insert(name).second) names_.push_back(name);
}

Status FieldSampler::AddHeader(ByteSource& src) {
  // A reader of no fields reads the header and binds nothing; a fresh one
  // per shard, so an empty shard shows an empty header, not the last one.
  const FieldTable none;
  const uint64_t record_limit = std::max<uint64_t>(limits_.max_bytes, kReadBytes);
  CsvReader reader(none, format_ == RecordFormat::kTsv ? '\t' : ',', ChunkOptions(kReadBytes, record_limit));
  StopAtFirstRecord stop;
  ReadStats stats;
  Status s = reader.Read(src, stop, &stats);
  bytes_ += stats.raw_bytes;
  header_ = reader.header();
  for (const std::string& column : header_) AddName(column);
  for (size_t f = 0; f < raw_names_.size(); ++f)
    if (std::find(header_.begin(), header_.end(), raw_names_[f]) != header_.end()) ++present_[f];
  return s;
}

Status FieldSampler::AddRecords(ByteSource& src) {
  std::string& buf = json_->buffer;
  buf.clear();
  bool at_start = src.starts_file();
  for (;;) {
    if (!BudgetLeft()) {
      read_whole_ = false;
      return Status::Ok();
    }
    const size_t had = buf.size();
    buf.resize(had + kReadBytes);
    Result<size_t> got = src.Read(buf.data() + had, kReadBytes);
    if (!got.ok()) {
      buf.resize(had);
      read_whole_ = false;
      return got.status();
    }
    buf.resize(had + *got);
    bytes_ += *got;
    const bool eof = *got == 0;
    if (at_start && (buf.size() >= 3 || eof)) {
      // A UTF-8 byte order mark is no part of the first record (as the reader).
      if (buf.size() >= 3 && std::memcmp(buf.data(), "\xEF\xBB\xBF", 3) == 0) buf.erase(0, 3);
      at_start = false;
    }
    if (at_start) continue;
    size_t begin = 0;
    for (;;) {
      if (records_ >= limits_.max_records) break;
      const size_t nl = buf.find('\n', begin);
      if (nl == std::string::npos) {
        if (eof && begin < buf.size()) {
          OnLine(buf.data() + begin, buf.size() - begin);
          begin = buf.size();
        }
        break;
      }
      OnLine(buf.data() + begin, nl - begin);
      begin = nl + 1;
    }
    if (records_ >= limits_.max_records && (begin < buf.size() || !eof)) {
      read_whole_ = false;  // records left unread in this shard
      return Status::Ok();
    }
    buf.erase(0, begin);
    if (eof) return Status::Ok();
  }
}

void FieldSampler::OnLine(const char* p, size_t len) {
  while (len > 0 && (p[len - 1] == '\r' || p[len - 1] == ' ' || p[len - 1] == '\t')) --len;
  if (len == 0) return;
  dom::element root;
  simdjson::error_code err = json_->parser.parse(p, len, true).get(root);
  if (err == simdjson::NUMBER_ERROR) {
    const std::string zeroed = WithNumbersZeroed(p, len);
    err = json_->parser.parse(zeroed.data(), zeroed.size(), true).get(root);
  }
  if (err || root.type() != dom::element_type::OBJECT) return;
  ++records_;
  for (size_t f = 0; f < tokens_.size(); ++f)
    if (tokens_[f] && Resolves(root, *tokens_[f])) ++present_[f];
  NameWalk walk{&names_, &name_set_, limits_.max_names};
  walk.Walk(root, "", 0);
}

}  // namespace fanfold
