#include <cstddef>
#include <cstdint>
#include <string_view>

#include "common/input/json_number.h"
#include "common/input/ndjson/line_parser_impl.h"

namespace fanfold {

// The walk over stage 1's structural indexes: the JSON grammar (RFC 8259
// section 2-4) as a loop with an explicit stack, so it checks every comma,
// colon and bracket without building a tape, and converts only the values
// a pointer ends at.
template <bool kSentinel>
LineVerdict NdjsonLineParser::Impl::Walk(const char* p, const uint32_t* idx, size_t n, size_t len, Value* slots) {
  const bool every = checks == ValueChecks::kEveryValue;
  // The character at structural i (NUL past the last one).
  auto at = [&](size_t i) -> char { return kSentinel || i < n ? p[idx[i]] : '\0'; };
  // Where the token at structural i ends: the next structural, or the end.
  auto token_end = [&](size_t i) -> const char* { return p + (kSentinel || i + 1 < n ? idx[i + 1] : len); };
  if (at(0) != '{') {
    if (at(0) == '[' || at(0) == '"' || at(0) == '-' || (at(0) >= '0' && at(0) <= '9') || at(0) == 't' ||
        at(0) == 'f' || at(0) == 'n')
      return LineVerdict::kNotObject;
    return LineVerdict::kInvalid;
  }
  Frame* const stack = frames.get();
  size_t depth = 0;
  stack[depth++] = Frame{'{', 0, 0};
  // The innermost open scope's bracket and trie node, kept out of the
  // stack: most structurals need them, few open or close a scope.
  bool in_object = true;
  int32_t top_node = 0;
  size_t i = 1;
  int32_t node = -1;  // trie node of the value about to be read
  // Each label is a state of the grammar; every path ends at a return.
object_begin:
  if (at(i) == '}') {
    ++i;
    goto scope_end;
  }
object_key : {
  if (at(i) != '"') return LineVerdict::kInvalid;
  if (top_node < 0 && !BackslashBefore(p + idx[i], token_end(i))) {
    // No pointer leads into this object and the key holds no backslash:
    // it has nothing to check (stage 1 checked its bytes) and names
    // nothing.
    if (at(i + 1) != ':') return LineVerdict::kInvalid;
    i += 2;
    node = -1;
    goto value;
  }
  std::string_view key;
  if (!StringAt(p + idx[i], token_end(i), true, &key)) return LineVerdict::kInvalid;
  if (at(i + 1) != ':') return LineVerdict::kInvalid;
  i += 2;
  node = Member(top_node, key);
  goto value;
}
array_begin:
  if (at(i) == ']') {
    ++i;
    goto scope_end;
  }
array_value:
  node = Element(top_node, stack[depth - 1].index);
value : {
  const int slot = node >= 0 ? node_data[node].slot : -1;
  const char c = at(i);
  // Strings first, outside the switch: the commonest value, and on most
  // lines (no pointer reads it, no backslash) two tests decide it.
  if (c == '"') {
    // A string no pointer reads and without backslashes has nothing to
    // check (stage 1 checked its UTF-8 and control bytes).
    if (slot >= 0 || BackslashBefore(p + idx[i], token_end(i))) {
      std::string_view s;
      if (!StringAt(p + idx[i], token_end(i), slot >= 0, &s)) return LineVerdict::kInvalid;
      if (slot >= 0) {
        // The slot is still missing (each slot is filled at most once a
        // line, after the reset the contract requires), so a string
        // differs from it in its kind and text alone.
        slots[slot].kind = ValueKind::kString;
        slots[slot].str = s;
      }
    }
    ++i;
    goto after_value;
  }
  switch (c) {
    case '{':
    case '[':
      if (depth >= kMaxDepth) return LineVerdict::kTooDeep;
      if (slot >= 0) slots[slot] = Value::Other();
      stack[depth++] = Frame{c, node, 0};
      top_node = node;
      ++i;
      if (c == '{') {
        in_object = true;
        goto object_begin;
      }
      in_object = false;
      goto array_begin;
    case 't':
    case 'f':
    case 'n':
      if (slot >= 0 || every) {
        const std::string_view t = Token(p + idx[i], token_end(i));
        Value v;
        if (t == "true")
          v = Value::Bool(true);
        else if (t == "false")
          v = Value::Bool(false);
        else if (t == "null")
          v = Value::Null();
        else
          return LineVerdict::kInvalid;
        if (slot >= 0) slots[slot] = v;
      } else if (GluedString(p + idx[i], token_end(i))) {
        return LineVerdict::kInvalid;
      }
      break;
    case '-':
    case '0':
    case '1':
    case '2':
    case '3':
    case '4':
    case '5':
    case '6':
    case '7':
    case '8':
    case '9':
      if (slot >= 0) {
        if (!ParseJsonNumber(Token(p + idx[i], token_end(i)), &slots[slot])) return LineVerdict::kBadNumber;
      } else if (every && !IsJsonNumber(Token(p + idx[i], token_end(i)))) {
        return LineVerdict::kBadNumber;
      } else if (GluedString(p + idx[i], token_end(i))) {
        return LineVerdict::kInvalid;
      }
      break;
    default: return LineVerdict::kInvalid;  // no value starts here (a bracket, comma, colon or stray text)
  }
  ++i;
}
after_value:
  if (in_object) {
    if (at(i) == ',') {
      ++i;
      goto object_key;
    }
    if (at(i) != '}') return LineVerdict::kInvalid;
  } else {
    if (at(i) == ',') {
      ++i;
      ++stack[depth - 1].index;
      goto array_value;
    }
    if (at(i) != ']') return LineVerdict::kInvalid;
  }
  ++i;
scope_end:
  if (--depth > 0) {
    in_object = stack[depth - 1].bracket == '{';
    top_node = stack[depth - 1].node;
    goto after_value;
  }
  return i == n ? LineVerdict::kRecord : LineVerdict::kInvalid;  // nothing after the root object
}

template LineVerdict NdjsonLineParser::Impl::Walk<true>(const char*, const uint32_t*, size_t, size_t, Value*);
template LineVerdict NdjsonLineParser::Impl::Walk<false>(const char*, const uint32_t*, size_t, size_t, Value*);

}  // namespace fanfold
