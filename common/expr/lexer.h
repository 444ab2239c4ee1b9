// ExprLexer: splits expression text into tokens, each with its 1-based byte
// column; string literals and field references arrive unescaped. Owns the
// decoded token texts; stateless between calls; thread-compatible.
// Malformed input (an unclosed string or brace, a bad escape, a stray
// character, a malformed number) is an InvalidArgument in the expression
// language's "column N: <found>; expected <what>" form.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "common/base/value.h"

#include "common/base/status.h"

namespace fanfold {

enum class TokenKind : uint8_t {
  kEnd,      // after the last token
  kNumber,   // number holds the value
  kString,   // text holds the unescaped literal
  kField,    // text holds the unescaped reference between the braces
  kName,     // an identifier that is not a keyword
  kAnd, kOr, kNot, kIn, kTrue, kFalse, kNull,  // keywords
  kPlus, kMinus, kStar, kSlash, kPercent,
  kEq, kNe, kLt, kLe, kGt, kGe,
  kLParen, kRParen, kLBracket, kRBracket, kComma,
};

struct Token {
  TokenKind kind = TokenKind::kEnd;
  int column = 0;          // 1-based byte column of the first character
  std::string_view raw;    // the token as written (empty for kEnd)
  std::string text;        // kString, kField, kName
  Value number;            // kNumber: an exact integer for digits-only literals (value.h)
};

// How a token reads in an error message: "'+'", "number 12", "string 'x'",
// "field {/a}", "name 'foo'", "keyword 'and'", "end of expression".
std::string DescribeToken(const Token& t);

// Tokenizes all of `text`; the last token is always kEnd, at column
// text.size() + 1. The tokens' raw views point into `text`.
Result<std::vector<Token>> Tokenize(std::string_view text);

}  // namespace fanfold
