// ReadRecords: turns a shard's decompressed byte stream into records. For
// each well-formed record it fills the raw-field slots of a FieldTable (the
// rest stay Missing) and calls the sink; malformed records are skipped,
// counted, and the first few kept as samples with their line numbers.
// NDJSON: one JSON value per line, fields by JSON Pointer (RFC 6901).
// CSV/TSV: header row, RFC 4180 quoting, fields by column name; an empty
// cell is Missing. Strings in slots stay valid only during the sink call.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <vector>

#include "common/input/byte_source.h"
#include "common/input/record_format.h"
#include "common/input/field_table.h"
#include "common/base/status.h"
#include "common/base/value.h"

namespace fanfold {

// How strictly a reader judges the values no field reads (the job file's
// "inputs"/"check_unread_values"). NDJSON: kReadValues checks the whole
// structure of a line but the spelling of numbers and true/false/null only
// where a field reads them; kEveryValue checks every value exactly as
// RFC 8259 says (see common/input/ndjson_line_parser.h). CSV/TSV read
// every cell either way.
enum class ValueChecks { kReadValues, kEveryValue };

struct MalformedSample {
  uint64_t line = 0;   // 1-based line where the record starts
  std::string reason;  // e.g. "unclosed string", "expected 7 fields, found 6"
};

struct ReadStats {
  static constexpr size_t kMaxSamples = 5;
  uint64_t records = 0;    // well-formed records passed to the sink
  uint64_t malformed = 0;  // records skipped as malformed
  uint64_t raw_bytes = 0;  // decompressed bytes read
  std::vector<MalformedSample> samples;  // the first kMaxSamples malformed
};

class RecordSink {
 public:
  virtual ~RecordSink() = default;
  // slots has fields.size() entries. Return false to stop reading early.
  virtual bool OnRecord(Value* slots) = 0;

  // Where a reader may build the next record's fields.size() slots, or
  // null (the default): then it builds them in its own. A reader that uses
  // the buffer resets every slot in it first, and passes it to the next
  // OnRecord, or, for a line that is no record, asks again (the same
  // buffer comes back). Saves the sink a copy of every slot; the strings
  // still live only during OnRecord. Valid until the next OnRecord.
  virtual Value* RecordBuffer() { return nullptr; }

  // The 1-based line on which the record now handed to OnRecord starts: the
  // readers set it just before each call (a lookup table's errors name
  // lines). A sink that wraps another does not pass it on.
  uint64_t record_line() const { return record_line_; }
  void set_record_line(uint64_t line) { record_line_ = line; }

  // Strings lent past the sink call. A reader may open a loan with
  // LendStrings(): every string it hands over until it ends the loan with
  // EndLoan() stays valid until that EndLoan call. It ends the loan before
  // those strings go (its buffer refilled or reused) and before its Read
  // returns, unless a sink call returned false. A sink that keeps records
  // may keep views instead of copies during a loan and must be done with
  // them when EndLoan returns; EndLoan returning false stops the reader as
  // OnRecord's false does. A sink that wraps another passes both on.
  // Outside a loan a string lives only during its OnRecord call.
  virtual void LendStrings() {}
  virtual bool EndLoan() { return true; }

 private:
  uint64_t record_line_ = 0;
};

// Reads every record of src. Returns an error for an unreadable/corrupt
// stream, or (CSV/TSV) a referenced column missing from the header; records
// read before the error have already reached the sink.
Status ReadRecords(RecordFormat format, ByteSource& src, const FieldTable& fields, RecordSink& sink,
                   ReadStats* stats, ValueChecks checks = ValueChecks::kReadValues);

// RecordReader: reads the records of one format, shard after shard, keeping
// its buffers and parser between them (a worker processes thousands of tiny
// shards; each new reader would allocate megabytes). Each format's reader
// implements it (see its row in common/input/record_format.h). Not
// thread-safe.
class RecordReader {
 public:
  // The reader of format's row. fields must outlive the reader.
  static Result<std::unique_ptr<RecordReader>> Create(RecordFormat format, const FieldTable& fields,
                                                      ValueChecks checks = ValueChecks::kReadValues);
  virtual ~RecordReader() = default;
  // As ReadRecords.
  virtual Status Read(ByteSource& src, RecordSink& sink, ReadStats* stats) = 0;
};

}  // namespace fanfold
