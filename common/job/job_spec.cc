#include "common/job/job_spec.h"

#include <cmath>
#include <filesystem>
#include <fstream>
#include <set>
#include <type_traits>
#include <variant>
#include <sstream>

#include <nlohmann/json.hpp>

#include "common/base/json_document.h"
#include "common/base/json_location.h"
#include "common/base/json_syntax.h"
#include "common/base/nearest_names.h"
#include "common/base/number_text.h"
#include "common/base/value_compare.h"
#include "common/measures/measure_options.h"
#include "common/measures/measure_registry.h"

namespace fanfold {
namespace {

using nlohmann::json;

const char* TypeName(const json& v) {
  switch (v.type()) {
    case json::value_t::null: return "null";
    case json::value_t::boolean: return "a boolean";
    case json::value_t::number_integer:
    case json::value_t::number_unsigned: return "an integer";
    case json::value_t::number_float: return "a number";
    case json::value_t::string: return "a string";
    case json::value_t::array: return "an array";
    case json::value_t::object: return "an object";
    default: return "a value";
  }
}

// Short rendering of a found value for messages.
std::string Found(const json& v) {
  if (v.is_string() || v.is_number() || v.is_boolean()) {
    std::string s = v.dump();
    if (s.size() > 60) s = s.substr(0, 57) + "...";
    return s + " (" + TypeName(v) + ")";
  }
  return TypeName(v);
}

// "\"name\"", for DidYouMean over job-file keys and measure names.
std::string Quoted(std::string_view name) {
  std::string out = "\"";  // appended: GCC 12 falsely warns on "\"" + string (-Wrestrict)
  return out.append(name).append("\"");
}

// Walks a job document, recording the first error with its location.
class Checker {
 public:
  explicit Checker(std::string file) : file_(std::move(file)) {}

  Status Error(const std::string& pointer, const std::string& found, const std::string& expected) {
    return Status::InvalidArgument(file_ + ": " + (pointer.empty() ? "(top level)" : pointer) +
                                   ": found " + found + "; expected " + expected);
  }

  // Fails iff obj has a key outside `allowed`.
  Status OnlyKeys(const json& obj, const std::string& pointer, const std::set<std::string>& allowed) {
    for (auto it = obj.begin(); it != obj.end(); ++it) {
      if (allowed.count(it.key())) continue;
      std::string list;
      for (const auto& k : allowed) list += (list.empty() ? "" : ", ") + k;
      const std::vector<std::string> names(allowed.begin(), allowed.end());
      return Error(ChildPointer(pointer, it.key()),
                   "unknown key \"" + it.key() + "\"" + DidYouMean(it.key(), names, Quoted), "one of: " + list);
    }
    return Status::Ok();
  }

  Status String(const json& v, const std::string& p, std::string* out, bool nonempty = true) {
    if (!v.is_string()) return Error(p, Found(v), "a string");
    *out = v.get<std::string>();
    if (nonempty && out->empty()) return Error(p, "an empty string", "a non-empty string");
    return Status::Ok();
  }

  Status Number(const json& v, const std::string& p, double lo, double hi, bool open, double* out) {
    if (!v.is_number()) return Error(p, Found(v), "a number");
    double d = v.get<double>();
    // An integer the nearest double would change (2^53 + 1) is refused
    // rather than read as another number than the one written.
    if (v.is_number_integer()) {
      const WideInt w = v.is_number_unsigned() ? static_cast<WideInt>(v.get<uint64_t>())
                                               : static_cast<WideInt>(v.get<int64_t>());
      if (CompareWideToDouble(w, d) != 0) {
        char buf[kNumberTextMax];
        return Error(p, Found(v), "a number a double holds exactly (this one would be read as " +
                                      std::string(FormatNumber(d, buf)) + ")");
      }
    }
    bool in = open ? (d > lo && d < hi) : (d >= lo && d <= hi);
    if (!in || !std::isfinite(d)) {
      std::ostringstream range;
      range << "a number in " << (open ? "(" : "[") << lo << ", " << hi << (open ? ")" : "]");
      return Error(p, Found(v), range.str());
    }
    *out = d;
    return Status::Ok();
  }

