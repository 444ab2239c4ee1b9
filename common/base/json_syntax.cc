#include "common/base/json_syntax.h"

#include <cerrno>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <vector>

namespace fanfold {
namespace {

constexpr const char* kValue = "a value (an object, array, string, number, true, false or null)";

bool IsSpace(char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; }
bool IsDigit(char c) { return c >= '0' && c <= '9'; }
bool IsHex(char c) { return IsDigit(c) || (c >= 'a' && c <= 'f') || (c >= 'A' && c <= 'F'); }
bool IsWordByte(char c) { return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || IsDigit(c) || c == '_'; }

// Length of the UTF-8 sequence at text[i] (RFC 3629 §4), or 0 if invalid.
size_t Utf8Length(std::string_view text, size_t i) {
  const auto b = [&](size_t k) { return i + k < text.size() ? static_cast<unsigned char>(text[i + k]) : 0u; };
  const unsigned c = b(0);
  if (c < 0x80) return 1;
  const auto cont = [&](size_t k) { return (b(k) & 0xC0) == 0x80; };
  if (c >= 0xC2 && c <= 0xDF) return cont(1) ? 2 : 0;
  if (c >= 0xE0 && c <= 0xEF) {
    const unsigned lo = c == 0xE0 ? 0xA0 : 0x80, hi = c == 0xED ? 0x9F : 0xBF;
    return b(1) >= lo && b(1) <= hi && cont(2) ? 3 : 0;
  }
  if (c >= 0xF0 && c <= 0xF4) {
    const unsigned lo = c == 0xF0 ? 0x90 : 0x80, hi = c == 0xF4 ? 0x8F : 0xBF;
    return b(1) >= lo && b(1) <= hi && cont(2) && cont(3) ? 4 : 0;
  }
  return 0;
}

// "'text'". Appended: GCC 12 falsely warns on "'" + string (-Wrestrict).
std::string Quote(std::string_view text) {
  const char* q = text == "'" ? "\"" : "'";
  return std::string(q).append(text).append(q);
}

class Scanner {
 public:
  Scanner(std::string_view text, bool one_line) : t_(text), one_line_(one_line) {
    if (t_.substr(0, 3) == "\xEF\xBB\xBF") start_ = i_ = 3;
  }

  std::string Run() {
    // Containers open around the current position: '{' or '[', with the
    // last key read in each object (for "after the value of \"key\"").
    std::vector<Open> open;
    enum class Want {
      kValue,
      kValueAfterComma,
      kKeyOrClose,
      kKeyAfterComma,
      kColon,
      kCommaOrClose
    } want = Want::kValue;
    for (;;) {
      SkipSpace();
      const char c = i_ < t_.size() ? t_[i_] : '\0';
      const bool end = i_ >= t_.size();
      switch (want) {
        case Want::kValue:
        case Want::kValueAfterComma: {
          if (!end && c == ']' && want == Want::kValueAfterComma)
            return At(i_, "expected a value after ',', found ']' (JSON allows no comma before ']')");
          if (!end && c == ']' && !open.empty() && open.back().kind == '[') {  // "[]"
            open.pop_back();
            want = Want::kCommaOrClose;
            ++i_;
            break;
          }
          if (!end && (c == '{' || c == '[')) {
            open.push_back({c, i_, ""});
            want = c == '{' ? Want::kKeyOrClose : Want::kValue;
            ++i_;
            break;
          }
          if (std::string p = Scalar(); !p.empty()) return p + (end ? EndHint(open) : "");
          want = Want::kCommaOrClose;
          break;
        }
        case Want::kKeyOrClose:
        case Want::kKeyAfterComma: {
          if (!end && c == '}' && want == Want::kKeyOrClose) {
            open.pop_back();
            want = Want::kCommaOrClose;
            ++i_;
            break;
          }
          if (end || c != '"') {
            std::string hint = want == Want::kKeyAfterComma && c == '}' && !end ? " (JSON allows no comma before '}')"
                               : end                                            ? EndHint(open)
                                                                                : Hint(i_);
            return At(i_, std::string("expected a key in double quotes") +
                              (want == Want::kKeyOrClose ? " or '}'" : " after ','") + ", found " + Found(i_) + hint);
          }
          const size_t start = i_;
          if (std::string p = String(); !p.empty()) return p;
          open.back().key = std::string(t_.substr(start + 1, i_ - start - 2));
          want = Want::kColon;
          break;
        }
        case Want::kColon:
          if (end || c != ':')
            return At(i_, "expected ':' after the key \"" + open.back().key + "\", found " + Found(i_) +
                              (end ? EndHint(open) : ""));
          ++i_;
          want = Want::kValue;
          break;
        case Want::kCommaOrClose: {
          if (open.empty()) {
            if (end) return "";
            return At(i_, "expected the end of the text after the top-level value, found " + Found(i_));
          }
          const char close = open.back().kind == '{' ? '}' : ']';
          if (!end && c == ',') {
            want = close == '}' ? Want::kKeyAfterComma : Want::kValueAfterComma;
            ++i_;
            break;
          }
          if (!end && c == close) {
            open.pop_back();
            ++i_;
            break;
          }
          const std::string after = close == '}' ? "the value of \"" + open.back().key + "\"" : "an array element";
          std::string hint = end ? EndHint(open) : c == '"' ? " (a comma is missing)" : "";
          if (!end && (c == '}' || c == ']')) hint = " (brackets do not match)";
          return At(i_, std::string("expected ',' or '") + close + "' after " + after + ", found " + Found(i_) + hint);
        }
      }
    }
  }

