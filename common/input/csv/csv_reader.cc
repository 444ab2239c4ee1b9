#include "common/input/csv/csv_reader.h"

#include <algorithm>
#include <bit>
#include <cstring>

#if defined(__SSE2__)
#include <emmintrin.h>
#endif
#if defined(__x86_64__) && defined(__GNUC__)
#include <immintrin.h>
#endif

namespace fanfold {
namespace {

uint64_t CountNewlines(const char* b, const char* e) {
  return static_cast<uint64_t>(std::count(b, e, '\n'));
}

static_assert(std::endian::native == std::endian::little, "ScanUnquoted takes the lowest byte as the first");

// Bytes readable after the data: ScanUnquoted loads 8 bytes at a time,
// MasksAt 64.
constexpr size_t kScanPadding = 64;

// Which of the 64 bytes at q are `sep`, '\n' and '"' (bit i: byte q[i]).
struct ByteMasks {
  uint64_t sep, newline, quote;
};

ByteMasks MasksAt(const char* q, char sep) {
#if defined(__SSE2__)
  const __m128i seps = _mm_set1_epi8(sep);
  const __m128i newlines = _mm_set1_epi8('\n');
  const __m128i quotes = _mm_set1_epi8('"');
  ByteMasks m{0, 0, 0};
  for (int i = 0; i < 4; ++i) {
    const __m128i v = _mm_loadu_si128(reinterpret_cast<const __m128i*>(q + 16 * i));
    m.sep |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, seps)))) << (16 * i);
    m.newline |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, newlines))))
                 << (16 * i);
    m.quote |= static_cast<uint64_t>(static_cast<uint32_t>(_mm_movemask_epi8(_mm_cmpeq_epi8(v, quotes)))) << (16 * i);
  }
  return m;
#else
  ByteMasks m{0, 0, 0};
  for (uint32_t i = 0; i < 64; ++i) {
    m.sep |= static_cast<uint64_t>(q[i] == sep) << i;
    m.newline |= static_cast<uint64_t>(q[i] == '\n') << i;
    m.quote |= static_cast<uint64_t>(q[i] == '"') << i;
  }
  return m;
#endif
}

#if defined(__x86_64__) && defined(__GNUC__)
#define FANFOLD_CSV_AVX2 1
// MasksAt with two 32-byte AVX2 loads. Only on a CPU that has AVX2 (the
// build sets no -march: the caller checks at run time).
__attribute__((target("avx2"))) inline ByteMasks MasksAtAvx2(const char* q, char sep) {
  const __m256i seps = _mm256_set1_epi8(sep);
  const __m256i newlines = _mm256_set1_epi8('\n');
  const __m256i quotes = _mm256_set1_epi8('"');
  const __m256i lo = _mm256_loadu_si256(reinterpret_cast<const __m256i*>(q));
  const __m256i hi = _mm256_loadu_si256(reinterpret_cast<const __m256i*>(q + 32));
  auto mask = [&](__m256i c) __attribute__((target("avx2"))) {
    return static_cast<uint64_t>(static_cast<uint32_t>(_mm256_movemask_epi8(_mm256_cmpeq_epi8(lo, c)))) |
           static_cast<uint64_t>(static_cast<uint32_t>(_mm256_movemask_epi8(_mm256_cmpeq_epi8(hi, c)))) << 32;
  };
  return ByteMasks{mask(seps), mask(newlines), mask(quotes)};
}
#endif

// The masks of the 64 bytes at q, by AVX2 or SSE2.
template <bool kAvx2>
inline __attribute__((always_inline)) ByteMasks Masks(const char* q, char sep) {
#if defined(FANFOLD_CSV_AVX2)
  if constexpr (kAvx2) return MasksAtAvx2(q, sep);
#endif
  return MasksAt(q, sep);
}