  Status Integer(const json& v, const std::string& p, uint64_t lo, uint64_t hi, uint64_t* out) {
    if (!v.is_number_integer() || (v.is_number_integer() && !v.is_number_unsigned() && v.get<int64_t>() < 0) ||
        v.get<uint64_t>() < lo || v.get<uint64_t>() > hi) {
      return Error(p, Found(v), "an integer in [" + std::to_string(lo) + ", " + std::to_string(hi) + "]");
    }
    *out = v.get<uint64_t>();
    return Status::Ok();
  }

 private:
  std::string file_;
};

Status ParseInputs(Checker& c, const json& in, JobSpec* job) {
  const std::string p = "/inputs";
  if (!in.is_object()) return c.Error(p, Found(in), "an object with \"files\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(in, p, {"files", "format", "bad_record_limit", "chunk_bytes", "check_unread_values"}));
  if (!in.contains("files")) return c.Error(p, "no \"files\"", "\"files\": a list of paths or patterns");
  const json& files = in["files"];
  if (files.is_string()) return c.Error(p + "/files", Found(files), "an array of strings (wrap it in [ ])");
  if (!files.is_array() || files.empty()) return c.Error(p + "/files", Found(files), "a non-empty array of strings");
  for (size_t i = 0; i < files.size(); ++i) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(files[i], ChildPointer(p + "/files", i), &f));
    job->files.push_back(f);
  }
  if (in.contains("format")) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(in["format"], p + "/format", &f));
    RecordFormat fmt;
    if (!FormatFromText(f, &fmt)) {
      std::vector<std::string> names;
      for (const RecordFormatRow& row : RecordFormatRows()) names.push_back(row.name);
      const std::string near = DidYouMean(f, names, Quoted);
      return c.Error(p + "/format", near.empty() ? Found(in["format"]) : "unknown format " + Quoted(f) + near,
                     FormatNameList());
    }
    job->format = fmt;
  }
  if (in.contains("bad_record_limit")) {
    double d = 0;
    FF_RETURN_IF_ERROR(c.Number(in["bad_record_limit"], p + "/bad_record_limit", 0, 1, false, &d));
    job->bad_record_limit = d;
  }
  if (in.contains("chunk_bytes")) {
    FF_RETURN_IF_ERROR(c.Integer(in["chunk_bytes"], p + "/chunk_bytes", 1 << 16, uint64_t{1} << 40, &job->chunk_bytes));
  }
  if (const auto v = in.find("check_unread_values"); v != in.end()) {
    if (!v->is_boolean()) return c.Error(p + "/check_unread_values", Found(*v), "true or false");
    job->check_unread_values = v->get<bool>();
  }
  return Status::Ok();
}

// The keys a measure object may hold: name, fn, the argument keys and every
// option of kMeasureOptions (which of them a given fn takes is its row's).
std::set<std::string> MeasureKeys() {
  std::set<std::string> keys = {"name", "fn", "of", "by", "only", "shown_digits"};
  for (const MeasureOption& o : kMeasureOptions) keys.insert(o.key);
  return keys;
}

// Checks the value of option o at pointer p and stores it into *cfg.
Status ParseOption(Checker& c, const MeasureOption& o, const json& v, const std::string& p, MeasureConfig* cfg) {
  return std::visit(
      [&](auto field) -> Status {
        using T = std::remove_cvref_t<decltype(cfg->*field)>;
        if constexpr (std::is_same_v<T, std::vector<double>>) {
          if (!v.is_array() || v.empty() || v.size() > o.max_items) return c.Error(p, Found(v), o.array_text);
          for (size_t i = 0; i < v.size(); ++i) {
            double x = 0;
            FF_RETURN_IF_ERROR(c.Number(v[i], ChildPointer(p, i), o.lo, o.hi, false, &x));
            (cfg->*field).push_back(x);
          }
        } else if constexpr (std::is_same_v<T, double>) {
          FF_RETURN_IF_ERROR(c.Number(v, p, o.lo, o.hi, false, &(cfg->*field)));
        } else {
          uint64_t n = 0;
          FF_RETURN_IF_ERROR(c.Integer(v, p, static_cast<uint64_t>(o.lo), static_cast<uint64_t>(o.hi), &n));
          cfg->*field = static_cast<T>(n);
        }
        return Status::Ok();
      },
      o.field);
}

