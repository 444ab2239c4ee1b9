#include "common/input/ndjson_reader.h"

#include <simdjson.h>

#include <algorithm>
#include <cstring>
#include <string>
#include <type_traits>
#include <vector>

#include "common/base/json_syntax.h"
#include "common/input/ndjson_block_index.h"
#include "common/input/ndjson_line_parser.h"
#include "common/base/scratch_arena.h"
#include "common/input/pointer_trie.h"

namespace fanfold {
namespace {

static_assert(std::is_trivially_copyable_v<Value>, "slots are reset by one memcpy");
// ZeroIsMissing compares Value member by member: a member added to Value
// (a size other than these 40 bytes) must be added to that comparison too.
static_assert(sizeof(Value) == 40, "compare the new member of Value in ZeroIsMissing");

// Why a line is not a record, in our words: the column and what was
// expected (JsonLineSyntaxProblem), or, for a line that is JSON by RFC 8259
// but not one the reader takes, what it is.
std::string MalformedReason(std::string_view line, LineVerdict verdict) {
  std::string problem = JsonLineSyntaxProblem(line);
  if (problem.rfind("column ", 0) == 0) return problem;
  switch (verdict) {
    case LineVerdict::kNotObject: return "the line is not a JSON object";
    case LineVerdict::kTooDeep: return "nested deeper than the reader's limit of 1024 levels";
    case LineVerdict::kBadNumber: return "a number that is not valid JSON";
    case LineVerdict::kNotUtf8: return "bytes that are not UTF-8";
    case LineVerdict::kTooLong: return "a line longer than the reader's limit of 4 GiB";
    default: return "not valid JSON";
  }
}

// Asks the cache for bytes [p, p + n).
void Prefetch(const void* p, size_t n) {
  const char* c = static_cast<const char*>(p);
  for (size_t i = 0; i < n; i += 64) __builtin_prefetch(c + i);
}

bool IsJsonSpace(char c) { return c == ' ' || c == '\t' || c == '\r' || c == '\n'; }

// Drops the line's trailing '\r's from *len; false iff that leaves it blank
// (empty or JSON whitespace only): no record and no verdict.
bool TrimLine(const char* p, size_t* len) {
  while (*len > 0 && p[*len - 1] == '\r') --*len;
  if (*len == 0) return false;
  if (*p != '{') {
    size_t i = 0;
    while (i < *len && IsJsonSpace(p[i])) ++i;
    if (i == *len) return false;  // whitespace-only line
  }
  return true;
}

// Copies the strings of record[0, width) that lie in `unescaped` (a
// parser's memory, reused on its next line) into `arena`.
void KeepUnescaped(std::string_view unescaped, Value* record, size_t width, ScratchArena* arena) {
  const auto from = reinterpret_cast<uintptr_t>(unescaped.data());
  for (size_t i = 0; i < width; ++i)
    if (record[i].kind == ValueKind::kString && reinterpret_cast<uintptr_t>(record[i].str.data()) - from < unescaped.size())
      record[i].str = arena->Copy(record[i].str);
}

}  // namespace

// One parse per line (NdjsonLineParser): the lines are cut here, so each
// malformed line counts once, exactly, and the next line is read whatever
// this one held. Stage 1 indexes a group of lines (about kNdjsonGroupBytes) in
// one call; a group it refuses is indexed again line by line, so a line's
// verdict never depends on its neighbours (tests/input/ndjson_group_test.cc).
// From a lending source (decode ahead) the groups of a block's whole lines
// come indexed with the block (NdjsonBlockStudy, on the helper thread when
// threaded); the reader indexes only the lines cut by the blocks' edges. Measured on this project's benchmark data (see
// bench/RESULTS.md): faster than the simdjson DOM parse it replaced, which
// built a tape of every value and converted every number and string, and
// than simdjson On-Demand walking every value for the same checks.
struct NdjsonReader::Impl {
  Impl(const ChunkOptions& options, size_t nslots, ValueChecks checks)
      : chunk(options, simdjson::SIMDJSON_PADDING), parser(checks), slots(nslots), missing(nslots) {}

