// Fuzz target: bytes → ReadRecords (CSV, then TSV) through a MemorySource,
// with raw fields named like columns; then each format again through a reader
// with a tiny chunk size fed in uneven pieces, which must see exactly the
// same records (a record's fields cannot depend on where reads were cut).
#include <cstddef>
#include <cstdint>
#include <string>

#include "common/csv_reader.h"
#include "common/record_reader.h"
#include "tests/fuzz/fuzz_reader_util.h"

using namespace fanfold;

namespace {

void Check(RecordFormat format, char sep, const FieldTable& fields, const std::string& bytes, size_t chunk) {
  std::unique_ptr<ByteSource> src = MemorySource(bytes);
  TouchSink whole(fields);
  ReadStats whole_stats;
  Status s1 = ReadRecords(format, *src, fields, whole, &whole_stats);

  CsvReader reader(fields, sep, chunk);
  ChoppySource choppy(bytes, 13);
  TouchSink cut(fields);
  ReadStats cut_stats;
  Status s2 = reader.Read(choppy, cut, &cut_stats);

  if (s1.ok() != s2.ok() || whole.records() != cut.records() || whole.hash() != cut.hash() ||
      whole_stats.records != cut_stats.records || whole_stats.malformed != cut_stats.malformed)
    __builtin_trap();
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  // Column names only: a name missing from the header makes Read fail
  // before any record, so keep the set small and common.
  static const FieldTable* fields = [] {
    auto* f = new FieldTable;
    for (const char* c : {"a", "b"}) f->InternField(c);
    return f;
  }();
  static const FieldTable* one_field = [] {
    auto* f = new FieldTable;
    f->InternField("c d");
    return f;
  }();
  std::string bytes(reinterpret_cast<const char*>(data), size);
  size_t chunk = FuzzChunkBytes(data, size);
  Check(RecordFormat::kCsv, ',', *fields, bytes, chunk);
  Check(RecordFormat::kTsv, '\t', *fields, bytes, chunk);
  Check(RecordFormat::kCsv, ',', *one_field, bytes, chunk);
  return 0;
}
