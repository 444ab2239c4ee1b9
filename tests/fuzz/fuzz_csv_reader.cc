// Fuzz target: bytes → ReadRecords (CSV) through a MemorySource, and CsvReader
// (TSV; CSV with another column set) reading the whole input in one chunk;
// then each of these again through a reader with a tiny chunk size fed in
// uneven pieces, which must see exactly the same records (a record's fields
// cannot depend on where reads were cut).
#include <cstddef>
#include <cstdint>
#include <string>

#include "common/input/csv/csv_reader.h"
#include "common/input/record_reader.h"
#include "tests/fuzz/fuzz_reader_util.h"

using namespace fanfold;

namespace {

// The reference pass reads everything in one chunk: through ReadRecords
// (whose default 4 MiB buffer costs page faults on every run, so only once
// per input) or through a CsvReader whose chunk holds the whole input.
void Check(RecordFormat format, char sep, const FieldTable& fields, const std::string& bytes, size_t chunk,
           bool via_read_records) {
  std::unique_ptr<ByteSource> src = MemorySource(bytes);
  TouchSink whole(fields);
  ReadStats whole_stats;
  Status s1 = via_read_records ? ReadRecords(format, *src, fields, whole, &whole_stats)
                               : CsvReader(fields, sep, bytes.size() + 1).Read(*src, whole, &whole_stats);

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
  Check(RecordFormat::kCsv, ',', *fields, bytes, chunk, /*via_read_records=*/true);
  Check(RecordFormat::kTsv, '\t', *fields, bytes, chunk, false);
  Check(RecordFormat::kCsv, ',', *one_field, bytes, chunk, false);
  return 0;
}
