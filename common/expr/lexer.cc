#include "common/expr/lexer.h"

#include <charconv>

namespace fanfold {
namespace {

bool IsDigit(char c) { return c >= '0' && c <= '9'; }
bool IsNameStart(char c) { return (c >= 'A' && c <= 'Z') || (c >= 'a' && c <= 'z') || c == '_'; }
bool IsNameChar(char c) { return IsNameStart(c) || IsDigit(c); }

Status ErrorAt(size_t offset, const std::string& found, const std::string& expected) {
  return Status::InvalidArgument("column " + std::to_string(offset + 1) + ": " + found +
                                 "; expected " + expected);
}

// A printable rendering of one byte for messages.
std::string Quoted(char c) {
  if (static_cast<unsigned char>(c) < 0x20 || static_cast<unsigned char>(c) >= 0x7f) {
    static constexpr char kHex[] = "0123456789abcdef";
    unsigned char u = static_cast<unsigned char>(c);
    return std::string("byte 0x") + kHex[u >> 4] + kHex[u & 15];
  }
  return std::string("'") + c + "'";
}

struct Keyword {
  std::string_view word;
  TokenKind kind;
};
constexpr Keyword kKeywords[] = {
    {"and", TokenKind::kAnd},   {"or", TokenKind::kOr},       {"not", TokenKind::kNot},
    {"in", TokenKind::kIn},     {"true", TokenKind::kTrue},   {"false", TokenKind::kFalse},
    {"null", TokenKind::kNull},
};

// Scans a quoted string starting at text[*pos] (the quote).
Status ScanString(std::string_view text, size_t* pos, std::string* out) {
  const size_t start = *pos;
  const char quote = text[start];
  size_t i = start + 1;
  for (;;) {
    if (i >= text.size())
      return ErrorAt(start, "unclosed string", std::string("a closing ") + quote +
                                                   " before the end of the expression");
    const char c = text[i];
    if (c == quote) break;
    if (c == '\\') {
      if (i + 1 >= text.size())
        return ErrorAt(start, "unclosed string", std::string("a closing ") + quote +
                                                     " before the end of the expression");
      switch (text[i + 1]) {
        case '\'': out->push_back('\''); break;
        case '"': out->push_back('"'); break;
        case '\\': out->push_back('\\'); break;
        case 'n': out->push_back('\n'); break;
        case 't': out->push_back('\t'); break;
        default:
          return ErrorAt(i, "unknown escape '\\" + std::string(1, text[i + 1]) + "' in string",
                         "one of \\' \\\" \\\\ \\n \\t");
      }
      i += 2;
      continue;
    }
    out->push_back(c);
    ++i;
  }
  *pos = i + 1;
  return Status::Ok();
}

// Scans a {field reference} starting at text[*pos] (the brace).
Status ScanField(std::string_view text, size_t* pos, std::string* out) {
  const size_t start = *pos;
  size_t i = start + 1;
  for (;;) {
    if (i >= text.size())
      return ErrorAt(start, "unclosed field reference", "'}' before the end of the expression");
    const char c = text[i];
    if (c == '}') break;
    if (c == '\\') {
      if (i + 1 < text.size() && (text[i + 1] == '}' || text[i + 1] == '\\')) {
        out->push_back(text[i + 1]);
        i += 2;
        continue;
      }
      if (i + 1 >= text.size())
        return ErrorAt(start, "unclosed field reference", "'}' before the end of the expression");
      return ErrorAt(i, "unknown escape '\\" + std::string(1, text[i + 1]) + "' in field reference",
                     "\\} or \\\\");
    }
    out->push_back(c);
    ++i;
  }
  if (out->empty())
    return ErrorAt(start, "empty field reference {}",
                   "a JSON Pointer or column name between the braces");
  *pos = i + 1;
  return Status::Ok();
}

// Scans digits [. digits] [e [+-] digits], or . digits [...], at text[*pos].
// Digits alone are an integer literal: exact up to 2^64 - 1, its nearest
// double beyond (Value::AsNumeric).
Status ScanNumber(std::string_view text, size_t* pos, Value* out) {
  const size_t start = *pos;
  size_t i = start;
  auto digits = [&] {
    size_t n = 0;
    while (i < text.size() && IsDigit(text[i])) ++i, ++n;
    return n;
  };
  size_t mantissa = digits();
  if (i < text.size() && text[i] == '.') {
    ++i;
    mantissa += digits();
  }
  bool ok = mantissa > 0;
  if (ok && i < text.size() && (text[i] == 'e' || text[i] == 'E')) {
    ++i;
    if (i < text.size() && (text[i] == '+' || text[i] == '-')) ++i;
    ok = digits() > 0;
  }
  // "12abc", "1.2.3", "1e": one malformed word rather than two tokens.
  size_t end = i;
  while (end < text.size() && (IsNameChar(text[end]) || text[end] == '.')) ++end;
  if (!ok || end != i)
    return ErrorAt(start, "malformed number '" + std::string(text.substr(start, end - start)) + "'",
                   "a decimal number such as 12, 1.5, .5 or 1e-3");
  const std::string_view literal = text.substr(start, i - start);
  if (literal.find_first_not_of("0123456789") == std::string_view::npos &&
      Value::String(literal).AsNumeric(out)) {
    *pos = i;
    return Status::Ok();
  }
  double d = 0;
  auto [p, ec] = std::from_chars(text.data() + start, text.data() + i, d);
  *out = Value::Number(d);
  if (ec != std::errc() || p != text.data() + i)
    return ErrorAt(start, "number " + std::string(text.substr(start, i - start)) +
                              " out of range", "a number a double can hold");
  *pos = i;
  return Status::Ok();
}

}  // namespace

std::string DescribeToken(const Token& t) {
  // Long literals would drown the message; their start is enough to find them.
  constexpr size_t kMaxShown = 40;
  const std::string raw = t.raw.size() <= kMaxShown
                              ? std::string(t.raw)
                              : std::string(t.raw.substr(0, kMaxShown)) + "...";
  switch (t.kind) {
    case TokenKind::kEnd: return "end of expression";
    case TokenKind::kNumber: return "number " + raw;
    case TokenKind::kString: return "string " + raw;
    case TokenKind::kField: return "field " + raw;
    case TokenKind::kName: return "name '" + t.text + "'";
    case TokenKind::kAnd: case TokenKind::kOr: case TokenKind::kNot: case TokenKind::kIn:
    case TokenKind::kTrue: case TokenKind::kFalse: case TokenKind::kNull:
      return "keyword '" + raw + "'";
    default: return "'" + raw + "'";
  }
}

Result<std::vector<Token>> Tokenize(std::string_view text) {
  std::vector<Token> tokens;
  size_t i = 0;
  while (true) {
    while (i < text.size() && (text[i] == ' ' || text[i] == '\t' || text[i] == '\n' ||
                               text[i] == '\r'))
      ++i;
    Token t;
    t.column = static_cast<int>(i + 1);
    if (i >= text.size()) {
      tokens.push_back(std::move(t));
      return tokens;
    }
    const size_t start = i;
    const char c = text[i];
    const char next = i + 1 < text.size() ? text[i + 1] : '\0';
    if (IsDigit(c) || (c == '.' && IsDigit(next))) {
      t.kind = TokenKind::kNumber;
      FF_RETURN_IF_ERROR(ScanNumber(text, &i, &t.number));
    } else if (c == '\'' || c == '"') {
      t.kind = TokenKind::kString;
      FF_RETURN_IF_ERROR(ScanString(text, &i, &t.text));
    } else if (c == '{') {
      t.kind = TokenKind::kField;
      FF_RETURN_IF_ERROR(ScanField(text, &i, &t.text));
    } else if (IsNameStart(c)) {
      while (i < text.size() && IsNameChar(text[i])) ++i;
      t.kind = TokenKind::kName;
      t.text = std::string(text.substr(start, i - start));
      for (const Keyword& k : kKeywords)
        if (k.word == t.text) t.kind = k.kind;
    } else {
      auto two = [&](char second, TokenKind with, TokenKind without) {
        if (next == second) {
          i += 2;
          return with;
        }
        ++i;
        return without;
      };
      switch (c) {
        case '+': t.kind = TokenKind::kPlus; ++i; break;
        case '-': t.kind = TokenKind::kMinus; ++i; break;
        case '*': t.kind = TokenKind::kStar; ++i; break;
        case '/': t.kind = TokenKind::kSlash; ++i; break;
        case '%': t.kind = TokenKind::kPercent; ++i; break;
        case '(': t.kind = TokenKind::kLParen; ++i; break;
        case ')': t.kind = TokenKind::kRParen; ++i; break;
        case '[': t.kind = TokenKind::kLBracket; ++i; break;
        case ']': t.kind = TokenKind::kRBracket; ++i; break;
        case ',': t.kind = TokenKind::kComma; ++i; break;
        case '<': t.kind = two('=', TokenKind::kLe, TokenKind::kLt); break;
        case '>': t.kind = two('=', TokenKind::kGe, TokenKind::kGt); break;
        case '=':
          if (next != '=') return ErrorAt(start, "'='", "'==' to compare for equality");
          t.kind = TokenKind::kEq;
          i += 2;
          break;
        case '!':
          if (next != '=') return ErrorAt(start, "'!'", "'!=' (negation is spelled 'not')");
          t.kind = TokenKind::kNe;
          i += 2;
          break;
        case '}':
          return ErrorAt(start, "'}' without a matching '{'", "an operator or operand");
        case '&':
          return ErrorAt(start, "unexpected character '&'", "'and' to combine conditions");
        case '|':
          return ErrorAt(start, "unexpected character '|'", "'or' to combine conditions");
        default:
          return ErrorAt(start, "unexpected character " + Quoted(c),
                         "an operand, an operator or a parenthesis");
      }
    }
    t.raw = text.substr(start, i - start);
    tokens.push_back(std::move(t));
  }
}

}  // namespace fanfold