 private:
  void SkipSpace() {
    while (i_ < t_.size() && IsSpace(t_[i_])) ++i_;
  }

  // A container open where the text ended.
  struct Open {
    char kind;        // '{' or '['
    size_t at;        // its byte offset
    std::string key;  // objects: the last key read
  };

  // " (the object opened at line 2, column 3 is not closed)" for the innermost.
  std::string EndHint(const std::vector<Open>& open) const {
    if (open.empty()) return "";
    return std::string(" (the ") + (open.back().kind == '{' ? "object" : "array") + " opened at " +
           LineColumn(open.back().at) + " is not closed)";
  }

  // " at line L, column C: " + what, for the character at byte `at`.
  std::string At(size_t at, const std::string& what) const { return " at " + LineColumn(at) + ": " + what; }

  // "line L, column C" of the character at byte `at` ("column C" for one line).
  std::string LineColumn(size_t at) const {
    size_t line = 1, column = 1;
    for (size_t k = start_; k < at && k < t_.size(); ++k) {
      if (t_[k] == '\n') {
        line++;
        column = 1;
      } else if ((static_cast<unsigned char>(t_[k]) & 0xC0) != 0x80) {
        ++column;  // a UTF-8 continuation byte is part of the character before
      }
    }
    if (one_line_) return "column " + std::to_string(column);
    return "line " + std::to_string(line) + ", column " + std::to_string(column);
  }

  // What is at byte k: "the end of the text", a word ('True'), a character.
  std::string Found(size_t k) const {
    if (k >= t_.size()) return "the end of the text";
    const unsigned char c = static_cast<unsigned char>(t_[k]);
    if (IsWordByte(t_[k])) {
      size_t e = k;
      while (e < t_.size() && e - k < 20 && IsWordByte(t_[e])) ++e;
      return Quote(t_.substr(k, e - k));
    }
    if (c < 0x20 || c == 0x7F) {
      char buf[8];
      snprintf(buf, sizeof buf, "%04X", c);
      return std::string("a control character (U+") + buf + ")";
    }
    const size_t n = Utf8Length(t_, k);
    if (n == 0) return "a byte that is not UTF-8";
    return Quote(t_.substr(k, n));
  }

  // Why a value cannot start at byte k, for the common slips.
  std::string Hint(size_t k) const {
    if (k >= t_.size()) return t_.find_first_not_of(" \t\r\n") == std::string_view::npos ? " (the text is empty)" : "";
    const std::string_view rest = t_.substr(k, 8);
    if (rest[0] == '\'') return " (JSON strings use double quotes)";
    if (rest[0] == '/') return " (JSON has no comments)";
    if (rest[0] == '+') return " (a JSON number has no '+' sign)";
    if (rest[0] == '.') return " (a JSON number needs a digit before '.')";
    if (rest.rfind("NaN", 0) == 0 || rest.rfind("Infinity", 0) == 0) return " (JSON has no NaN or Infinity)";
    if (rest.rfind("True", 0) == 0 || rest.rfind("False", 0) == 0 || rest.rfind("None", 0) == 0 ||
        rest.rfind("Null", 0) == 0 || rest.rfind("NULL", 0) == 0 || rest.rfind("TRUE", 0) == 0)
      return " (JSON writes true, false and null in lower case)";
    return "";
  }

  // A string, number or literal at i_; "" and i_ past it, or the problem.
  std::string Scalar() {
    const size_t start = i_;
    if (i_ >= t_.size()) return At(i_, std::string("expected ") + kValue + ", found the end of the text" + Hint(i_));
    const char c = t_[i_];
    if (c == '"') return String();
    if (c == '-' || IsDigit(c)) return Number();
    for (const char* word : {"true", "false", "null"}) {
      const std::string_view w(word);
      if (t_.substr(i_, w.size()) == w && (i_ + w.size() >= t_.size() || !IsWordByte(t_[i_ + w.size()]))) {
        i_ += w.size();
        return "";
      }
    }
    return At(start, std::string("expected ") + kValue + ", found " + Found(start) + Hint(start));
  }

