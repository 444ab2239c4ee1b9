// The fast cut of CsvReader (csv_reader.h): records without line breaks in
// quotes, stray quotes or escaped read cells, cut 64 bytes at a time by
// masks (csv_bytes.h), one record or a run of records at a time; anything
// else goes back to the general cut in csv_reader.cc.
#include "common/input/csv/csv_reader.h"

#include <bit>
#include <cstring>

#include "common/input/csv/csv_bytes.h"

namespace fanfold {

using namespace csv_bytes;

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
}  // namespace fanfold
