#include "common/base/cell_text.h"

#include <charconv>
#include <cmath>

#include "common/base/number_text.h"

namespace fanfold {

namespace {
std::string NumberText(double d) {
  char buf[kNumberTextMax];
  return std::string(FormatNumber(d, buf));
}
}  // namespace

void AppendJsonString(const std::string& s, std::string* out) {
  static const char* kHex = "0123456789abcdef";
  out->push_back('"');
  for (unsigned char c : s) {
    switch (c) {
      case '"': *out += "\\\""; break;
      case '\\': *out += "\\\\"; break;
      case '\n': *out += "\\n"; break;
      case '\r': *out += "\\r"; break;
      case '\t': *out += "\\t"; break;
      default:
        if (c < 0x20) {
          *out += "\\u00";
          out->push_back(kHex[c >> 4]);
          out->push_back(kHex[c & 15]);
        } else {
          out->push_back(static_cast<char>(c));
        }
    }
  }
  out->push_back('"');
}

void AppendCellJson(const Cell& c, std::string* out) {
  switch (c.kind) {
    case Cell::Kind::kNull: *out += "null"; break;
    case Cell::Kind::kBool: *out += c.boolean ? "true" : "false"; break;
    case Cell::Kind::kInt: AppendWideInt(c.integer, out); break;
    case Cell::Kind::kFloat:
      // JSON has no literal for them: a non-finite number is the string
      // CSV and the table print ("inf", "-inf", "nan"), so every format
      // shows the same text and a reader can tell it from null.
      if (std::isfinite(c.number)) *out += NumberText(c.number);
      else AppendJsonString(NumberText(c.number), out);
      break;
    case Cell::Kind::kString: AppendJsonString(c.str, out); break;
    case Cell::Kind::kList:
      out->push_back('[');
      for (size_t i = 0; i < c.items.size(); ++i) {
        if (i) out->push_back(',');
        AppendCellJson(c.items[i], out);
      }
      out->push_back(']');
      break;
    case Cell::Kind::kRecord:
      out->push_back('{');
      for (size_t i = 0; i < c.items.size(); ++i) {
        if (i) out->push_back(',');
        AppendJsonString(i < c.names.size() ? c.names[i] : std::to_string(i), out);
        out->push_back(':');
        AppendCellJson(c.items[i], out);
      }
      out->push_back('}');
      break;
  }
}

void AppendCsvField(std::string_view s, char sep, std::string* out) {
  bool quote = false;
  // '"', '\n' and '\r' all lie at or below '"': one compare per byte mostly.
  for (size_t i = 0; i < s.size() && !quote; ++i) {
    const unsigned char c = static_cast<unsigned char>(s[i]);
    quote = c == static_cast<unsigned char>(sep) || (c <= '"' && (c == '"' || c == '\n' || c == '\r'));
  }
  if (!quote) {
    out->append(s);
    return;
  }
  out->push_back('"');
  for (char c : s) {
    if (c == '"') out->push_back('"');
    out->push_back(c);
  }
  out->push_back('"');
}

std::string CellJson(const Cell& c) {
  std::string s;
  AppendCellJson(c, &s);
  return s;
}

std::string CellText(const Cell& c) {
  switch (c.kind) {
    case Cell::Kind::kNull: return "";
    case Cell::Kind::kBool: return c.boolean ? "true" : "false";
    case Cell::Kind::kInt: {
      std::string text;
      AppendWideInt(c.integer, &text);
      return text;
    }
    case Cell::Kind::kFloat: return NumberText(c.number);
    case Cell::Kind::kString: return c.str;
    default: return CellJson(c);
  }
}

}  // namespace fanfold