Status ParseMeasure(Checker& c, const json& m, const std::string& p, MeasureSpec* out) {
  if (!m.is_object()) return c.Error(p, Found(m), "an object with \"name\" and \"fn\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(m, p, MeasureKeys()));
  if (!m.contains("name")) return c.Error(p, "no \"name\"", "\"name\": the result column's name");
  FF_RETURN_IF_ERROR(c.String(m["name"], p + "/name", &out->name));
  if (!m.contains("fn")) return c.Error(p, "no \"fn\"", "\"fn\": the measure, e.g. \"count\" or \"sum\"");
  FF_RETURN_IF_ERROR(c.String(m["fn"], p + "/fn", &out->fn));
  const MeasureRow* row = FindMeasureRow(out->fn);
  if (row == nullptr) {
    std::set<std::string> names;
    for (const MeasureRow& r : MeasureRows()) names.insert(r.fn);
    std::string list;
    for (const auto& name : names) list += (list.empty() ? "" : ", ") + name;
    return c.Error(p + "/fn",
                   "unknown measure " + Quoted(out->fn) + DidYouMean(out->fn, {names.begin(), names.end()}, Quoted),
                   "one of: " + list);
  }
  MeasureConfig& cfg = out->config;
  cfg.kind = row->kind;
  const int args = row->arg_count;
  auto allow = [&](const char* key, bool allowed) -> Status {
    if (!m.contains(key) || allowed) return Status::Ok();
    // Appended rather than "\"" + string, which GCC 12 falsely warns on (-Wrestrict).
    const std::string quoted = std::string("\"").append(key).append("\"");
    return c.Error(ChildPointer(p, key), quoted, std::string("no ").append(quoted) + " for fn \"" + out->fn + "\"");
  };
  FF_RETURN_IF_ERROR(allow("of", args >= 1));
  FF_RETURN_IF_ERROR(allow("by", args >= 2));
  for (const MeasureOption& o : kMeasureOptions) FF_RETURN_IF_ERROR(allow(o.key, row->Takes(o.key)));
  if (args >= 1) {
    if (!m.contains("of")) return c.Error(p, "no \"of\"", "\"of\": the expression fn \"" + out->fn + "\" reads");
    FF_RETURN_IF_ERROR(c.String(m["of"], p + "/of", &out->of));
  }
  if (args >= 2) {
    if (!m.contains("by")) return c.Error(p, "no \"by\"", "\"by\": the ordering expression for \"" + out->fn + "\"");
    FF_RETURN_IF_ERROR(c.String(m["by"], p + "/by", &out->by));
  }
  if (m.contains("only")) {
    FF_RETURN_IF_ERROR(c.String(m["only"], p + "/only", &out->only));
  }
  // Only options the row takes are left (allow() refused the others).
  for (const MeasureOption& o : kMeasureOptions) {
    if (m.contains(o.key)) {
      FF_RETURN_IF_ERROR(ParseOption(c, o, m[o.key], ChildPointer(p, o.key), &cfg));
    } else if (o.required_text != nullptr && row->Takes(o.key)) {
      return c.Error(p, "no \"" + std::string(o.key) + "\"", o.required_text);
    }
  }
  if (m.contains("shown_digits")) {
    // 17 significant digits identify every double (IEEE 754-2008, 5.12.2).
    uint64_t n = 0;
    FF_RETURN_IF_ERROR(c.Integer(m["shown_digits"], p + "/shown_digits", 1, 17, &n));
    out->shown_digits = static_cast<int>(n);
  }
  if (row->check != nullptr) {
    if (std::optional<OptionComplaint> bad = row->check(cfg)) {
      if (!m.contains(bad->key)) return c.Error(p, "no " + Quoted(bad->key), bad->expected);
      std::string at = ChildPointer(p, bad->key);
      const json* v = &m[bad->key];
      if (bad->index >= 0 && v->is_array() && static_cast<size_t>(bad->index) < v->size()) {
        at = ChildPointer(at, static_cast<size_t>(bad->index));
        v = &(*v)[static_cast<size_t>(bad->index)];
      }
      return c.Error(at, Found(*v), bad->expected);
    }
  }
  return Status::Ok();
}

// {"name": ..., "expr": ...} at p (a derived field or an added column);
// with digits non-null, also an optional "shown_digits".
Status ParseNamedExpr(Checker& c, const json& v, const std::string& p, const char* name_text, int* digits,
                      std::string* name, std::string* expr) {
  if (!v.is_object()) return c.Error(p, Found(v), "an object {\"name\": ..., \"expr\": ...}");
  if (digits == nullptr) FF_RETURN_IF_ERROR(c.OnlyKeys(v, p, {"name", "expr"}));
  else FF_RETURN_IF_ERROR(c.OnlyKeys(v, p, {"name", "expr", "shown_digits"}));
  if (!v.contains("name")) return c.Error(p, "no \"name\"", std::string("\"name\": ") + name_text);
  FF_RETURN_IF_ERROR(c.String(v["name"], p + "/name", name));
  if (!v.contains("expr")) return c.Error(p, "no \"expr\"", "\"expr\": an expression");
  FF_RETURN_IF_ERROR(c.String(v["expr"], p + "/expr", expr));
  if (digits != nullptr && v.contains("shown_digits")) {
    uint64_t n = 0;
    FF_RETURN_IF_ERROR(c.Integer(v["shown_digits"], p + "/shown_digits", 1, 17, &n));
    *digits = static_cast<int>(n);
  }
  return Status::Ok();
}

// "rows": {"add": [{"name", "expr", "shown_digits"}...], "keep": expr}.
Status ParseRows(Checker& c, const json& r, RowsSpec* rows) {
  const std::string p = "/rows";
  if (!r.is_object()) return c.Error(p, Found(r), "an object with \"add\" and/or \"keep\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(r, p, {"add", "keep"}));
  rows->given = true;
  if (r.contains("add")) {
    const json& a = r["add"];
    if (!a.is_array()) return c.Error(p + "/add", Found(a), "an array of {\"name\": ..., \"expr\": ...}");
    for (size_t i = 0; i < a.size(); ++i) {
      AddedColumnSpec col;
      FF_RETURN_IF_ERROR(ParseNamedExpr(c, a[i], ChildPointer(p + "/add", i), "the new column's name",
                                        &col.shown_digits, &col.name, &col.expr));
      rows->add.push_back(std::move(col));
    }
  }
  if (r.contains("keep")) FF_RETURN_IF_ERROR(c.String(r["keep"], p + "/keep", &rows->keep));
  return Status::Ok();
}

Status ParseEmit(Checker& c, const json& e, JobSpec* job) {
  const std::string p = "/emit";
  if (!e.is_object()) return c.Error(p, Found(e), "an object");
  FF_RETURN_IF_ERROR(c.OnlyKeys(e, p, {"format", "path", "order", "limit", "digits"}));
  EmitSpec& emit = job->emit;
  if (e.contains("format")) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(e["format"], p + "/format", &f));
    if (f == "csv") emit.format = OutputFormat::kCsv;
    else if (f == "json") emit.format = OutputFormat::kJson;
    else if (f == "ndjson") emit.format = OutputFormat::kNdjson;
    else if (f == "table") emit.format = OutputFormat::kTable;
    else {
      const std::string near = DidYouMean(f, {"csv", "json", "ndjson", "table"}, Quoted);
      return c.Error(p + "/format", near.empty() ? Found(e["format"]) : "unknown format " + Quoted(f) + near,
                     "\"csv\", \"json\", \"ndjson\" or \"table\"");
    }
    emit.format_given = true;
  }
  if (e.contains("path")) FF_RETURN_IF_ERROR(c.String(e["path"], p + "/path", &emit.path));
  if (e.contains("order")) {
    const json& order = e["order"];
    if (!order.is_array()) return c.Error(p + "/order", Found(order), "an array of {\"by\": column, \"desc\": bool}");
    for (size_t i = 0; i < order.size(); ++i) {
      const std::string op = ChildPointer(p + "/order", i);
      const json& o = order[i];
      if (!o.is_object()) return c.Error(op, Found(o), "an object {\"by\": column, \"desc\": bool}");
      FF_RETURN_IF_ERROR(c.OnlyKeys(o, op, {"by", "desc"}));
      OrderSpec spec;
      if (!o.contains("by")) return c.Error(op, "no \"by\"", "\"by\": an output column name");
      FF_RETURN_IF_ERROR(c.String(o["by"], op + "/by", &spec.by));
      if (o.contains("desc")) {
        if (!o["desc"].is_boolean()) return c.Error(op + "/desc", Found(o["desc"]), "true or false");
        spec.descending = o["desc"].get<bool>();
      }
      emit.order.push_back(spec);
    }
  }
  if (e.contains("limit")) {
    uint64_t n = 0;
    FF_RETURN_IF_ERROR(c.Integer(e["limit"], p + "/limit", 0, UINT64_MAX >> 1, &n));
    emit.limit = n;
  }
  if (e.contains("digits")) {
    uint64_t n = 0;
    FF_RETURN_IF_ERROR(c.Integer(e["digits"], p + "/digits", 1, 17, &n));
    emit.digits = static_cast<int>(n);
  }
  return Status::Ok();
}

}  // namespace

