#include "common/input/on_demand_line_parser.h"

#include <simdjson.h>

#include <charconv>
#include <cstring>
#include <climits>
#include <limits>
#include <utility>

namespace fanfold {
namespace {

namespace od = simdjson::ondemand;
using simdjson::error_code;

bool IsDigit(char c) { return c >= '0' && c <= '9'; }

// The parts of a JSON number token (RFC 8259 section 6 grammar:
// -? (0 | [1-9][0-9]*) (. [0-9]+)? ([eE] [+-]? [0-9]+)?).
struct NumberParts {
  bool negative = false;
  const char* int_begin = nullptr;
  const char* int_end = nullptr;
  const char* frac_begin = nullptr;
  const char* frac_end = nullptr;
  bool has_exponent = false;
  int64_t exponent = 0;  // saturated far past any double's range
};

// Splits text into *parts; returns false iff it is not a JSON number.
bool SplitJsonNumber(std::string_view text, NumberParts* parts) {
  const char* b = text.data();
  const char* e = b + text.size();
  const char* p = b;
  NumberParts& n = *parts;
  n.negative = p < e && *p == '-';
  if (n.negative) ++p;
  n.int_begin = p;
  if (p == e || !IsDigit(*p)) return false;
  if (*p == '0') ++p;
  else while (p < e && IsDigit(*p)) ++p;
  n.int_end = p;
  n.frac_begin = p;
  n.frac_end = p;
  if (p < e && *p == '.') {
    n.frac_begin = ++p;
    while (p < e && IsDigit(*p)) ++p;
    if (p == n.frac_begin) return false;
    n.frac_end = p;
  }
  if (p < e && (*p == 'e' || *p == 'E')) {
    n.has_exponent = true;
    ++p;
    bool exp_negative = false;
    if (p < e && (*p == '+' || *p == '-')) exp_negative = *p++ == '-';
    if (p == e || !IsDigit(*p)) return false;
    for (; p < e && IsDigit(*p); ++p) {
      if (n.exponent < 1000000) n.exponent = n.exponent * 10 + (*p - '0');
    }
    if (exp_negative) n.exponent = -n.exponent;
  }
  return p == e;
}

}  // namespace

bool IsJsonNumber(std::string_view text) {
  NumberParts parts;
  return SplitJsonNumber(text, &parts);
}

bool ParseJsonNumber(std::string_view text, Value* out) {
  NumberParts n;
  if (!SplitJsonNumber(text, &n)) return false;
  const char* b = text.data();
  const char* e = b + text.size();
  if (!n.has_exponent && n.frac_begin == n.frac_end) {
    // An integer: exact within [-2^63, 2^64), the nearest double beyond.
    uint64_t magnitude = 0;
    auto [q, ec] = std::from_chars(n.int_begin, n.int_end, magnitude);
    if (ec == std::errc() && q == n.int_end) {
      if (!n.negative) {
        *out = Value::Uint(magnitude);
        return true;
      }
      if (magnitude <= static_cast<uint64_t>(INT64_MAX) + 1) {
        *out = Value::FromWide(-static_cast<WideInt>(magnitude));
        return true;
      }
    }
  }
  double d = 0;
  auto [q, ec] = std::from_chars(b, e, d);  // correctly rounded, no locale
  if (ec == std::errc::result_out_of_range) {
    // Overflow or underflow: which one the decimal exponent of the first
    // significant digit says (digits d.ddd x 10^k with k > 308 overflow).
    int64_t k = n.exponent;
    const char* first = n.int_begin;
    while (first < n.int_end && *first == '0') ++first;
    if (first < n.int_end) {
      k += (n.int_end - first) - 1;
    } else {
      const char* f = n.frac_begin;
      while (f < n.frac_end && *f == '0') ++f;
      k -= (f - n.frac_begin) + 1;
    }
    d = k > 0 ? std::numeric_limits<double>::infinity() : 0.0;
    if (n.negative) d = -d;
  } else if (ec != std::errc() || q != e) {
    return false;
  }
  *out = Value::Number(d);
  return true;
}

namespace {

// A scalar token as simdjson hands it out (up to the next structural
// character), without the whitespace after it.
std::string_view Trimmed(std::string_view token) {
  while (!token.empty() && (token.back() == ' ' || token.back() == '\t' || token.back() == '\r' ||
                            token.back() == '\n'))
    token.remove_suffix(1);
  return token;
}

LineVerdict VerdictOf(error_code err) {
  switch (err) {
    case simdjson::SUCCESS: return LineVerdict::kRecord;
    case simdjson::DEPTH_ERROR: return LineVerdict::kTooDeep;
    case simdjson::NUMBER_ERROR: return LineVerdict::kBadNumber;
    case simdjson::UTF8_ERROR: return LineVerdict::kNotUtf8;
    case simdjson::CAPACITY: return LineVerdict::kTooLong;
    default: return LineVerdict::kInvalid;
  }
}

}  // namespace

struct OnDemandLineParser::Impl {
  explicit Impl(ValueChecks c) : checks(c) {}

