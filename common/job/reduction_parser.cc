#include "common/job/reduction_parser.h"

#include <cctype>
#include <set>
#include <type_traits>
#include <variant>

#include "common/base/json_location.h"
#include "common/base/nearest_names.h"
#include "common/measures/measure_options.h"
#include "common/measures/measure_registry.h"

namespace fanfold {
namespace {

using nlohmann::json;

// The keys a measure object may hold: name, fn, the argument keys and every
// option of kMeasureOptions (which of them a given fn takes is its row's).
std::set<std::string> MeasureKeys() {
  std::set<std::string> keys = {"name", "fn", "of", "by", "only", "shown_digits"};
  for (const MeasureOption& o : kMeasureOptions) keys.insert(o.key);
  return keys;
}

// Checks the value of option o at pointer p and stores it into *cfg.
Status ParseOption(const JobChecker& c, const MeasureOption& o, const json& v, const std::string& p, MeasureConfig* cfg) {
  return std::visit(
      [&](auto field) -> Status {
        using T = std::remove_cvref_t<decltype(cfg->*field)>;
        if constexpr (std::is_same_v<T, std::vector<double>>) {
          if (!v.is_array() || v.empty() || v.size() > o.max_items) return c.Error(p, FoundText(v), o.array_text);
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

Status ParseMeasure(const JobChecker& c, const json& m, const std::string& p, MeasureSpec* out) {
  if (!m.is_object()) return c.Error(p, FoundText(m), "an object with \"name\" and \"fn\"");
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
      return c.Error(at, FoundText(*v), bad->expected);
    }
  }
  return Status::Ok();
}

}  // namespace

Status ParseNamedExpr(const JobChecker& c, const json& v, const std::string& p, const char* name_text, int* digits,
                      std::string* name, std::string* expr) {
  if (!v.is_object()) return c.Error(p, FoundText(v), "an object {\"name\": ..., \"expr\": ...}");
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

namespace {

// "rows": {"add": [{"name", "expr", "shown_digits"}...], "keep": expr}.
Status ParseRows(const JobChecker& c, const json& r, const std::string& p, RowsSpec* rows) {
  if (!r.is_object()) return c.Error(p, FoundText(r), "an object with \"add\" and/or \"keep\"");
  FF_RETURN_IF_ERROR(c.OnlyKeys(r, p, {"add", "keep"}));
  rows->given = true;
  if (r.contains("add")) {
    const json& a = r["add"];
    if (!a.is_array()) return c.Error(p + "/add", FoundText(a), "an array of {\"name\": ..., \"expr\": ...}");
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

Status ParseEmit(const JobChecker& c, const json& e, const std::string& p, EmitSpec* out) {
  if (!e.is_object()) return c.Error(p, FoundText(e), "an object");
  FF_RETURN_IF_ERROR(c.OnlyKeys(e, p, {"format", "path", "order", "limit", "digits"}));
  EmitSpec& emit = *out;
  if (e.contains("format")) {
    std::string f;
    FF_RETURN_IF_ERROR(c.String(e["format"], p + "/format", &f));
    if (f == "csv") emit.format = OutputFormat::kCsv;
    else if (f == "json") emit.format = OutputFormat::kJson;
    else if (f == "ndjson") emit.format = OutputFormat::kNdjson;
    else if (f == "table") emit.format = OutputFormat::kTable;
    else {
      const std::string near = DidYouMean(f, {"csv", "json", "ndjson", "table"}, Quoted);
      return c.Error(p + "/format", near.empty() ? FoundText(e["format"]) : "unknown format " + Quoted(f) + near,
                     "\"csv\", \"json\", \"ndjson\" or \"table\"");
    }
    emit.format_given = true;
  }
  if (e.contains("path")) FF_RETURN_IF_ERROR(c.String(e["path"], p + "/path", &emit.path));
  if (e.contains("order")) {
    const json& order = e["order"];
    if (!order.is_array()) return c.Error(p + "/order", FoundText(order), "an array of {\"by\": column, \"desc\": bool}");
    for (size_t i = 0; i < order.size(); ++i) {
      const std::string op = ChildPointer(p + "/order", i);
      const json& o = order[i];
      if (!o.is_object()) return c.Error(op, FoundText(o), "an object {\"by\": column, \"desc\": bool}");
      FF_RETURN_IF_ERROR(c.OnlyKeys(o, op, {"by", "desc"}));
      OrderSpec spec;
      if (!o.contains("by")) return c.Error(op, "no \"by\"", "\"by\": an output column name");
      FF_RETURN_IF_ERROR(c.String(o["by"], op + "/by", &spec.by));
      if (o.contains("desc")) {
        if (!o["desc"].is_boolean()) return c.Error(op + "/desc", FoundText(o["desc"]), "true or false");
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

Status ParseDerive(const JobChecker& c, const json& d, const std::string& p, std::vector<DeriveSpec>* out) {
  if (!d.is_array()) return c.Error(p, FoundText(d), "an array of {\"name\": ..., \"expr\": ...}");
  for (size_t i = 0; i < d.size(); ++i) {
    DeriveSpec spec;
    FF_RETURN_IF_ERROR(ParseNamedExpr(c, d[i], ChildPointer(p, i), "an identifier", nullptr, &spec.name, &spec.expr));
    out->push_back(spec);
  }
  return Status::Ok();
}

namespace {

// Letters, digits, '_' and '-', at most 64: a reduction's name is part of
// its result file's name.
bool IsReductionName(const std::string& s) {
  if (s.empty() || s.size() > 64) return false;
  for (char ch : s)
    if (!std::isalnum(static_cast<unsigned char>(ch)) && ch != '_' && ch != '-') return false;
  return true;
}

}  // namespace

Status ParseReductionBody(const JobChecker& c, const json& obj, ReductionSpec* r) {
  const std::string& p = r->pointer;
  // At the top level keep and derive are the job's (ParseJobSpec reads them).
  if (!p.empty() && obj.contains("keep")) FF_RETURN_IF_ERROR(c.String(obj["keep"], p + "/keep", &r->keep));
  if (!p.empty() && obj.contains("derive")) FF_RETURN_IF_ERROR(ParseDerive(c, obj["derive"], p + "/derive", &r->derive));
  if (obj.contains("group")) {
    const json& g = obj["group"];
    if (!g.is_array()) return c.Error(p + "/group", FoundText(g), "an array of expressions");
    for (size_t i = 0; i < g.size(); ++i) {
      std::string e;
      FF_RETURN_IF_ERROR(c.String(g[i], ChildPointer(p + "/group", i), &e));
      r->group.push_back(e);
    }
  }
  if (!obj.contains("measures")) return c.Error(p, "no \"measures\"", "\"measures\": a list of measures");
  const json& ms = obj["measures"];
  if (!ms.is_array() || ms.empty()) return c.Error(p + "/measures", FoundText(ms), "a non-empty array of measures");
  for (size_t i = 0; i < ms.size(); ++i) {
    MeasureSpec spec;
    FF_RETURN_IF_ERROR(ParseMeasure(c, ms[i], ChildPointer(p + "/measures", i), &spec));
    r->measures.push_back(std::move(spec));
  }
  if (obj.contains("rows")) FF_RETURN_IF_ERROR(ParseRows(c, obj["rows"], p + "/rows", &r->rows));
  if (obj.contains("emit")) FF_RETURN_IF_ERROR(ParseEmit(c, obj["emit"], p + "/emit", &r->emit));
  return Status::Ok();
}

Status ParseReductions(const JobChecker& c, const json& list, std::vector<ReductionSpec>* out) {
  const std::string p = "/reductions";
  if (!list.is_array() || list.empty())
    return c.Error(p, FoundText(list), "a non-empty array of reductions {\"name\": ..., \"group\": ..., \"measures\": ...}");
  std::set<std::string> names;
  for (size_t i = 0; i < list.size(); ++i) {
    ReductionSpec r;
    r.pointer = ChildPointer(p, i);
    const json& obj = list[i];
    if (!obj.is_object()) return c.Error(r.pointer, FoundText(obj), "an object {\"name\": ..., \"measures\": ...}");
    FF_RETURN_IF_ERROR(c.OnlyKeys(obj, r.pointer, {"name", "keep", "derive", "group", "measures", "rows", "emit"}));
    if (!obj.contains("name")) return c.Error(r.pointer, "no \"name\"", "\"name\": the reduction's name");
    FF_RETURN_IF_ERROR(c.String(obj["name"], r.pointer + "/name", &r.name));
    if (!IsReductionName(r.name))
      return c.Error(r.pointer + "/name", FoundText(obj["name"]),
                     "a name of letters, digits, '_' and '-' (at most 64; it names the result file)");
    if (!names.insert(r.name).second)
      return c.Error(r.pointer + "/name", FoundText(obj["name"]) + " again", "each reduction named once");
    FF_RETURN_IF_ERROR(ParseReductionBody(c, obj, &r));
    out->push_back(std::move(r));
  }
  return Status::Ok();
}

}  // namespace fanfold
