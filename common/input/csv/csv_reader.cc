#include "common/input/csv/csv_reader.h"

#include <algorithm>
#include <bit>
#include <cstring>

#include "common/input/csv/csv_bytes.h"

namespace fanfold {

using namespace csv_bytes;

namespace {

uint64_t CountNewlines(const char* b, const char* e) {
  return static_cast<uint64_t>(std::count(b, e, '\n'));
}

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
