#include "common/job/table_spec.h"

#include <set>

#include <nlohmann/json.hpp>

#include "common/base/json_location.h"
#include "common/base/nearest_names.h"
#include "common/job/shard_list.h"

namespace fanfold {
namespace {

using nlohmann::json;

class TableChecker {
 public:
  explicit TableChecker(const std::string& job_path) : job_path_(job_path) {}

  Status Error(const std::string& pointer, const std::string& found, const std::string& expected) const {
    return Status::InvalidArgument(job_path_ + ": " + pointer + ": found " + found + "; expected " + expected);
  }

  static std::string Found(const json& v) {
    if (v.is_string()) {
      std::string s = v.dump();
      return (s.size() > 60 ? s.substr(0, 57) + "..." : s) + " (a string)";
    }
    if (v.is_number() || v.is_boolean()) return v.dump() + (v.is_boolean() ? " (a boolean)" : " (a number)");
    if (v.is_null()) return "null";
    return v.is_array() ? "an array" : "an object";
  }

  Status OnlyKeys(const json& obj, const std::string& p, const std::vector<std::string>& allowed) const {
    for (auto it = obj.begin(); it != obj.end(); ++it) {
      bool known = false;
      for (const auto& k : allowed) known = known || k == it.key();
      if (known) continue;
      std::string list;
      for (const auto& k : allowed) list += (list.empty() ? "" : ", ") + k;
      return Error(ChildPointer(p, it.key()),
                   "unknown key \"" + it.key() + "\"" + DidYouMean(it.key(), allowed, Quoted), "one of: " + list);
    }
    return Status::Ok();
  }

  Status String(const json& obj, const std::string& p, const char* key, const char* what, std::string* out) const {
    if (!obj.contains(key)) return Error(p, std::string("no \"") + key + "\"", std::string("\"") + key + "\": " + what);
    const json& v = obj[key];
    const std::string at = ChildPointer(p, key);
    if (!v.is_string()) return Error(at, Found(v), what);
    *out = v.get<std::string>();
    if (out->empty()) return Error(at, "an empty string", what);
    return Status::Ok();
  }

  Status Identifier(const json& obj, const std::string& p, const char* key, const char* what,
                    std::string* out) const {
    FF_RETURN_IF_ERROR(String(obj, p, key, what, out));
    if (!IsTableIdentifier(*out))
      return Error(ChildPointer(p, key), Found(obj[key]),
                   std::string(what) + " (letters, digits and _, not starting with a digit)");
    return Status::Ok();
  }

  static std::string Quoted(std::string_view s) { return std::string("\"").append(s).append("\""); }

 private:
  const std::string& job_path_;
};

Status ParseTable(const TableChecker& c, const json& t, const std::string& p, TableSpec* out) {
  if (!t.is_object()) return c.Error(p, TableChecker::Found(t), "an object with \"name\", \"path\", \"key\", \"match\" and \"fields\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(t, p, {"name", "path", "format", "key", "match", "fields"}));
  FF_RETURN_IF_ERROR(c.Identifier(t, p, "name", "the table's name", &out->name));
  FF_RETURN_IF_ERROR(c.String(t, p, "path", "the table's file (CSV, TSV or NDJSON, optionally .zst or .gz)", &out->path));
  out->compression = CompressionFromName(out->path);
  if (t.contains("format")) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(t, p, "format", "a record format", &f));
    if (!FormatFromText(f, &out->format)) {
      std::vector<std::string> names;
      for (const RecordFormatRow& row : RecordFormatRows()) names.push_back(row.name);
      return c.Error(p + "/format", "unknown format " + TableChecker::Quoted(f) + DidYouMean(f, names, TableChecker::Quoted),
                     FormatNameList());
    }
  } else if (!FormatFromName(out->path, &out->format)) {
    return c.Error(p + "/path", TableChecker::Found(t["path"]),
                   "a file name ending in .csv, .tsv, .ndjson or .jsonl (then optionally .zst or .gz), or a "
                   "\"format\" beside it");
  }
  FF_RETURN_IF_ERROR(c.String(t, p, "key", "an expression over the table's rows giving each row's key", &out->key));
  FF_RETURN_IF_ERROR(c.String(t, p, "match", "an expression over the records giving the key to look up", &out->match));
  if (!t.contains("fields")) return c.Error(p, "no \"fields\"", "\"fields\": the values the table brings");
  const json& fs = t["fields"];
  const std::string fp = p + "/fields";
  if (!fs.is_array() || fs.empty())
    return c.Error(fp, TableChecker::Found(fs), "a non-empty array of column names or {\"name\": ..., \"expr\": ...}");
  for (size_t i = 0; i < fs.size(); ++i) {
    const std::string ip = ChildPointer(fp, i);
    TableFieldSpec field;
    if (fs[i].is_string()) {
      field.name = fs[i].get<std::string>();
      if (!IsTableIdentifier(field.name))
        return c.Error(ip, TableChecker::Found(fs[i]),
                       "a column name that is an identifier (letters, digits and _, not starting with a digit), "
                       "or {\"name\": ..., \"expr\": ...}");
      field.expr = out->format == RecordFormat::kNdjson ? "{/" + field.name + "}" : "{" + field.name + "}";
    } else if (fs[i].is_object()) {
      FF_RETURN_IF_ERROR(c.OnlyKeys(fs[i], ip, {"name", "expr"}));
      FF_RETURN_IF_ERROR(c.Identifier(fs[i], ip, "name", "the name records know the value by", &field.name));
      FF_RETURN_IF_ERROR(c.String(fs[i], ip, "expr", "an expression over the table's rows", &field.expr));
    } else {
      return c.Error(ip, TableChecker::Found(fs[i]), "a column name or {\"name\": ..., \"expr\": ...}");
    }
    for (const TableFieldSpec& earlier : out->fields)
      if (earlier.name == field.name)
        return c.Error(ip, "\"" + field.name + "\" again", "each field name once in a table");
    out->fields.push_back(std::move(field));
  }
  return Status::Ok();
}

}  // namespace

bool IsTableIdentifier(const std::string& s) {
  if (s.empty() || !(isalpha(static_cast<unsigned char>(s[0])) || s[0] == '_')) return false;
  for (char ch : s)
    if (!(isalnum(static_cast<unsigned char>(ch)) || ch == '_')) return false;
  return true;
}

Status ParseTableSpecs(const json& tables, const std::string& job_path, std::vector<TableSpec>* out) {
  TableChecker c(job_path);
  if (!tables.is_array()) return c.Error("/tables", TableChecker::Found(tables), "an array of table objects");
  for (size_t i = 0; i < tables.size(); ++i) {
    const std::string p = ChildPointer("/tables", i);
    TableSpec spec;
    FF_RETURN_IF_ERROR(ParseTable(c, tables[i], p, &spec));
    for (const TableSpec& earlier : *out)
      if (earlier.name == spec.name)
        return c.Error(p + "/name", "\"" + spec.name + "\" again", "a name not used by an earlier table");
    out->push_back(std::move(spec));
  }
  return Status::Ok();
}

}  // namespace fanfold