  std::string String() {
    const size_t start = i_++;
    while (i_ < t_.size()) {
      const unsigned char c = static_cast<unsigned char>(t_[i_]);
      if (c == '"') {
        ++i_;
        return "";
      }
      if (c == '\\') {
        if (std::string p = Escape(); !p.empty()) return p;
        continue;
      }
      if (c == '\n')
        return At(i_, "expected '\"' to close the string before the line ends (write a line break as \\n)");
      if (c < 0x20) return At(i_, "found " + Found(i_) + " inside a string; expected it escaped (\\t, \\r or \\u00XX)");
      const size_t n = Utf8Length(t_, i_);
      if (n == 0) return At(i_, "found a byte that is not UTF-8 inside a string; expected UTF-8 text");
      i_ += n;
    }
    return At(i_,
              "expected '\"' to close the string that starts at " + LineColumn(start) + ", found the end of the text");
  }

  // A backslash escape at i_ (RFC 8259 §7).
  std::string Escape() {
    const size_t at = i_;
    const char e = i_ + 1 < t_.size() ? t_[i_ + 1] : '\0';
    if (std::string_view("\"\\/bfnrt").find(e) != std::string_view::npos && e != '\0') {
      i_ += 2;
      return "";
    }
    constexpr const char* kEscapes = "one of \\\" \\\\ \\/ \\b \\f \\n \\r \\t \\uXXXX";
    if (static_cast<unsigned char>(e) < 0x20 || static_cast<unsigned char>(e) >= 0x7F || at + 1 >= t_.size())
      return At(at, "found '\\' then " + Found(at + 1) + " in a string; expected " + kEscapes);
    if (e != 'u') return At(at, "found '\\" + std::string(1, e) + "' in a string; expected " + kEscapes);
    unsigned code = 0;
    if (!Hex4(at + 2, &code)) return At(at, "expected four hexadecimal digits after \\u");
    i_ = at + 6;
    if (code >= 0xDC00 && code <= 0xDFFF)
      return At(at, "found the low surrogate \\u" + std::string(t_.substr(at + 2, 4)) +
                        " alone; expected it after a high surrogate \\uD800-\\uDBFF");
    if (code >= 0xD800 && code <= 0xDBFF) {
      unsigned low = 0;
      if (t_.substr(i_, 2) != "\\u" || !Hex4(i_ + 2, &low) || low < 0xDC00 || low > 0xDFFF)
        return At(at, "found the high surrogate \\u" + std::string(t_.substr(at + 2, 4)) +
                          " alone; expected a low surrogate \\uDC00-\\uDFFF right after it");
      i_ += 6;
    }
    return "";
  }

  bool Hex4(size_t k, unsigned* out) const {
    if (k + 4 > t_.size()) return false;
    *out = 0;
    for (size_t j = k; j < k + 4; ++j) {
      if (!IsHex(t_[j])) return false;
      *out = *out * 16 + static_cast<unsigned>(IsDigit(t_[j]) ? t_[j] - '0' : (t_[j] | 0x20) - 'a' + 10);
    }
    return true;
  }

  // A number at i_ (RFC 8259 §6), finite as a double.
  std::string Number() {
    const size_t start = i_;
    if (t_[i_] == '-') ++i_;
    if (i_ >= t_.size() || !IsDigit(t_[i_])) return At(i_, "expected a digit after '-', found " + Found(i_));
    if (t_[i_] == '0' && i_ + 1 < t_.size() && IsDigit(t_[i_ + 1]))
      return At(start, "found a number with a leading zero; expected 0 or a number starting with 1-9");
    while (i_ < t_.size() && IsDigit(t_[i_])) ++i_;
    if (i_ < t_.size() && t_[i_] == '.') {
      ++i_;
      if (i_ >= t_.size() || !IsDigit(t_[i_])) return At(i_, "expected a digit after '.', found " + Found(i_));
      while (i_ < t_.size() && IsDigit(t_[i_])) ++i_;
    }
    if (i_ < t_.size() && (t_[i_] == 'e' || t_[i_] == 'E')) {
      ++i_;
      if (i_ < t_.size() && (t_[i_] == '+' || t_[i_] == '-')) ++i_;
      if (i_ >= t_.size() || !IsDigit(t_[i_])) return At(i_, "expected a digit in the exponent, found " + Found(i_));
      while (i_ < t_.size() && IsDigit(t_[i_])) ++i_;
    }
    const std::string digits(t_.substr(start, i_ - start));
    errno = 0;
    const double d = std::strtod(digits.c_str(), nullptr);
    if (std::isinf(d))
      return At(start, "found the number " + (digits.size() > 24 ? digits.substr(0, 21) + "..." : digits) +
                           ", too large for a double; expected a number of magnitude below 1.8e308");
    return "";
  }

  std::string_view t_;
  bool one_line_;     // places named by column only
  size_t start_ = 0;  // past a byte-order mark, which no editor counts as a column
  size_t i_ = 0;
};

}  // namespace

std::string JsonSyntaxProblem(std::string_view text) { return Scanner(text, false).Run(); }

std::string JsonLineSyntaxProblem(std::string_view line) {
  std::string problem = Scanner(line, true).Run();
  if (problem.rfind(" at ", 0) == 0) problem.erase(0, 4);
  return problem;
}

}  // namespace fanfold