  // Nesting deeper than this is refused (kTooDeep) before the walk's
  // recursion could exhaust the stack.
  static constexpr int kMaxDepth = 1024;

  od::parser parser;
  ValueChecks checks;
  std::vector<PointerNode>* nodes = nullptr;
  uint64_t generation = 0;
  Value* slots = nullptr;

  // The child of ni that `key` names and no earlier duplicate took, or -1.
  int32_t Member(int32_t ni, std::string_view key) {
    if (ni < 0) return -1;
    for (uint32_t c : (*nodes)[ni].children) {
      PointerNode& child = (*nodes)[c];
      if (!TokenIs(child.token, key)) continue;
      if (child.seen == generation) return -1;  // duplicate keys: the first one wins
      child.seen = generation;
      return static_cast<int32_t>(c);
    }
    return -1;
  }

  int32_t Element(int32_t ni, int64_t i) const {
    if (ni < 0 || i > (*nodes)[ni].max_child_index) return -1;
    for (uint32_t c : (*nodes)[ni].children)
      if ((*nodes)[c].index == i) return static_cast<int32_t>(c);
    return -1;
  }

  error_code VisitObject(od::object obj, int32_t ni, int depth) {
    for (auto member : obj) {
      od::field field;
      std::string_view key;
      if (error_code err = std::move(member).get(field)) return err;
      if (error_code err = field.unescaped_key().get(key)) return err;  // checks the key's escapes
      if (error_code err = Visit(field.value(), Member(ni, key), depth)) return err;
    }
    return simdjson::SUCCESS;
  }

  // A number a pointer reads: simdjson's parser for what fits 64 bits or a
  // double, ParseJsonNumber for the rest (and to judge what it refuses).
  // simdjson 3.0.1's On-Demand get_number() misreads some numbers of more
  // than 19 digits (12345678901234567890123.5e-5 gives 0), so tokens that
  // long go to ParseJsonNumber (std::from_chars: correctly rounded).
  static constexpr size_t kShortNumber = 19;

  static error_code ReadNumber(od::value& v, Value* out) {
    const std::string_view token = Trimmed(v.raw_json_token());
    od::number num;
    if (token.size() <= kShortNumber && v.get_number().get(num) == simdjson::SUCCESS) {
      switch (num.get_number_type()) {
        case od::number_type::signed_integer: *out = Value::Int(num.get_int64()); break;
        case od::number_type::unsigned_integer: *out = Value::Uint(num.get_uint64()); break;
        case od::number_type::floating_point_number: *out = Value::Number(num.get_double()); break;
      }
      return simdjson::SUCCESS;
    }
    if (!ParseJsonNumber(token, out)) return simdjson::NUMBER_ERROR;
    return simdjson::SUCCESS;
  }

