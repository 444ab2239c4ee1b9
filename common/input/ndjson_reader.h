// NdjsonReader: reads NDJSON (one JSON object per line) from a ByteSource and
// fills the raw slots of a FieldTable, whose raw fields are JSON Pointers
// (RFC 6901), then hands each well-formed record to a RecordSink. Pointers
// are compiled once into a token trie; the reader cuts lines itself and
// parses each once (NdjsonLineParser: simdjson stage 1 and our own walk), converting only
// the values a pointer reads. Which errors make a line malformed is
// ValueChecks' choice (ndjson_line_parser.h). JSON integers within
// [-2^63, 2^64) are exact integer Values. The records' strings are lent to
// the sink a chunk at a time (RecordSink::LendStrings). From a decode-ahead
// source the reader's block study indexes the blocks, cuts their lines and
// parses a share of them on the helper thread (ndjson_block_index.h). One
// reader per thread; reusable across sources (build it once per worker).
#pragma once

#include <cstddef>
#include <memory>

#include "common/input/byte_source.h"
#include "common/input/chunk_buffer.h"
#include "common/input/field_table.h"
#include "common/input/record_reader.h"
#include "common/base/status.h"

namespace fanfold {

class NdjsonReader final : public RecordReader {
 public:
  // Builds a reader for `fields`. Returns InvalidArgument iff a raw field is
  // not a JSON Pointer or is "" (the whole document, not supported).
  static Result<std::unique_ptr<NdjsonReader>> Create(const FieldTable& fields,
                                                      const ChunkOptions& options = {},
                                                      ValueChecks checks = ValueChecks::kReadValues);
  ~NdjsonReader() override;
  NdjsonReader(const NdjsonReader&) = delete;
  NdjsonReader& operator=(const NdjsonReader&) = delete;

  // Reads every record of src as ReadRecords does (common/input/record_reader.h).
  // A record is well formed iff its line is one complete JSON object (as
  // far as the reader's ValueChecks look); empty
  // and whitespace-only lines are skipped without counting. With duplicate
  // keys the first occurrence wins. A number beyond 64-bit integers is its
  // nearest double; beyond the double range (1e400), +/-infinity.
  // *stats (may be null) is overwritten.
  // A line longer than options.max_record_bytes is an error (Corrupt).
  Status Read(ByteSource& src, RecordSink& sink, ReadStats* stats) override;

 private:
  struct Impl;
  explicit NdjsonReader(std::unique_ptr<Impl> impl);
  std::unique_ptr<Impl> impl_;  // keeps simdjson.h out of this header
};

}  // namespace fanfold
