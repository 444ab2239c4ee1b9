#include "common/input/record_reader.h"

#include "common/input/csv_reader.h"
#include "common/input/ndjson_reader.h"

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

Result<std::unique_ptr<RecordReader>> RecordReader::Create(RecordFormat format, const FieldTable& fields) {
  std::unique_ptr<RecordReader> r(new RecordReader());
  if (format == RecordFormat::kNdjson) {
    Result<std::unique_ptr<NdjsonReader>> n = NdjsonReader::Create(fields);
    if (!n.ok()) return n.status();
    r->ndjson_ = std::move(n.value());
  } else {
    r->csv_ = std::make_unique<CsvReader>(fields, format == RecordFormat::kCsv ? ',' : '\t');
  }
  return r;
}

RecordReader::~RecordReader() = default;

Status RecordReader::Read(ByteSource& src, RecordSink& sink, ReadStats* stats) {
  return ndjson_ ? ndjson_->Read(src, sink, stats) : csv_->Read(src, sink, stats);
}

}  // namespace fanfold
