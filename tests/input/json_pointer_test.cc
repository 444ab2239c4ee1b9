// Tests for ParseJsonPointer / JsonPointerIndex (common/input/json_pointer.h),
// checked against the rules and examples of RFC 6901.
#include "common/input/json_pointer.h"

#include <doctest/doctest.h>

namespace fanfold {

// Tokens are split on '/' and unescaped ~1 -> '/', ~0 -> '~' (RFC 6901 section 4: ~1 first, so "~01" is "~1").
TEST_CASE("ParseJsonPointer splits and unescapes") {
  using V = std::vector<std::string>;
  CHECK(ParseJsonPointer("").value() == V{});
  CHECK(ParseJsonPointer("/").value() == V{""});
  CHECK(ParseJsonPointer("/foo/0").value() == V{"foo", "0"});
  CHECK(ParseJsonPointer("/a~1b").value() == V{"a/b"});
  CHECK(ParseJsonPointer("/m~0n").value() == V{"m~n"});
  CHECK(ParseJsonPointer("/~01").value() == V{"~1"});
  CHECK(ParseJsonPointer("/a//b/").value() == V{"a", "", "b", ""});
}

// Text that is not a pointer is refused (RFC 6901 section 3 grammar).
TEST_CASE("ParseJsonPointer refuses bad text") {
  CHECK(ParseJsonPointer("a/b").status().code() == Status::Code::kInvalidArgument);
  CHECK(!ParseJsonPointer("/a~").ok());
  CHECK(!ParseJsonPointer("/a~2").ok());
}

// Array indices are "0" or digits without a leading zero (RFC 6901 section 4); "-" is no element.
TEST_CASE("JsonPointerIndex") {
  CHECK(JsonPointerIndex("0") == 0);
  CHECK(JsonPointerIndex("17") == 17);
  CHECK(JsonPointerIndex("01") == -1);
  CHECK(JsonPointerIndex("-") == -1);
  CHECK(JsonPointerIndex("") == -1);
  CHECK(JsonPointerIndex("1a") == -1);
  CHECK(JsonPointerIndex("99999999999999999999") == -1);
}

}  // namespace fanfold