  // Whether a Value whose bytes are all zero is Value::Missing() (it is
  // where a null pointer is all zero bits, as on every platform we build
  // for): then a record is reset by a memset, which costs about half the
  // block copy of missing values on the benchmark data.
  static bool ZeroIsMissing() {
    Value v;
    std::memset(static_cast<void*>(&v), 0, sizeof v);
    const Value m = Value::Missing();
    return v.kind == m.kind && v.boolean == m.boolean && v.rep == m.rep && v.text_number == m.text_number &&
           std::memcmp(&v.number, &m.number, sizeof v.number) == 0 && v.bits == m.bits &&
           v.str.data() == m.str.data() && v.str.size() == m.str.size();
  }

  // Parses one line, readable up to p + capacity (the chunk's padding
  // included); `grouped`: from the group the parser indexed last
  // (NdjsonLineParser::IndexGroup). Returns false iff the sink asked to stop.
  // index_end: where the line's indexes end among the group's, if known
  // (NdjsonBlockIndex::Line), else kFindIndexes.
  bool OnLine(const char* p, size_t len, size_t capacity, bool grouped, size_t index_end, uint64_t line,
              RecordSink& sink, ReadStats& st) {
    if (!TrimLine(p, &len)) return true;
    // The record goes where the sink wants it (its batch's next row), else
    // in our slots; reset by one memset, or one block copy of missing
    // values (a loop of stores took ~80 instructions a line on the
    // benchmark data, the copy ~60, the memset ~25).
    Value* record = sink.RecordBuffer();
    if (record == nullptr) record = slots.data();
    if (!slots.empty()) {
      if (zero_is_missing)
        std::memset(static_cast<void*>(record), 0, slots.size() * sizeof(Value));
      else
        std::memcpy(static_cast<void*>(record), missing.data(), slots.size() * sizeof(Value));
    }
    ++generation;
    const LineVerdict verdict = grouped ? parser.ParseGrouped(p, len, &nodes, generation, record, index_end)
                                        : parser.Parse(p, len, capacity, &nodes, generation, record);
    if (verdict != LineVerdict::kRecord) {
      Malformed(p, len, verdict, line, st);
      return true;
    }
    ++st.records;
    // The record's strings are lent (Read): those in the chunk stay there;
    // those the parser unescaped (a backslash in them) live only until its
    // next line, so they are copied into the loan's own memory.
    if (const std::string_view u = parser.Unescaped(); !u.empty()) KeepUnescaped(u, record, slots.size(), &loaned);
    sink.set_record_line(line);
    return sink.OnRecord(record);
  }

  // Counts the malformed line p[0, len) (trimmed) and keeps it as a sample
  // while there is room.
  static void Malformed(const char* p, size_t len, LineVerdict verdict, uint64_t line, ReadStats& st) {
    ++st.malformed;
    if (st.samples.size() < ReadStats::kMaxSamples)
      st.samples.push_back(MalformedSample{line, MalformedReason(std::string_view(p, len), verdict)});
  }

  // The lines of a group the study parsed (NdjsonBlockIndex::Line), from
  // p, the group's first byte, on: their verdicts and records as it left
  // them, the records copied into the sink's buffer (or our slots).
  // Returns false iff the sink asked to stop; else *p is past the group.
  bool OnParsedLines(const NdjsonBlockIndex& index, const NdjsonBlockIndex::Group& group, const char* base,
                     const char** p, uint64_t* line, RecordSink& sink, ReadStats& st) {
    const NdjsonBlockIndex::Line* l = index.lines.data() + group.first_line;
    for (const NdjsonBlockIndex::Line* const stop = l + group.line_count; l != stop; ++l) {
      const char* nl = base + l->end;
      ++*line;
      if (!l->blank) {
        if (l->verdict != LineVerdict::kRecord) {
          size_t len = static_cast<size_t>(nl - *p);
          TrimLine(*p, &len);
          Malformed(*p, len, l->verdict, *line, st);
        } else {
          Value* record = sink.RecordBuffer();
          if (record == nullptr) record = slots.data();
          if (!slots.empty())
            std::memcpy(static_cast<void*>(record), index.values.data() + size_t{l->record} * slots.size(),
                        slots.size() * sizeof(Value));
          ++st.records;
          sink.set_record_line(*line);
          if (!sink.OnRecord(record)) return false;
        }
      }
      *p = nl + 1;
    }
    return true;
  }

