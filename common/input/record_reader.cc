#include "common/input/record_reader.h"

namespace fanfold {

Status ReadRecords(RecordFormat format, ByteSource& src, const FieldTable& fields, RecordSink& sink,
                   ReadStats* stats, ValueChecks checks) {
  Result<std::unique_ptr<RecordReader>> reader = RecordReader::Create(format, fields, checks);
  if (!reader.ok()) return reader.status();
  return (*reader)->Read(src, sink, stats);
}

Result<std::unique_ptr<RecordReader>> RecordReader::Create(RecordFormat format, const FieldTable& fields,
                                                          ValueChecks checks) {
  return RecordFormatRowOf(format).make_reader(fields, checks);
}

}  // namespace fanfold