// Scans an unquoted field: the first separator or '\n' at or after q, or
// end. Eight bytes per step (SWAR zero-byte test on x ^ broadcast(c)): its
// lowest flagged byte is always a true match, later ones may be false, so
// only the lowest is used. REQUIRES: kScanPadding readable bytes after end.
const char* ScanUnquoted(const char* q, const char* end, char sep) {
  constexpr uint64_t kOnes = 0x0101010101010101ULL;
  constexpr uint64_t kHigh = 0x8080808080808080ULL;
  const uint64_t seps = kOnes * static_cast<uint8_t>(sep);
  const uint64_t newlines = kOnes * static_cast<uint8_t>('\n');
  for (; q < end; q += 8) {
    uint64_t w;
    std::memcpy(&w, q, 8);
    const uint64_t a = w ^ seps;
    const uint64_t b = w ^ newlines;
    const uint64_t hits = (((a - kOnes) & ~a) | ((b - kOnes) & ~b)) & kHigh;
    if (hits != 0) {
      const char* hit = q + (std::countr_zero(hits) >> 3);
      return hit < end ? hit : end;
    }
  }
  return end;
}

// A cell's value before its text is set: a string with nothing read from
// its text yet; and an empty cell's, Missing.
constexpr Value StringCell() {
  Value v;
  v.kind = ValueKind::kString;
  return v;
}
constexpr Value kStringCell = StringCell();
constexpr Value kMissingCell{};

// Header listings in error messages stop after this many names.
constexpr size_t kMaxListedColumns = 40;

}  // namespace

CsvReader::CsvReader(const FieldTable& fields, char separator, const ChunkOptions& options)
    : sep_(separator), format_(separator == '\t' ? "TSV" : "CSV"), chunk_(options, kScanPadding),
      slots_(fields.size() + 1) {
#if defined(FANFOLD_CSV_AVX2)
  avx2_ = __builtin_cpu_supports("avx2");
#endif
  for (size_t s = 0; s < fields.size(); ++s) {
    if (fields.slot(s).derived) continue;
    raw_names_.push_back(fields.slot(s).name);
    raw_slots_.push_back(static_cast<int>(s));
  }
  cells_.reserve(raw_slots_.size());
}

void CsvReader::KeepField(bool header, uint32_t field, const char* ptr, size_t scratch_offset, size_t len,
                          bool in_scratch) {
  if (header) {
    if (in_scratch) {
      header_.emplace_back(scratch_, scratch_offset, len);
    } else {
      header_.emplace_back(ptr, len);
    }
    return;
  }
  cells_.push_back(Cell{column_slot_[field], ptr, scratch_offset, len, in_scratch});
}

