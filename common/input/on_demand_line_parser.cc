#include "common/input/on_demand_line_parser.h"

#include <simdjson.h>

#include <charconv>
#include <climits>
#include <limits>
#include <utility>

namespace fanfold {
namespace {

namespace od = simdjson::ondemand;
using simdjson::error_code;

bool IsDigit(char c) { return c >= '0' && c <= '9'; }

}  // namespace

bool ParseJsonNumber(std::string_view text, Value* out) {
  // Grammar: -? (0 | [1-9][0-9]*) (. [0-9]+)? ([eE] [+-]? [0-9]+)?
  const char* b = text.data();
  const char* e = b + text.size();
  const char* p = b;
  const bool negative = p < e && *p == '-';
  if (negative) ++p;
  const char* int_begin = p;
  if (p == e || !IsDigit(*p)) return false;
  if (*p == '0') ++p;
  else while (p < e && IsDigit(*p)) ++p;
  const char* int_end = p;
  const char* frac_begin = p;
  const char* frac_end = p;
  if (p < e && *p == '.') {
    frac_begin = ++p;
    while (p < e && IsDigit(*p)) ++p;
    if (p == frac_begin) return false;
    frac_end = p;
  }
  bool has_exponent = false;
  int64_t exponent = 0;
  if (p < e && (*p == 'e' || *p == 'E')) {
    has_exponent = true;
    ++p;
    bool exp_negative = false;
    if (p < e && (*p == '+' || *p == '-')) exp_negative = *p++ == '-';
    if (p == e || !IsDigit(*p)) return false;
    for (; p < e && IsDigit(*p); ++p) {
      if (exponent < 1000000) exponent = exponent * 10 + (*p - '0');  // saturates: far past any double
    }
    if (exp_negative) exponent = -exponent;
  }
  if (p != e) return false;
  if (!has_exponent && frac_begin == frac_end) {
    // An integer: exact within [-2^63, 2^64), the nearest double beyond.
    uint64_t magnitude = 0;
    auto [q, ec] = std::from_chars(int_begin, int_end, magnitude);
    if (ec == std::errc() && q == int_end) {
      if (!negative) {
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
    int64_t k = exponent;
    const char* first = int_begin;
    while (first < int_end && *first == '0') ++first;
    if (first < int_end) {
      k += (int_end - first) - 1;
    } else {
      const char* f = frac_begin;
      while (f < frac_end && *f == '0') ++f;
      k -= (f - frac_begin) + 1;
    }
    d = k > 0 ? std::numeric_limits<double>::infinity() : 0.0;
    if (negative) d = -d;
  } else if (ec != std::errc() || q != e) {
    return false;
  }
  *out = Value::Number(d);
  return true;
}

struct OnDemandLineParser::Impl {
  od::parser parser;
  std::vector<PointerNode>* nodes = nullptr;
  uint64_t generation = 0;
  Value* slots = nullptr;

  void Fill(int32_t ni, const Value& v) {
    if (ni >= 0 && (*nodes)[ni].slot >= 0) slots[(*nodes)[ni].slot] = v;
  }

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
    if (ni < 0) return -1;
    for (uint32_t c : (*nodes)[ni].children)
      if ((*nodes)[c].index == i) return static_cast<int32_t>(c);
    return -1;
  }

  error_code VisitObject(od::object obj, int32_t ni) {
    for (auto member : obj) {
      od::field field;
      std::string_view key;
      if (error_code err = std::move(member).get(field)) return err;
      if (error_code err = field.unescaped_key().get(key)) return err;
      if (error_code err = Visit(field.value(), Member(ni, key))) return err;
    }
    return simdjson::SUCCESS;
  }

  // Visits (and so validates) v and everything in it; ni is the trie node
  // for v, or -1 where no pointer leads.
  error_code Visit(od::value v, int32_t ni) {
    od::json_type type;
    if (error_code err = v.type().get(type)) return err;
    switch (type) {
      case od::json_type::object: {
        od::object obj;
        if (error_code err = v.get_object().get(obj)) return err;
        Fill(ni, Value::Other());
        return VisitObject(obj, ni);
      }
      case od::json_type::array: {
        od::array arr;
        if (error_code err = v.get_array().get(arr)) return err;
        Fill(ni, Value::Other());
        int64_t i = 0;
        for (auto item : arr) {
          od::value el;
          if (error_code err = std::move(item).get(el)) return err;
          if (error_code err = Visit(el, Element(ni, i++))) return err;
        }
        return simdjson::SUCCESS;
      }
      case od::json_type::number: {
        std::string_view token = v.raw_json_token();
        while (!token.empty() && (token.back() == ' ' || token.back() == '\t' || token.back() == '\r' ||
                                  token.back() == '\n'))
          token.remove_suffix(1);
        Value number;
        if (!ParseJsonNumber(token, &number)) return simdjson::NUMBER_ERROR;
        Fill(ni, number);
        return simdjson::SUCCESS;
      }
      case od::json_type::string: {
        std::string_view s;
        if (error_code err = v.get_string().get(s)) return err;
        Fill(ni, Value::String(s));
        return simdjson::SUCCESS;
      }
      case od::json_type::boolean: {
        bool b;
        if (error_code err = v.get_bool().get(b)) return err;
        Fill(ni, Value::Bool(b));
        return simdjson::SUCCESS;
      }
      case od::json_type::null: {
        bool is_null = false;
        if (error_code err = v.is_null().get(is_null)) return err;
        if (!is_null) return simdjson::N_ATOM_ERROR;
        Fill(ni, Value::Null());
        return simdjson::SUCCESS;
      }
    }
    return simdjson::TAPE_ERROR;
  }
};

OnDemandLineParser::OnDemandLineParser() : impl_(std::make_unique<Impl>()) {}
OnDemandLineParser::~OnDemandLineParser() = default;

const char* OnDemandLineParser::Parse(const char* p, size_t len, size_t capacity,
                                      std::vector<PointerNode>* nodes, uint64_t generation, Value* slots) {
  Impl& im = *impl_;
  im.nodes = nodes;
  im.generation = generation;
  im.slots = slots;
  od::document doc;
  if (error_code err = im.parser.iterate(p, len, capacity).get(doc)) return simdjson::error_message(err);
  od::json_type type;
  if (error_code err = doc.type().get(type)) return simdjson::error_message(err);
  if (type != od::json_type::object) return "the line is not a JSON object";
  od::object root;
  if (error_code err = doc.get_object().get(root)) return simdjson::error_message(err);
  if (error_code err = im.VisitObject(root, 0)) return simdjson::error_message(err);
  // Past the root object only the end may follow; simdjson 3.0.1's document
  // has no at_end(), but current_location() fails with OUT_OF_BOUNDS there.
  const char* at = nullptr;
  if (doc.current_location().get(at) != simdjson::OUT_OF_BOUNDS) {
    return simdjson::error_message(simdjson::TRAILING_CONTENT);
  }
  return nullptr;
}

}  // namespace fanfold