Result<JobSpec> ParseJobSpec(std::string_view text, const std::string& job_path) {
  json doc = json::parse(text, nullptr, /*allow_exceptions=*/false, /*ignore_comments=*/false);
  if (doc.is_discarded()) {
    const std::string problem = JsonSyntaxProblem(text);
    return Status::InvalidArgument(job_path + ": not valid JSON" +
                                   (problem.empty() ? " (the JSON reader refused it)" : problem));
  }
  Checker c(job_path);
  JobSpec job;
  job.job_path = job_path;
  std::filesystem::path base = std::filesystem::path(job_path).parent_path();
  job.base_dir = base.empty() ? "." : base.string();
  if (!doc.is_object()) return c.Error("", Found(doc), "a JSON object with \"inputs\" and \"measures\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(doc, "", {"about", "inputs", "keep", "derive", "group", "measures", "rows", "emit"}));
  if (doc.contains("about")) FF_RETURN_IF_ERROR(c.String(doc["about"], "/about", &job.about, false));
  if (!doc.contains("inputs")) return c.Error("", "no \"inputs\"", "\"inputs\": {\"files\": [...]}");
  FF_RETURN_IF_ERROR(ParseInputs(c, doc["inputs"], &job));
  if (doc.contains("keep")) FF_RETURN_IF_ERROR(c.String(doc["keep"], "/keep", &job.keep));
  if (doc.contains("derive")) {
    const json& d = doc["derive"];
    if (!d.is_array()) return c.Error("/derive", Found(d), "an array of {\"name\": ..., \"expr\": ...}");
    for (size_t i = 0; i < d.size(); ++i) {
      DeriveSpec spec;
      FF_RETURN_IF_ERROR(ParseNamedExpr(c, d[i], ChildPointer("/derive", i), "an identifier", nullptr,
                                        &spec.name, &spec.expr));
      job.derive.push_back(spec);
    }
  }
  if (doc.contains("group")) {
    const json& g = doc["group"];
    if (!g.is_array()) return c.Error("/group", Found(g), "an array of expressions");
    for (size_t i = 0; i < g.size(); ++i) {
      std::string e;
      FF_RETURN_IF_ERROR(c.String(g[i], ChildPointer("/group", i), &e));
      job.group.push_back(e);
    }
  }
  if (!doc.contains("measures")) return c.Error("", "no \"measures\"", "\"measures\": a list of measures");
  const json& ms = doc["measures"];
  if (!ms.is_array() || ms.empty()) return c.Error("/measures", Found(ms), "a non-empty array of measures");
  for (size_t i = 0; i < ms.size(); ++i) {
    MeasureSpec spec;
    FF_RETURN_IF_ERROR(ParseMeasure(c, ms[i], ChildPointer("/measures", i), &spec));
    job.measures.push_back(std::move(spec));
  }
  if (doc.contains("rows")) FF_RETURN_IF_ERROR(ParseRows(c, doc["rows"], &job.rows));
  if (doc.contains("emit")) FF_RETURN_IF_ERROR(ParseEmit(c, doc["emit"], &job));
  return job;
}

Result<JobSpec> LoadJobSpec(const std::string& path) {
  std::error_code ec;
  if (std::filesystem::is_directory(path, ec))
    return Status::InvalidArgument("cannot read job file '" + path + "': it is a directory; expected a JSON file");
  std::ifstream in(path, std::ios::binary);
  if (!in) return Status::InvalidArgument("cannot read job file '" + path + "'");
  std::stringstream ss;
  ss << in.rdbuf();
  Result<JobSpec> spec = ParseJobSpec(ss.str(), path);
  if (spec.ok()) spec->source_text = ss.str();
  return spec;
}

const char* MeasureFnName(MeasureKind kind) { return MeasureRowOf(kind).fn; }

const char* OutputFormatName(OutputFormat f) {
  switch (f) {
    case OutputFormat::kCsv: return "csv";
    case OutputFormat::kJson: return "json";
    case OutputFormat::kNdjson: return "ndjson";
    case OutputFormat::kTable: return "table";
  }
  return "?";
}

}  // namespace fanfold