CsvReader::CutKind CsvReader::CutRecord(const char* p, const char* end, bool eof, bool header, Cut* out) {
  // An empty line (LF or CRLF alone) is no record.
  if (p < end && *p == '\n') {
    *out = Cut{p + 1, 1, 0, nullptr};
    return CutKind::kBlank;
  }
  if (p < end && *p == '\r') {
    if (p + 1 == end) {
      if (!eof) return CutKind::kNeedMore;
      *out = Cut{end, 0, 0, nullptr};
      return CutKind::kBlank;
    }
    if (p[1] == '\n') {
      *out = Cut{p + 2, 1, 0, nullptr};
      return CutKind::kBlank;
    }
  }
  scratch_.clear();
  cells_.clear();
  if (header) header_.clear();
  const char* bad = nullptr;
  uint64_t newlines = 0;
  uint32_t field = 0;
  const char* q = p;
  for (;;) {
    const bool want = header || (field < column_slot_.size() && column_slot_[field] >= 0);
    const char* content = q;
    size_t len = 0;
    size_t scratch_offset = 0;
    bool in_scratch = false;
    bool record_end = false;
    if (q < end && *q == '"') {
      ++q;
      content = q;
      const char* segment = q;
      const char* content_end;
      for (;;) {
        const char* dq = static_cast<const char*>(std::memchr(q, '"', static_cast<size_t>(end - q)));
        if (dq == nullptr) {
          if (!eof) return CutKind::kNeedMore;
          newlines += CountNewlines(q, end);
          if (bad == nullptr) bad = "unclosed quote at end of input";
          content_end = q = end;
          break;
        }
        newlines += CountNewlines(q, dq);
        if (dq + 1 == end && !eof) return CutKind::kNeedMore;  // "" or a closing quote?
        if (dq + 1 < end && dq[1] == '"') {
          if (want) {
            if (!in_scratch) scratch_offset = scratch_.size();
            in_scratch = true;
            scratch_.append(segment, static_cast<size_t>(dq + 1 - segment));  // keeps one quote
          }
          q = segment = dq + 2;
          continue;
        }
        content_end = dq;
        q = dq + 1;
        break;
      }
      if (in_scratch) {
        scratch_.append(segment, static_cast<size_t>(content_end - segment));
        len = scratch_.size() - scratch_offset;
      } else {
        len = static_cast<size_t>(content_end - content);
      }
      // After the closing quote: a separator, a line end, or the end.
      if (q == end) {
        record_end = true;
      } else if (*q == sep_) {
        ++q;
      } else if (*q == '\n') {
        record_end = true;
        ++newlines;
        ++q;
      } else if (*q == '\r' && q + 1 < end && q[1] == '\n') {
        record_end = true;
        ++newlines;
        q += 2;
      } else if (*q == '\r' && q + 1 == end) {
        if (!eof) return CutKind::kNeedMore;
        record_end = true;
        ++q;
      } else {
        if (bad == nullptr) bad = "text after a closing quote";
        q = ScanUnquoted(q, end, sep_);
        if (q == end && !eof) return CutKind::kNeedMore;
        if (q < end && *q == sep_) {
          ++q;
        } else {
          record_end = true;
          if (q < end) {
            ++newlines;
            ++q;
          }
        }
      }
    } else {
      q = ScanUnquoted(q, end, sep_);
      if (q == end && !eof) return CutKind::kNeedMore;
      len = static_cast<size_t>(q - content);
      if (q < end && *q == sep_) {
        ++q;
      } else {
        record_end = true;
        if (len > 0 && content[len - 1] == '\r') --len;  // CRLF line end
        if (q < end) {
          ++newlines;
          ++q;
        }
      }
    }
    if (want) KeepField(header, field, content, scratch_offset, len, in_scratch);
    ++field;
    if (record_end) break;
  }
  *out = Cut{q, newlines, field, bad};
  return CutKind::kRecord;
}

