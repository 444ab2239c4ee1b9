#include "common/input/record_reader.h"

namespace fanfold {

Status ReadRecords(RecordFormat format, ByteSource& src, const FieldTable& fields, RecordSink& sink,
                   ReadStats* stats) {
  Result<std::unique_ptr<RecordReader>> reader = RecordReader::Create(format, fields);
  if (!reader.ok()) return reader.status();
  return (*reader)->Read(src, sink, stats);
}

Result<std::unique_ptr<RecordReader>> RecordReader::Create(RecordFormat format, const FieldTable& fields) {
  return RecordFormatRowOf(format).make_reader(fields);
}

}  // namespace fanfold
