#include "common/record_reader.h"

#include "common/csv_reader.h"
#include "common/ndjson_reader.h"

namespace fanfold {

Status ReadRecords(RecordFormat format, ByteSource& src, const FieldTable& fields, RecordSink& sink,
                   ReadStats* stats) {
  switch (format) {
    case RecordFormat::kNdjson: {
      Result<std::unique_ptr<NdjsonReader>> reader = NdjsonReader::Create(fields);
      if (!reader.ok()) return reader.status();
      return (*reader)->Read(src, sink, stats);
    }
    case RecordFormat::kCsv: return CsvReader(fields, ',').Read(src, sink, stats);
    case RecordFormat::kTsv: return CsvReader(fields, '\t').Read(src, sink, stats);
  }
  return Status::Internal("unknown record format");
}

}  // namespace fanfold