template <bool kAvx2>
inline __attribute__((always_inline)) bool CsvReader::CutPlainRecordWith(const char* p, const char* end, Cut* out) {
  // Each field's cell goes straight to its slot: unread columns, and any
  // past the header's count, to the spare slot at the end of slots_.
  Value* const* const cell_of = field_cell_.data();
  const uint32_t last_column = static_cast<uint32_t>(field_cell_.size() - 1);
  uint32_t field = 0;
  const char* start = p;  // of the current field
  // A quoted field: its opening quote is the field's first byte; inside it
  // separators are data and "" is one quote; after the closing quote comes a
  // separator or the line end. Anything else here (a line break inside the
  // quotes, a stray quote in an unquoted field, text after the closing
  // quote, a read cell with "" escapes) is left to the general cut.
  bool in_quotes = false;
  bool quoted = false;         // the current field began with a quote
  bool escaped = false;        // ... and holds a "" escape
  const char* closed = nullptr;  // its closing quote
  const char* skip = p;        // bytes before skip are no event (an escape's second quote)
  // Bit 0: the current field's column is read. Shifted (arithmetically) at
  // each field, so the top bit stands for every column from 63 on. A local
  // copy: the cell stores below could alias the member.
  int64_t read_here = static_cast<int64_t>(read_columns_);
  // Ends the current field at `at` (a separator, or the line break iff
  // line_end): writes its cell if its column is read. False iff the general
  // cut must do it.
  auto end_field = [&](const char* at, bool line_end) {
    if ((read_here & 1) == 0) return true;  // a column no field reads
    const char* from = start;
    size_t len = static_cast<size_t>(at - start);
    if (quoted) {
      if (escaped) return false;  // the general cut undoes the escapes
      from = start + 1;
      len = static_cast<size_t>(closed - from);
    } else if (line_end && len > 0 && start[len - 1] == '\r') {
      --len;  // CRLF line end
    }
    Value& v = *cell_of[std::min(field, last_column)];
    if (len > 0) {
      v = kStringCell;
      v.str = std::string_view(from, len);
    } else {
      v = kMissingCell;
    }
    return true;
  };
  // 64-byte blocks. The block holding p may be the one the last record
  // ended in: its masks are kept (block_), so each block of the chunk is
  // read once however many records it holds.
  const char* b;
  ByteMasks m;
  if (block_ != nullptr && p >= block_ && p < block_ + 64) {
    b = block_;
    m = ByteMasks{block_sep_, block_newline_, block_quote_};
  } else {
    b = p;
    m = Masks<kAvx2>(b, sep_);
    if (end - b < 64) {  // only the bytes before end count
      const uint64_t inside = (uint64_t{1} << (end - b)) - 1;
      m.sep &= inside;
      m.newline &= inside;
      m.quote &= inside;
    }
  }
  // Bits before p belong to earlier records.
  uint64_t live = ~uint64_t{0} << (p - b);
  for (;;) {
    const uint64_t sep = m.sep & live;
    const uint64_t newline = m.newline & live;
    const uint64_t quote = m.quote & live;
    if (quote == 0 && !in_quotes) {
      // The common block: fields end at separators, the record at the
      // first line break.
      const uint64_t record = newline != 0 ? (newline & (0 - newline)) - 1 : ~uint64_t{0};
      for (uint64_t s = sep & record; s != 0; s &= s - 1) {
        const char* at = b + std::countr_zero(s);
        if (!end_field(at, false)) return false;
        ++field;
        read_here >>= 1;
        start = at + 1;
        quoted = false;
      }
      if (newline != 0) {
        const char* nl = b + std::countr_zero(newline);
        if (!end_field(nl, true)) return false;
        *out = Cut{nl + 1, 1, field + 1, nullptr};
        block_ = b;
        block_sep_ = m.sep;
        block_newline_ = m.newline;
        block_quote_ = m.quote;
        return true;
      }
    } else {
      // A block with quotes, or inside a quoted field: every event in order.
      for (uint64_t e = sep | newline | quote; e != 0; e &= e - 1) {
        const char* at = b + std::countr_zero(e);
        if (at < skip) continue;
        const char c = *at;
        if (in_quotes) {
          if (c == '\n') return false;  // a line break inside quotes
          if (c != '"') continue;        // a separator inside quotes is data
          if (at + 2 >= end) return false;  // what follows is not in the chunk yet
          if (at[1] == '"') {  // "" is one quote
            escaped = true;
            skip = at + 2;
            continue;
          }
          in_quotes = false;
          closed = at;
          // Only a separator or a line end may follow the closing quote.
          if (at[1] != sep_ && at[1] != '\n' && !(at[1] == '\r' && at[2] == '\n')) return false;
          continue;
        }
        if (c == '"') {
          if (at != start || quoted) return false;  // a stray quote, or text after a closing quote
          in_quotes = quoted = true;
          escaped = false;
          continue;
        }
        if (!end_field(at, c == '\n')) return false;
        if (c == '\n') {
          *out = Cut{at + 1, 1, field + 1, nullptr};
          block_ = b;
          block_sep_ = m.sep;
          block_newline_ = m.newline;
          block_quote_ = m.quote;
          return true;
        }
        ++field;
        read_here >>= 1;
        start = at + 1;
        quoted = false;
      }
    }
    b += 64;
    if (b >= end) break;
    m = Masks<kAvx2>(b, sep_);
    if (end - b < 64) {
      const uint64_t inside = (uint64_t{1} << (end - b)) - 1;
      m.sep &= inside;
      m.newline &= inside;
      m.quote &= inside;
    }
    live = ~uint64_t{0};
  }
  return false;  // no line break before end: the general cut decides
}

