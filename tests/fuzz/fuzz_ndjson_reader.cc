// Fuzz target: bytes → ReadRecords (NDJSON) through a MemorySource, with raw
// fields at several JSON Pointers; then the same bytes again through a reader
// with a tiny chunk size fed in uneven pieces, which must see exactly the
// same records (a record's fields cannot depend on where reads were cut);
// and through a reader checking every value, which may refuse more lines
// than the default but never accept one the default refuses.
#include <cstddef>
#include <cstdint>
#include <string>

#include "common/input/ndjson_reader.h"
#include "common/input/record_reader.h"
#include "tests/fuzz/fuzz_reader_util.h"

using namespace fanfold;

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  static const FieldTable* fields = [] {
    auto* f = new FieldTable;
    for (const char* p : {"/a", "/b/0", "/c/d", "/a~1b", "/~0", "/b/10", "/c/d/e/f", "/ts"}) f->InternField(p);
    return f;
  }();
  std::string bytes(reinterpret_cast<const char*>(data), size);

  std::unique_ptr<ByteSource> src = MemorySource(bytes);
  TouchSink whole(*fields);
  ReadStats whole_stats;
  Status s1 = ReadRecords(RecordFormat::kNdjson, *src, *fields, whole, &whole_stats);

  Result<std::unique_ptr<NdjsonReader>> reader = NdjsonReader::Create(*fields, FuzzChunkBytes(data, size));
  if (!reader.ok()) __builtin_trap();
  ChoppySource choppy(bytes, 13);
  TouchSink cut(*fields);
  ReadStats cut_stats;
  Status s2 = (*reader)->Read(choppy, cut, &cut_stats);

  if (s1.ok() != s2.ok() || whole.records() != cut.records() || whole.hash() != cut.hash() ||
      whole_stats.records != cut_stats.records || whole_stats.malformed != cut_stats.malformed)
    __builtin_trap();

  std::unique_ptr<ByteSource> again = MemorySource(bytes);
  TouchSink strict(*fields);
  ReadStats strict_stats;
  Status s3 = ReadRecords(RecordFormat::kNdjson, *again, *fields, strict, &strict_stats, ValueChecks::kEveryValue);
  if (s3.ok() != s1.ok() || strict_stats.records > whole_stats.records ||
      strict_stats.records + strict_stats.malformed != whole_stats.records + whole_stats.malformed)
    __builtin_trap();
  return 0;
}
