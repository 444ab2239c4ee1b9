// CsvReader: reads CSV (RFC 4180) or TSV from a ByteSource: the first record
// is the header and names the columns; each later record fills the raw slots
// of a FieldTable (raw fields are column names) and goes to a RecordSink,
// which may keep the cells' strings until the end of each chunk (a loan,
// record_reader.h).
// Quoted fields may hold separators, "" escapes and line breaks; an empty
// cell is Missing. Owns its buffers; one reader per thread; reusable.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "common/input/byte_source.h"
#include "common/input/chunk_buffer.h"
#include "common/input/field_table.h"
#include "common/input/record_reader.h"
#include "common/base/scratch_arena.h"
#include "common/base/status.h"
#include "common/base/value.h"

namespace fanfold {

class CsvReader final : public RecordReader {
 public:
  // separator: ',' for CSV, '\t' for TSV.
  CsvReader(const FieldTable& fields, char separator, const ChunkOptions& options = {});

  // Reads every record of src as ReadRecords does (common/input/record_reader.h).
  // Returns InvalidArgument iff a raw field is not a header column, Corrupt
  // iff the header row itself is malformed or a record is longer than
  // options.max_record_bytes; empty input is zero records.
  // Empty lines are skipped; a lone '\r' inside a field is data; a stray
  // quote inside an unquoted field is data. *stats (may be null) is
  // overwritten.
  Status Read(ByteSource& src, RecordSink& sink, ReadStats* stats) override;

  // The header row of the last source read (its column names, unquoted).
  const std::vector<std::string>& header() const { return header_; }

 private:
  enum class CutKind { kRecord, kBlank, kNeedMore };
  struct Cut {
    const char* next = nullptr;  // first byte after the record
    uint64_t newlines = 0;       // '\n' bytes the record spans, terminator included
    uint32_t fields = 0;
    const char* bad = nullptr;   // why the record is malformed, or null
  };
  // A needed field of the record being cut: a view into the chunk, or an
  // offset into scratch_ when "" escapes had to be undone.
  struct Cell {
    int slot;
    const char* ptr;
    size_t scratch_offset;
    size_t len;
    bool in_scratch;
  };

  // Cuts one record starting at p. Returns kNeedMore iff it may continue
  // past end and the source has more (eof false).
  CutKind CutRecord(const char* p, const char* end, bool eof, bool header, Cut* out);
  // The common record: not blank, well formed, its line break before end
  // and none inside quotes, each quote opening a field, closing it or
  // doubled inside it, no "" escape in a read cell. Cuts it as CutRecord
  // would, writes each read cell to its slot in slots_ (every read slot,
  // Missing for an empty cell; a view into the chunk) and returns true;
  // false (slots_ in any state) for any other record.
  // REQUIRES: the header is bound.
  bool CutPlainRecord(const char* p, const char* end, Cut* out);
  // CutPlainRecord reading the bytes with AVX2. REQUIRES: avx2_.
  bool CutPlainRecordAvx2(const char* p, const char* end, Cut* out);
  template <bool kAvx2>
  bool CutPlainRecordWith(const char* p, const char* end, Cut* out);
  // Cuts and hands to sink (as Read does: counted in st->records, *line
  // advanced) the common records from p on while each is one CutPlainRecord
  // takes with the header's field count; returns where it stopped: end, a
  // blank line, or a record the general path must take. *stopped: the sink
  // asked to stop (the record it had is counted).
  const char* CutPlainRun(const char* p, const char* end, RecordSink& sink, uint64_t* line, ReadStats* st,
                          bool* stopped);
  const char* CutPlainRunAvx2(const char* p, const char* end, RecordSink& sink, uint64_t* line, ReadStats* st,
                              bool* stopped);
  template <bool kAvx2>
  const char* CutPlainRunWith(const char* p, const char* end, RecordSink& sink, uint64_t* line, ReadStats* st,
                              bool* stopped);
  void KeepField(bool header, uint32_t field, const char* ptr, size_t scratch_offset, size_t len, bool in_scratch);
  Status BindHeader();

  bool avx2_ = false;  // the CPU has AVX2 (checked at run time)
  char sep_;
  const char* format_;  // "CSV" or "TSV", for messages
  std::vector<std::string> raw_names_;
  std::vector<int> raw_slots_;
  ChunkBuffer chunk_;
  std::vector<std::string> header_;
  std::vector<int> column_slot_;  // per header column: slot to fill, or -1
  // Per header column, the slot its cells go to in slots_ (the spare one
  // for -1 in column_slot_), then the spare again for fields past the header.
  std::vector<Value*> field_cell_;
  // Bit c: column c (< 63) is read; bit 63, set, stands for every column
  // from 63 on (an unread one among them only costs a store to the spare slot).
  uint64_t read_columns_ = 0;
  // The 64-byte block CutPlainRecord last ended a record in (null: none in
  // this chunk) and its separator, line break and quote masks.
  const char* block_ = nullptr;
  uint64_t block_sep_ = 0, block_newline_ = 0, block_quote_ = 0;
  std::vector<Value> slots_;      // the FieldTable's slots, then a spare one
  std::vector<Cell> cells_;
  std::string scratch_;
  // Read cells with "" escapes undone, lent to the sink until the loan
  // ends (record_reader.h); other cells are views into the chunk.
  ScratchArena unescaped_;
};

}  // namespace fanfold