template <bool kAvx2>
inline __attribute__((always_inline)) const char* CsvReader::CutPlainRunWith(const char* p, const char* end,
                                                                              RecordSink& sink, uint64_t* line,
                                                                              ReadStats* st, bool* stopped) {
  const size_t columns = header_.size();
  while (p < end && *p != '\n' && *p != '\r') {
    Cut cut;
    if (!CutPlainRecordWith<kAvx2>(p, end, &cut) || cut.fields != columns) break;
    ++st->records;
    sink.set_record_line(*line);
    *line += cut.newlines;
    p = cut.next;
    if (!sink.OnRecord(slots_.data())) {
      *stopped = true;
      break;
    }
  }
  return p;
}

bool CsvReader::CutPlainRecord(const char* p, const char* end, Cut* out) {
  return CutPlainRecordWith<false>(p, end, out);
}

const char* CsvReader::CutPlainRun(const char* p, const char* end, RecordSink& sink, uint64_t* line, ReadStats* st,
                                   bool* stopped) {
  return CutPlainRunWith<false>(p, end, sink, line, st, stopped);
}

#if defined(FANFOLD_CSV_AVX2)
__attribute__((target("avx2"))) bool CsvReader::CutPlainRecordAvx2(const char* p, const char* end, Cut* out) {
  return CutPlainRecordWith<true>(p, end, out);
}

__attribute__((target("avx2"))) const char* CsvReader::CutPlainRunAvx2(const char* p, const char* end,
                                                                       RecordSink& sink, uint64_t* line,
                                                                       ReadStats* st, bool* stopped) {
  return CutPlainRunWith<true>(p, end, sink, line, st, stopped);
}
#else
bool CsvReader::CutPlainRecordAvx2(const char* p, const char* end, Cut* out) { return CutPlainRecord(p, end, out); }

const char* CsvReader::CutPlainRunAvx2(const char* p, const char* end, RecordSink& sink, uint64_t* line,
                                       ReadStats* st, bool* stopped) {
  return CutPlainRun(p, end, sink, line, st, stopped);
}
#endif

Status CsvReader::BindHeader() {
  column_slot_.assign(header_.size(), -1);
  for (size_t i = 0; i < raw_names_.size(); ++i) {
    auto it = std::find(header_.begin(), header_.end(), raw_names_[i]);
    if (it == header_.end()) {
      std::string listing;
      for (size_t c = 0; c < header_.size() && c < kMaxListedColumns; ++c) {
        if (c) listing += ", ";
        listing += header_[c];
      }
      if (header_.size() > kMaxListedColumns) {
        listing += ", ... (" + std::to_string(header_.size() - kMaxListedColumns) + " more)";
      }
      return Status::InvalidArgument("column '" + raw_names_[i] + "' is not in the header of this " + format_ +
                                     " input; header has: " + listing);
    }
    // With duplicate column names the first one wins.
    size_t column = static_cast<size_t>(it - header_.begin());
    if (column_slot_[column] < 0) column_slot_[column] = raw_slots_[i];
  }
  const int spare = static_cast<int>(slots_.size() - 1);
  field_cell_.clear();
  for (int slot : column_slot_) field_cell_.push_back(&slots_[static_cast<size_t>(slot >= 0 ? slot : spare)]);
  field_cell_.push_back(&slots_[static_cast<size_t>(spare)]);  // every field past the header's count
  read_columns_ = ~uint64_t{0};
  for (size_t c = 0; c < column_slot_.size() && c < 63; ++c)
    if (column_slot_[c] < 0) read_columns_ &= ~(uint64_t{1} << c);
  return Status::Ok();
}

