// ByteSize: the forms of a byte count the memory cap accepts, and refusals.
// Unit values: binary prefixes are powers of 1024 (IEC 80000-13:2008),
// decimal ones powers of 1000 (SI prefixes).
#include "common/base/byte_size.h"

#include <doctest/doctest.h>

namespace fanfold {
namespace {

// Intent: plain bytes and every unit, with or without one space.
TEST_CASE("byte size: whole numbers with binary and decimal units") {
  CHECK(ParseByteSize("0") == 0u);
  CHECK(ParseByteSize("1048576") == 1048576u);
  CHECK(ParseByteSize("12B") == 12u);
  CHECK(ParseByteSize("64KiB") == 65536u);
  CHECK(ParseByteSize("512MiB") == 536870912u);
  CHECK(ParseByteSize("4GiB") == 4294967296u);
  CHECK(ParseByteSize("2 TiB") == 2199023255552u);
  CHECK(ParseByteSize("750MB") == 750000000u);
  CHECK(ParseByteSize("3 GB") == 3000000000u);
  CHECK(ParseByteSize("1KB") == 1000u);
  CHECK(ParseByteSize("1TB") == 1000000000000u);
  CHECK(ParseByteSize("18446744073709551615") == UINT64_MAX);
}

// Intent: anything else is refused, overflow included.
TEST_CASE("byte size: refusals") {
  for (const char* bad : {"", " ", "MiB", "-1", "+5", "1.5GiB", "4 GiB ", "4  GiB", "4gib", "4mb", "4XB", "0x10",
                          "18446744073709551616", "17179869184GiB", "20000000TB", "1e6"}) {
    CAPTURE(bad);
    CHECK_FALSE(ParseByteSize(bad).has_value());
  }
}

// Intent: messages show sizes in the largest binary unit that fits.
TEST_CASE("byte size: text for messages") {
  CHECK(ByteSizeText(1) == "1 byte");
  CHECK(ByteSizeText(900) == "900 bytes");
  CHECK(ByteSizeText(1024) == "1 KiB");
  CHECK(ByteSizeText(uint64_t{3} << 19) == "1.5 MiB");
  CHECK(ByteSizeText(uint64_t{4} << 30) == "4 GiB");
}

}  // namespace
}  // namespace fanfold
