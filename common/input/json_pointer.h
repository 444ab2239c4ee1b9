// JSON Pointer (RFC 6901) parsing: splits "/a/b~1c/0" into its unescaped
// reference tokens {"a", "b/c", "0"}, so readers compare tokens to keys
// without re-parsing the pointer per record. Pure functions; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"

namespace fanfold {

// Returns the tokens of `text` ("" gives none: the whole document), or
// InvalidArgument iff text does not start with '/' or has a '~' not
// followed by '0' or '1'.
Result<std::vector<std::string>> ParseJsonPointer(std::string_view text);

// Returns the array index `token` denotes ("0", or digits without a leading
// zero, RFC 6901 section 4), or -1 iff it denotes none.
int64_t JsonPointerIndex(std::string_view token);

}  // namespace fanfold
