// JSON numbers (RFC 8259 section 6): the grammar check and the value the
// NDJSON reader gives a number token. Integers within [-2^63, 2^64) are
// exact; every other number is its nearest double (short decimals by
// Clinger's exact fast path, the rest by std::from_chars, both correctly
// rounded), and a magnitude beyond the double range is +/-infinity. Pure
// functions; thread-safe.
#pragma once

#include <string_view>

#include "common/base/value.h"

namespace fanfold {

// The value of a JSON number token (RFC 8259 section 6 grammar): an integer
// within [-2^63, 2^64) exactly, any other number as its nearest double, and
// a magnitude beyond the double range as +/-infinity (Python's json.loads
// does the same with "1e400"). Returns false iff text is not a JSON number.
bool ParseJsonNumber(std::string_view text, Value* out);

// True iff text is a JSON number token (RFC 8259 section 6 grammar); the
// check of ParseJsonNumber without computing the value.
bool IsJsonNumber(std::string_view text);

}  // namespace fanfold
