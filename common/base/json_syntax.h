// JsonSyntaxProblem: where and why a text is not JSON (RFC 8259), in
// fanfold's words — line and column of the first offending character, what
// was found there and what the grammar expected — for a message that follows
// "not valid JSON". Its own scanner, run only after the JSON reader refused a
// text, so the words are not the reader's. Pure; thread-safe.
#pragma once

#include <string>
#include <string_view>

namespace fanfold {

// " at line L, column C: expected ..., found ..." (1-based; columns count
// characters, as editors do), or "" iff the scanner finds text to be JSON.
// A leading UTF-8 byte-order mark is skipped, as the JSON reader skips it.
std::string JsonSyntaxProblem(std::string_view text);

// The same for one line of NDJSON, whose line number the caller knows:
// "column C: expected ..., found ..." (every place named by its column
// only), or "" iff the scanner finds the line to be JSON.
std::string JsonLineSyntaxProblem(std::string_view line);

}  // namespace fanfold