  // Ends the loan of the chunk's strings (and of `loaned`). Returns false
  // iff the sink asked to stop.
  bool EndLoan(RecordSink& sink) {
    const bool go_on = sink.EndLoan();
    loaned.Reset();
    return go_on;
  }

  ChunkBuffer chunk;
  NdjsonLineParser parser;
  // Indexes (and partly parses) the lenders' blocks (shared with the
  // source that runs it); made with the trie.
  std::shared_ptr<NdjsonBlockStudy> study;
  std::vector<PointerNode> nodes;  // nodes[0] is the root
  std::vector<Value> slots;
  const std::vector<Value> missing;  // as many slots, each Value::Missing()
  const bool zero_is_missing = ZeroIsMissing();
  ScratchArena loaned;  // the unescaped strings lent with the chunk's
  uint64_t generation = 0;
};

// The block study of ndjson_block_index.h (kept here, beside its one
// user, so that the folder stays within its count of files).
void NdjsonBlockStudy::Study(const char* data, size_t size, size_t readable_after,
                             std::unique_ptr<BlockNote>* note) {
  auto* index = dynamic_cast<NdjsonBlockIndex*>(note->get());
  if (index == nullptr) {
    index = new NdjsonBlockIndex;
    note->reset(index);
  }
  index->groups.clear();
  index->indexes.clear();
  index->lines.clear();
  index->values.clear();
  index->strings.Reset();
  // The whole lines: after the first line break, up to the last one.
  const void* first_nl = std::memchr(data, '\n', size);
  if (first_nl == nullptr) return;
  const size_t begin = static_cast<size_t>(static_cast<const char*>(first_nl) - data) + 1;
  const void* last_nl = begin < size ? memrchr(data + begin, '\n', size - begin) : nullptr;
  if (last_nl == nullptr) return;
  const size_t end = static_cast<size_t>(static_cast<const char*>(last_nl) - data);
  for (size_t at = begin; at <= end;) {
    // Up to the first line break kNdjsonGroupBytes on, else the last one.
    const char* cut = NdjsonGroupBreak(data + at, data + end + 1);
    const size_t stop = cut != nullptr ? static_cast<size_t>(cut - data) : end;
    NdjsonBlockIndex::Group g{static_cast<uint32_t>(at), static_cast<uint32_t>(stop), false,
                              static_cast<uint32_t>(index->indexes.size()), 0, 0, 0, false};
    if (parser_.IndexGroup(data + at, stop - at, size + readable_after - at)) {
      const uint32_t* idx = nullptr;
      size_t n = 0;
      parser_.GroupIndexes(&idx, &n);
      g.indexed = true;
      g.count = static_cast<uint32_t>(n);
      index->indexes.insert(index->indexes.end(), idx, idx + n + 1);
      // Its lines: each line's break, and the first of the group's indexes
      // at or past it (idx[n] is the group's length, past every index).
      // Lines of a file tend to have alike shapes: the line before's count
      // of indexes is tried first.
      g.first_line = static_cast<uint32_t>(index->lines.size());
      const bool pick = parse_ && indexed_groups_++ % kNdjsonParseEvery == kNdjsonParseEvery - 1;
      const char* const group_end = data + stop;
      size_t k = 0, shape = 0;
      for (const char* l = data + at;;) {
        const void* found = std::memchr(l, '\n', static_cast<size_t>(group_end - l));
        const char* nl = found != nullptr ? static_cast<const char*>(found) : group_end;
        const auto e = static_cast<uint32_t>(nl - (data + at));
        size_t last = k + shape;
        if (!(last <= n && (last == k || idx[last - 1] < e) && idx[last] >= e)) {
          last = static_cast<size_t>(std::lower_bound(idx + k, idx + n, e) - idx);
          shape = last - k;
        }
        index->lines.push_back(
            {static_cast<uint32_t>(nl - data), static_cast<uint32_t>(last), false, LineVerdict::kRecord, 0});
        k = last;
        if (nl == group_end) break;
        l = nl + 1;
      }
      g.line_count = static_cast<uint32_t>(index->lines.size() - g.first_line);
      // The group picked to parse, if its records' slots fit the block's
      // budget for them (many short lines of a wide job would not).
      g.parsed = pick && (index->values.size() + size_t{g.line_count} * width_) * sizeof(Value) <= kNdjsonParsedBytes;
      const char* l = data + at;
      for (uint32_t j = 0; g.parsed && j < g.line_count; ++j) {
        // As the reader's OnLine, into the note.
        NdjsonBlockIndex::Line& line = index->lines[g.first_line + j];
        size_t len = static_cast<size_t>(data + line.end - l);
        line.blank = !TrimLine(l, &len);
        if (!line.blank) {
          const size_t at_value = index->values.size();
          line.record = static_cast<uint32_t>(width_ == 0 ? 0 : at_value / width_);
          index->values.resize(at_value + width_);  // Missing
          Value* record = index->values.data() + at_value;
          line.verdict = parser_.ParseGrouped(l, len, &nodes_, ++generation_, record, line.index_end);
          if (line.verdict != LineVerdict::kRecord)
            index->values.resize(at_value);
          else if (const std::string_view u = parser_.Unescaped(); !u.empty())
            KeepUnescaped(u, record, width_, &index->strings);
        }
        l = data + line.end + 1;
      }
    }
    index->groups.push_back(g);
    at = stop + 1;
  }
}

NdjsonReader::NdjsonReader(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
NdjsonReader::~NdjsonReader() = default;

Result<std::unique_ptr<NdjsonReader>> NdjsonReader::Create(const FieldTable& fields, const ChunkOptions& options,
                                                           ValueChecks checks) {
  Result<std::vector<PointerNode>> nodes = BuildPointerTrie(fields);
  if (!nodes.ok()) return nodes.status();
  auto impl = std::make_unique<Impl>(options, fields.size(), checks);
  impl->nodes = std::move(*nodes);
  impl->study = std::make_shared<NdjsonBlockStudy>(impl->nodes, fields.size(), checks);
  return std::unique_ptr<NdjsonReader>(new NdjsonReader(std::move(impl)));
}

Status NdjsonReader::Read(ByteSource& src, RecordSink& sink, ReadStats* stats) {
  ReadStats local;
  ReadStats& st = stats != nullptr ? *stats : local;
  st = ReadStats{};
  Impl& im = *impl_;
  im.chunk.Reset();
  if (BlockLender* lender = src.lender()) lender->SetStudy(im.study);
  uint64_t line = 0;
  bool at_start = src.starts_file();
  for (;;) {
    Result<size_t> filled = im.chunk.Fill(src);
    st.raw_bytes = im.chunk.total_read();
    if (!filled.ok()) {
      if (!im.chunk.over_limit()) return filled.status();
      return filled.status().WithContext("line " + std::to_string(line + 1));  // the record too long
    }
    const bool last = im.chunk.eof();
    if (at_start) {
      if (im.chunk.size() < 3 && !last) continue;
      // A UTF-8 byte order mark (RFC 8259 section 8.1 lets a parser ignore
      // it) is no part of the first record.
      if (im.chunk.size() >= 3 && std::memcmp(im.chunk.data(), "\xEF\xBB\xBF", 3) == 0) im.chunk.Consume(3);
      at_start = false;
    }
    const char* p = im.chunk.data();
    const char* end = p + im.chunk.size();
    // The strings of this chunk's records stay valid until the chunk is
    // refilled: lent to the sink until then (RecordSink::LendStrings), so a
    // batch keeps views, not copies.
    sink.LendStrings();
    // The groups the study indexed, if the data are its block's.
    auto* index = static_cast<NdjsonBlockIndex*>(im.chunk.note(im.study.get()));
    const char* base = index != nullptr ? im.chunk.note_base() : nullptr;
    size_t next = 0;  // index->groups[next]: the next group indexed with the block
    while (p < end) {
      const NdjsonBlockIndex::Group* indexed = nullptr;
      if (index != nullptr && next < index->groups.size()) indexed = &index->groups[next];
      const char* group_end;
      bool grouped;
      if (indexed != nullptr && p == base + indexed->begin) {
        ++next;
        // The block was indexed on the helper's core: ask for the next
        // group's bytes and indexes now, so that the walk (one dependent
        // load after another) finds them in this core's cache. A group the
        // study parsed is not walked: its records are copied in order.
        if (next < index->groups.size() && !index->groups[next].parsed) {
          const NdjsonBlockIndex::Group& g = index->groups[next];
          Prefetch(base + g.begin, g.end - g.begin);
          if (g.indexed) Prefetch(index->indexes.data() + g.first, (g.count + 1) * sizeof(uint32_t));
        }
        group_end = base + indexed->end;
        if (indexed->parsed) {
          if (!im.OnParsedLines(*index, *indexed, base, &p, &line, sink, st)) return Status::Ok();
          continue;
        }
        grouped = indexed->indexed && im.parser.AdoptGroup(p, indexed->end - indexed->begin, im.chunk.room_after(p),
                                                           index->indexes.data() + indexed->first, indexed->count);
      } else {
        // A group of lines: up to the first line break kNdjsonGroupBytes on,
        // else the chunk's last line break (or its end, at the end of the
        // text), or the line break before the block's first indexed group.
        // Stage 1 indexes the group in one call (IndexGroup); a group it
        // refuses goes line by line.
        const char* stop = indexed != nullptr && p < base + indexed->begin ? base + indexed->begin - 1 : end;
        group_end = NdjsonGroupBreak(p, stop);
        if (group_end == nullptr)
          group_end = stop != end ? stop : last ? end : static_cast<const char*>(memrchr(p, '\n', static_cast<size_t>(stop - p)));
        if (group_end == nullptr) break;  // an incomplete line: keep it for the next chunk
        grouped = im.parser.IndexGroup(p, static_cast<size_t>(group_end - p), im.chunk.room_after(p));
      }
      // Its lines, each up to its line break (the group ends at one, or at
      // the end of the text): as the study cut them, if it indexed the
      // group, else found here.
      if (grouped && indexed != nullptr && p == base + indexed->begin) {
        const NdjsonBlockIndex::Line* l = index->lines.data() + indexed->first_line;
        for (const NdjsonBlockIndex::Line* const stop = l + indexed->line_count; l != stop; ++l) {
          const char* nl = base + l->end;
          ++line;
          if (!im.OnLine(p, static_cast<size_t>(nl - p), im.chunk.room_after(p), true, l->index_end, line, sink, st))
            return Status::Ok();
          p = nl + 1;
        }
        continue;
      }
      while (p < group_end || (p == group_end && group_end != end)) {
        const char* nl = static_cast<const char*>(std::memchr(p, '\n', static_cast<size_t>(group_end - p)));
        if (nl == nullptr) nl = group_end;
        ++line;
        if (!im.OnLine(p, static_cast<size_t>(nl - p), im.chunk.room_after(p), grouped, kFindIndexes, line, sink,
                       st))
          return Status::Ok();
        p = nl == end ? end : nl + 1;
      }
    }
    if (!im.EndLoan(sink) || last) return Status::Ok();
    im.chunk.Consume(static_cast<size_t>(p - im.chunk.data()));
  }
}

}  // namespace fanfold