Status CsvReader::Read(ByteSource& src, RecordSink& sink, ReadStats* stats) {
  ReadStats local;
  ReadStats& st = stats != nullptr ? *stats : local;
  st = ReadStats{};
  chunk_.Reset();
  column_slot_.clear();
  bool have_header = false;
  bool at_start = true;
  uint64_t line = 1;  // line on which the next record starts
  for (;;) {
    Result<size_t> filled = chunk_.Fill(src);
    st.raw_bytes = chunk_.total_read();
    if (!filled.ok()) {
      if (!chunk_.over_limit()) return filled.status();
      return filled.status().WithContext("line " + std::to_string(line));  // the record too long
    }
    const bool last = chunk_.eof();
    if (at_start) {
      if (chunk_.size() < 3 && !last) continue;
      // A UTF-8 byte order mark is no part of the first column's name.
      if (chunk_.size() >= 3 && std::memcmp(chunk_.data(), "\xEF\xBB\xBF", 3) == 0) chunk_.Consume(3);
      at_start = false;
    }
    const char* p = chunk_.data();
    const char* end = p + chunk_.size();
    block_ = nullptr;  // the chunk may have moved
    // The cells of this chunk's records stay valid until the chunk moves:
    // lent to the sink until then.
    sink.LendStrings();
    auto end_loan = [&] {
      const bool go_on = sink.EndLoan();
      unescaped_.Reset();
      return go_on;
    };
    while (p < end) {
      if (have_header) {
        // The common records, one after another, without leaving the fast cut.
        bool stopped = false;
        p = avx2_ ? CutPlainRunAvx2(p, end, sink, &line, &st, &stopped) : CutPlainRun(p, end, sink, &line, &st, &stopped);
        if (stopped) {
          end_loan();
          return Status::Ok();
        }
        if (p >= end) break;
      }
      Cut cut;
      // The common record writes its cells to slots_ as it is cut; any
      // other goes through CutRecord and cells_.
      const bool plain = have_header && *p != '\n' && *p != '\r' &&
                         (avx2_ ? CutPlainRecordAvx2(p, end, &cut) : CutPlainRecord(p, end, &cut));
      const CutKind kind = plain ? CutKind::kRecord : CutRecord(p, end, last, !have_header, &cut);
      if (kind == CutKind::kNeedMore) break;
      const uint64_t record_line = line;
      line += cut.newlines;
      p = cut.next;
      if (kind == CutKind::kBlank) continue;
      if (!have_header) {
        if (cut.bad != nullptr) {
          end_loan();
          return Status::Corrupt(std::string("malformed ") + format_ + " header on line " +
                                 std::to_string(record_line) + ": " + cut.bad);
        }
        if (Status bound = BindHeader(); !bound.ok()) {
          end_loan();
          return bound;
        }
        have_header = true;
        continue;
      }
      if (cut.bad != nullptr || cut.fields != header_.size()) {
        ++st.malformed;
        if (st.samples.size() < ReadStats::kMaxSamples) {
          st.samples.push_back(MalformedSample{
              record_line, cut.bad != nullptr ? std::string(cut.bad)
                                              : "expected " + std::to_string(header_.size()) + " fields, found " +
                                                    std::to_string(cut.fields)});
        }
        continue;
      }
      if (!plain) {
        std::fill(slots_.begin(), slots_.end(), Value::Missing());
        for (const Cell& cell : cells_) {
          if (cell.len == 0) continue;  // an empty cell is Missing
          slots_[cell.slot] = Value::String(
              cell.in_scratch ? unescaped_.Copy(std::string_view(scratch_.data() + cell.scratch_offset, cell.len))
                              : std::string_view(cell.ptr, cell.len));
        }
      }
      ++st.records;
      sink.set_record_line(record_line);
      if (!sink.OnRecord(slots_.data())) {
        end_loan();
        return Status::Ok();
      }
    }
    if (!end_loan() || last) return Status::Ok();
    chunk_.Consume(static_cast<size_t>(p - chunk_.data()));
  }
}

}  // namespace fanfold