  // Visits v and everything in it, checking structure always and scalar
  // spelling as `checks` says; ni is the trie node for v, or -1 where no
  // pointer leads.
  error_code Visit(od::value v, int32_t ni, int depth) {
    const int slot = ni >= 0 ? (*nodes)[ni].slot : -1;
    const bool every = checks == ValueChecks::kEveryValue;
    od::json_type type;
    if (error_code err = v.type().get(type)) return err;
    switch (type) {
      case od::json_type::object: {
        if (depth >= kMaxDepth) return simdjson::DEPTH_ERROR;
        od::object obj;
        if (error_code err = v.get_object().get(obj)) return err;
        if (slot >= 0) slots[slot] = Value::Other();
        return VisitObject(obj, ni, depth + 1);
      }
      case od::json_type::array: {
        if (depth >= kMaxDepth) return simdjson::DEPTH_ERROR;
        od::array arr;
        if (error_code err = v.get_array().get(arr)) return err;
        if (slot >= 0) slots[slot] = Value::Other();
        int64_t i = 0;
        for (auto item : arr) {
          od::value el;
          if (error_code err = std::move(item).get(el)) return err;
          if (error_code err = Visit(el, Element(ni, i++), depth + 1)) return err;
        }
        return simdjson::SUCCESS;
      }
      case od::json_type::number: {
        if (slot >= 0) return ReadNumber(v, &slots[slot]);
        if (every && !IsJsonNumber(Trimmed(v.raw_json_token()))) return simdjson::NUMBER_ERROR;
        return simdjson::SUCCESS;
      }
      case od::json_type::string: {
        // Stage 1 has checked UTF-8, control characters and the closing
        // quote; only a string with a backslash needs its escapes checked.
        std::string_view s;
        if (slot < 0) {
          std::string_view raw = v.raw_json_token();
          if (std::memchr(raw.data(), '\\', raw.size()) == nullptr) return simdjson::SUCCESS;
        }
        if (error_code err = v.get_string().get(s)) return err;
        if (slot >= 0) slots[slot] = Value::String(s);
        return simdjson::SUCCESS;
      }
      case od::json_type::boolean: {
        if (slot < 0 && !every) return simdjson::SUCCESS;
        bool b;
        if (error_code err = v.get_bool().get(b)) return err;
        if (slot >= 0) slots[slot] = Value::Bool(b);
        return simdjson::SUCCESS;
      }
      case od::json_type::null: {
        if (slot < 0 && !every) return simdjson::SUCCESS;
        bool is_null = false;
        if (error_code err = v.is_null().get(is_null)) return err;
        if (!is_null) return simdjson::N_ATOM_ERROR;
        if (slot >= 0) slots[slot] = Value::Null();
        return simdjson::SUCCESS;
      }
    }
    return simdjson::TAPE_ERROR;
  }
};

OnDemandLineParser::OnDemandLineParser(ValueChecks checks) : impl_(std::make_unique<Impl>(checks)) {}
OnDemandLineParser::~OnDemandLineParser() = default;

const char* OnDemandLineParser::Stage1KernelName() {
  return simdjson::get_active_implementation()->name().c_str();
}

LineVerdict OnDemandLineParser::Parse(const char* p, size_t len, size_t capacity, std::vector<PointerNode>* nodes,
                                      uint64_t generation, Value* slots) {
  Impl& im = *impl_;
  im.nodes = nodes;
  im.generation = generation;
  im.slots = slots;
  od::document doc;
  if (error_code err = im.parser.iterate(p, len, capacity).get(doc)) return VerdictOf(err);
  od::json_type type;
  if (error_code err = doc.type().get(type)) return VerdictOf(err);
  if (type != od::json_type::object) return LineVerdict::kNotObject;
  od::object root;
  if (error_code err = doc.get_object().get(root)) return VerdictOf(err);
  if (error_code err = im.VisitObject(root, 0, 1)) return VerdictOf(err);
  // Past the root object only the end may follow; simdjson 3.0.1's document
  // has no at_end(), but current_location() fails with OUT_OF_BOUNDS there.
  const char* at = nullptr;
  if (doc.current_location().get(at) != simdjson::OUT_OF_BOUNDS) return LineVerdict::kInvalid;
  return LineVerdict::kRecord;
}

}  // namespace fanfold
