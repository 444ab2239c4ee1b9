#include "common/job/plan.h"

#include <charconv>
#include <set>

#include <xxhash.h>

#include "common/base/json_location.h"
#include "common/base/format_version.h"
#include "common/base/nearest_names.h"
#include "common/expr/time_zone.h"
#include "common/measures/measure_options.h"
#include "common/measures/measure_registry.h"

namespace fanfold {
namespace {

bool IsIdentifier(const std::string& s) {
  if (s.empty() || !(isalpha(static_cast<unsigned char>(s[0])) || s[0] == '_')) return false;
  for (char c : s)
    if (!(isalnum(static_cast<unsigned char>(c)) || c == '_')) return false;
  return true;
}

// Compiles one expression found at `pointer` in the job file and checks the
// raw fields it added suit the record format.
Result<Expr> CompileAt(const Plan& plan, FieldTable* fields, const std::string& text, const std::string& pointer) {
  const size_t before = fields->size();
  Result<Expr> e = Expr::Compile(text, fields);
  const std::string where = plan.spec.job_path + ": " + pointer;
  if (!e.ok()) return e.status().WithContext(where);
  for (size_t i = before; i < fields->size(); ++i) {
    const auto& slot = fields->slot(i);
    if (slot.derived) continue;
    const auto problem = RecordFormatRowOf(plan.format).raw_field_problem;
    if (problem == nullptr) continue;
    const std::string why = problem(slot.name);
    if (!why.empty()) return Status::InvalidArgument(where + ": field {" + slot.name + "} " + why);
  }
  return e;
}

// Output name of a group key: a bare identifier names itself; a lone field
// reference {/a/b} or {col} is named by its last token ("b", "col"); any
// other expression by its text.
std::string GroupColumnName(const std::string& text) {
  if (text.size() > 2 && text.front() == '{' && text.back() == '}' &&
      text.find_first_of("{}\\", 1) == text.size() - 1) {
    std::string inner = text.substr(1, text.size() - 2);
    size_t slash = inner.rfind('/');
    std::string last = slash == std::string::npos ? inner : inner.substr(slash + 1);
    std::string out;  // undo RFC 6901 escapes
    for (size_t i = 0; i < last.size(); ++i) {
      if (last[i] == '~' && i + 1 < last.size() && (last[i + 1] == '0' || last[i + 1] == '1')) {
        out += last[i + 1] == '0' ? '~' : '/';
        ++i;
      } else {
        out += last[i];
      }
    }
    if (!out.empty()) return out;
  }
  return text;
}

}  // namespace

namespace {

// Compiles derived fields `derive` found at `pointer` into plan->derive.
// Returns the slots they took.
Result<std::vector<int>> CompileDerives(Plan* plan, const std::vector<DeriveSpec>& derive, const std::string& pointer) {
  const std::string& job = plan->spec.job_path;
  std::vector<int> slots;
  for (size_t i = 0; i < derive.size(); ++i) {
    const std::string p = ChildPointer(pointer, i);
    if (!IsIdentifier(derive[i].name))
      return Status::InvalidArgument(job + ": " + p + "/name: found \"" + derive[i].name +
                                     "\"; expected an identifier (letters, digits, _; not starting with a digit)");
    // Compile before adding the name, so a field cannot refer to itself.
    Result<Expr> e = CompileAt(*plan, &plan->fields, derive[i].expr, p + "/expr");
    if (!e.ok()) return e.status();
    int slot = plan->fields.AddDerived(derive[i].name);
    if (slot < 0)
      return Status::InvalidArgument(job + ": " + p + "/name: found \"" + derive[i].name +
                                     "\" again; expected a name not used by an earlier derived field or a table's field");
    plan->derive.push_back(CompiledDerive{slot, std::move(e.value()), p + "/expr"});
    slots.push_back(slot);
  }
  return slots;
}

// Compiles reduction r's filter, keys, measures, rows step and output order
// into *out; its own derived fields are already in plan->derive.
Status CompileReduction(Plan* plan, const ReductionSpec& r, ReductionPlan* out) {
  const std::string& job = plan->spec.job_path;
  FieldTable* fields = &plan->fields;
  const std::string& at = r.pointer;
  out->name = r.name;
  if (!r.keep.empty()) {
    Result<Expr> e = CompileAt(*plan, fields, r.keep, at + "/keep");
    if (!e.ok()) return e.status();
    out->keep.emplace(std::move(e.value()));
  }
  std::set<std::string> names;
  for (size_t i = 0; i < r.group.size(); ++i) {
    const std::string p = ChildPointer(at + "/group", i);
    Result<Expr> e = CompileAt(*plan, fields, r.group[i], p);
    if (!e.ok()) return e.status();
    out->group.push_back(std::move(e.value()));
    std::string column = GroupColumnName(r.group[i]);
    if (!names.insert(column).second)
      return Status::InvalidArgument(job + ": " + p + ": found \"" + r.group[i] + "\" (column \"" + column +
                                     "\") twice; expected each group column name once");
    out->group_columns.push_back(column);
  }
  for (size_t i = 0; i < r.measures.size(); ++i) {
    const MeasureSpec& ms = r.measures[i];
    const std::string p = ChildPointer(at + "/measures", i);
    CompiledMeasure cm;
    cm.name = ms.name;
    cm.config = ms.config;
    if (MeasureArgCount(ms.config.kind) >= 1) {
      Result<Expr> e = CompileAt(*plan, fields, ms.of, p + "/of");
      if (!e.ok()) return e.status();
      cm.args.push_back(std::move(e.value()));
    }
    if (MeasureArgCount(ms.config.kind) >= 2) {
      Result<Expr> e = CompileAt(*plan, fields, ms.by, p + "/by");
      if (!e.ok()) return e.status();
      cm.args.push_back(std::move(e.value()));
    }
    if (!ms.only.empty()) {
      Result<Expr> e = CompileAt(*plan, fields, ms.only, p + "/only");
      if (!e.ok()) return e.status();
      cm.only.emplace(std::move(e.value()));
    }
    cm.columns = MeasureRowOf(ms.config.kind).columns(ms.name, ms.config);
    for (const auto& col : cm.columns) {
      if (!names.insert(col).second)
        return Status::InvalidArgument(job + ": " + p + "/name: output column \"" + col +
                                       "\" is already used; expected a name distinct from the group keys "
                                       "and other measures");
    }
    out->configs.push_back(cm.config);
    out->measures.push_back(std::move(cm));
  }
  out->columns = out->group_columns;
  for (const auto& m : out->measures) out->columns.insert(out->columns.end(), m.columns.begin(), m.columns.end());
  Result<RowsPlan> rows = CompileRowsPlan(job, r, out->columns);
  if (!rows.ok()) return rows.status();
  out->rows = std::move(rows.value());
  std::vector<std::string> shown = out->columns;  // what emit.order may name
  for (const AddedColumn& a : out->rows.add) {
    names.insert(a.name);
    shown.push_back(a.name);
  }
  for (size_t i = 0; i < r.emit.order.size(); ++i) {
    if (!names.count(r.emit.order[i].by)) {
      std::string list;
      for (const auto& c : shown) list += (list.empty() ? "" : ", ") + c;
      const std::string near = DidYouMean(r.emit.order[i].by, shown,
                                          [](std::string_view c) { return std::string("\"").append(c).append("\""); });
      return Status::InvalidArgument(job + ": " + ChildPointer(at + "/emit/order", i) + "/by: found \"" +
                                     r.emit.order[i].by + "\"" + near + "; expected an output column: " + list);
    }
  }
  return Status::Ok();
}

// Marks the slots e reads in *need.
void MarkRead(const Expr& e, std::vector<bool>* need) {
  for (int s : e.SlotsRead()) (*need)[static_cast<size_t>(s)] = true;
}

// What a reduction reads besides its filter: keys, measure arguments and filters.
void MarkRest(const ReductionPlan& r, std::vector<bool>* need) {
  for (const Expr& g : r.group) MarkRead(g, need);
  for (const CompiledMeasure& m : r.measures) {
    for (const Expr& a : m.args) MarkRead(a, need);
    if (m.only) MarkRead(*m.only, need);
  }
}

// Which derived fields to evaluate, and when: the job's before its filter iff
// the filter reads them, after it iff some reduction does; a reduction's own
// before its filter iff that reads them, after it iff its keys or measures do.
void OrderDerives(Plan* plan, size_t shared_count) {
  // Derived fields read only earlier slots, so one backward pass closes the
  // set over derived fields reading derived fields.
  auto closure = [&](std::vector<bool> need) {
    for (size_t i = plan->derive.size(); i-- > 0;)
      if (need[static_cast<size_t>(plan->derive[i].slot)]) MarkRead(plan->derive[i].expr, &need);
    return need;
  };
  const size_t n = plan->fields.size();
  std::vector<bool> job_keep(n, false), any_reduction(n, false);
  if (plan->keep) MarkRead(*plan->keep, &job_keep);
  job_keep = closure(job_keep);
  for (ReductionPlan& r : plan->reductions) {
    std::vector<bool> keep(n, false), rest(n, false);
    if (r.keep) MarkRead(*r.keep, &keep);
    MarkRest(r, &rest);
    keep = closure(keep);
    rest = closure(rest);
    for (size_t i = 0; i < n; ++i) any_reduction[i] = any_reduction[i] || keep[i] || rest[i];
    for (size_t i = shared_count; i < plan->derive.size(); ++i) {
      const size_t slot = static_cast<size_t>(plan->derive[i].slot);
      if (keep[slot]) r.derive_before_keep.push_back(i);
      else if (rest[slot]) r.derive_after_keep.push_back(i);
    }
  }
  for (size_t i = 0; i < shared_count; ++i) {
    const size_t slot = static_cast<size_t>(plan->derive[i].slot);
    if (job_keep[slot]) plan->derive_before_keep.push_back(i);
    else if (any_reduction[slot]) plan->derive_after_keep.push_back(i);
  }
}

}  // namespace

Result<std::unique_ptr<Plan>> CompilePlan(JobSpec spec, RecordFormat format) {
  auto plan = std::make_unique<Plan>();
  plan->spec = std::move(spec);
  plan->format = format;
  const JobSpec& s = plan->spec;
  // Tables first: their fields read like derived fields everywhere after.
  for (size_t i = 0; i < s.tables.size(); ++i) {
    Result<Expr> match = CompileAt(*plan, &plan->fields, s.tables[i].match, ChildPointer("/tables", i) + "/match");
    if (!match.ok() && match.status().message().find("unknown derived field") != std::string::npos)
      return Status::InvalidArgument(match.status().message() +
                                     " (a match reads the records' own fields and earlier tables' fields, which "
                                     "come before \"derive\")");
    if (!match.ok()) return match.status();
    Result<CompiledLookup> lookup = CompileLookup(s, i, std::move(match.value()), &plan->fields);
    if (!lookup.ok()) return lookup.status();
    plan->lookups.push_back(std::move(lookup.value()));
  }
  Result<std::vector<int>> shared = CompileDerives(plan.get(), s.derive, "/derive");
  if (!shared.ok()) return shared.status();
  if (!s.keep.empty()) {
    Result<Expr> e = CompileAt(*plan, &plan->fields, s.keep, "/keep");
    if (!e.ok()) return e.status();
    plan->keep.emplace(std::move(e.value()));
  }
  const size_t shared_count = plan->derive.size();
  plan->reductions.resize(s.reductions.size());
  for (size_t r = 0; r < s.reductions.size(); ++r) {
    const ReductionSpec& rs = s.reductions[r];
    Result<std::vector<int>> own = CompileDerives(plan.get(), rs.derive, rs.pointer + "/derive");
    if (!own.ok()) return own.status();
    FF_RETURN_IF_ERROR(CompileReduction(plan.get(), rs, &plan->reductions[r]));
    // A reduction's own derived fields are its alone: the next ones cannot
    // read them, and may use their names for fields of their own.
    for (int slot : *own) plan->fields.HideDerived(slot);
  }
  OrderDerives(plan.get(), shared_count);
  const std::string canon = PlanCanonicalText(*plan);
  plan->fingerprint = XXH3_64bits(canon.data(), canon.size());
  return plan;
}

namespace {
constexpr std::string_view kPlanTextCodecPrefix = "fanfold-plan codec=";
}  // namespace

int PlanTextCodecVersion(std::string_view plan_text) {
  if (plan_text.substr(0, kPlanTextCodecPrefix.size()) != kPlanTextCodecPrefix) return -1;
  const std::string_view rest = plan_text.substr(kPlanTextCodecPrefix.size());
  int version = -1;
  const auto [end, ec] = std::from_chars(rest.data(), rest.data() + rest.size(), version);
  if (ec != std::errc() || end == rest.data() || end == rest.data() + rest.size() || *end != '\n') return -1;
  return version;
}

namespace {

// True iff some fingerprinted expression of the plan reads a time zone's
// rules (the "rows" step runs after the merge, on no partial: left out).
bool PlanReadsZoneRules(const Plan& plan) {
  auto reads = [](const Expr& e) { return e.ReadsZoneRules(); };
  for (const CompiledLookup& l : plan.lookups)
    if (reads(l.match)) return true;
  if (plan.keep && reads(*plan.keep)) return true;
  for (const CompiledDerive& d : plan.derive)
    if (reads(d.expr)) return true;
  for (const ReductionPlan& r : plan.reductions) {
    if (r.keep && reads(*r.keep)) return true;
    for (const Expr& g : r.group)
      if (reads(g)) return true;
    for (const CompiledMeasure& m : r.measures) {
      if (m.only && reads(*m.only)) return true;
      for (const Expr& a : m.args)
        if (reads(a)) return true;
    }
  }
  return false;
}

}  // namespace

std::string PlanCanonicalText(const Plan& plan) {
  const JobSpec& s = plan.spec;
  std::string out = std::string(kPlanTextCodecPrefix) + std::to_string(kPartialFormatVersion) + "\n";
  out += std::string("format=") + FormatName(plan.format) + "\n";
  // Which NDJSON lines are malformed depends on it (ValueChecks).
  if (plan.format == RecordFormat::kNdjson) out += std::string("values=") + (s.check_unread_values ? "every" : "read") + "\n";
  // Only when there are tables, so that plans without them keep their text.
  for (size_t i = 0; i < plan.lookups.size() && i < s.tables.size(); ++i)
    out += LookupCanonicalLine(plan.lookups[i], s.tables[i]) + "\n";
  // Only when a zone's rules are read, so that other plans keep their text:
  // partials computed under another tz database release are recomputed.
  if (PlanReadsZoneRules(plan)) out += "tzdb=" + TimeZone::DatabaseVersion() + "\n";
  out += "keep=" + s.keep + "\n";
  for (const auto& d : s.derive) out += "derive " + d.name + "=" + d.expr + "\n";
  for (const ReductionSpec& r : s.reductions) {
    out += "reduction" + (r.name.empty() ? std::string() : " " + r.name) + "\n";
    out += " keep=" + r.keep + "\n";
    for (const auto& d : r.derive) out += " derive " + d.name + "=" + d.expr + "\n";
    for (const auto& g : r.group) out += " group " + g + "\n";
    for (const auto& m : r.measures) {
      out += " measure " + m.name + " fn=" + MeasureRowOf(m.config.kind).fn + " of=" + m.of + " by=" + m.by +
             MeasureOptionsText(m.config);
      // Only when set, so that plans without it keep their earlier text.
      if (!m.only.empty()) out += " only=" + m.only;
      out += "\n";
    }
  }
  return out;
}

}  // namespace fanfold
