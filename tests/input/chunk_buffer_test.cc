// Tests for ChunkBuffer (common/input/chunk_buffer.h): the tail is kept across
// refills, the buffer grows only when one record fills it, and the padding
// after the data reads as spaces.
#include "common/input/chunk_buffer.h"

#include <doctest/doctest.h>

#include <string>

namespace fanfold {

// Consumed bytes go, the unconsumed tail moves to the front and more data follows it.
TEST_CASE("ChunkBuffer keeps the tail across refills") {
  auto src = MemorySource("abcdefghij");
  ChunkBuffer buf(ChunkOptions{4, 8}, 8);
  REQUIRE(buf.Fill(*src).value() == 4);
  CHECK(std::string(buf.data(), buf.size()) == "abcd");
  CHECK(std::string(buf.data() + buf.size(), 8) == std::string(8, ' '));
  buf.Consume(3);
  REQUIRE(buf.Fill(*src).value() == 3);
  CHECK(std::string(buf.data(), buf.size()) == "defg");
  CHECK(!buf.eof());
  // Nothing consumed and the buffer full: it doubles.
  REQUIRE(buf.Fill(*src).value() == 3);
  CHECK(std::string(buf.data(), buf.size()) == "defghij");
  CHECK(buf.room_after(buf.data()) == 8 + 8);
  REQUIRE(buf.Fill(*src).value() == 0);
  CHECK(buf.eof());
  CHECK(buf.total_read() == 10);
  buf.Reset();
  CHECK(buf.size() == 0);
  CHECK(!buf.eof());
}

// Growth stops at max_record_bytes with an error rather than taking all memory.
TEST_CASE("ChunkBuffer refuses to grow past the record limit") {
  auto src = MemorySource(std::string(100, 'x'));
  ChunkBuffer buf(ChunkOptions{4, 10}, 1);
  REQUIRE(buf.Fill(*src).value() == 4);
  REQUIRE(buf.Fill(*src).value() == 4);  // grew to 8
  REQUIRE(buf.Fill(*src).value() == 2);  // grew to the limit, 10
  Result<size_t> r = buf.Fill(*src);
  REQUIRE(!r.ok());
  CHECK(r.status().code() == Status::Code::kCorrupt);
  CHECK(buf.over_limit());
  CHECK(buf.size() == 10);
}

}  // namespace fanfold
