// Tests for ChunkBuffer (common/chunk_buffer.h): the tail is kept across
// refills, the buffer grows only when one record fills it, and the padding
// after the data reads as spaces.
#include "common/chunk_buffer.h"

#include <doctest/doctest.h>

#include <string>

namespace fanfold {

// Consumed bytes go, the unconsumed tail moves to the front and more data follows it.
TEST_CASE("ChunkBuffer keeps the tail across refills") {
  auto src = MemorySource("abcdefghij");
  ChunkBuffer buf(4, 8);
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

}  // namespace fanfold
