// Test helpers shared by the NDJSON reader tests: a field table of raw
// references, and one whole read of a text (status, counts, records as
// Collect's strings).
#pragma once

#include <initializer_list>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "common/input/byte_source.h"
#include "common/input/chunk_source.h"
#include "common/input/field_table.h"
#include "common/input/ndjson_reader.h"
#include "tests/input/reader_test_util.h"

namespace fanfold {
namespace {

FieldTable Fields(std::initializer_list<const char*> refs) {
  FieldTable t;
  for (const char* r : refs) t.InternField(r);
  return t;
}

struct Outcome {
  Status status;
  ReadStats stats;
  std::vector<std::string> rows;
};

Outcome Run(const FieldTable& fields, const std::string& input, size_t chunk = kDefaultChunkBytes,
            size_t max_record = ChunkOptions{}.max_record_bytes, ValueChecks checks = ValueChecks::kReadValues) {
  auto reader = NdjsonReader::Create(fields, ChunkOptions{chunk, max_record}, checks);
  REQUIRE(reader.ok());
  auto src = MemorySource(input);
  Collect sink(fields.size());
  Outcome out;
  out.status = (*reader)->Read(*src, sink, &out.stats);
  out.rows = sink.rows;
  return out;
}

}  // namespace
}  // namespace fanfold
