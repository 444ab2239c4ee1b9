#include "common/job/plan.h"

#include <charconv>
#include <set>

#include <xxhash.h>

#include "common/base/json_location.h"
#include "common/base/format_version.h"
#include "common/base/nearest_names.h"
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

Result<std::unique_ptr<Plan>> CompilePlan(JobSpec spec, RecordFormat format) {
  auto plan = std::make_unique<Plan>();
  plan->spec = std::move(spec);
  plan->format = format;
  const JobSpec& s = plan->spec;
  FieldTable* fields = &plan->fields;

  for (size_t i = 0; i < s.derive.size(); ++i) {
    const std::string p = ChildPointer("/derive", i);
    if (!IsIdentifier(s.derive[i].name))
      return Status::InvalidArgument(s.job_path + ": " + p + "/name: found \"" + s.derive[i].name +
                                     "\"; expected an identifier (letters, digits, _; not starting with a digit)");
    // Compile before adding the name, so a field cannot refer to itself.
    Result<Expr> e = CompileAt(*plan, fields, s.derive[i].expr, p + "/expr");
    if (!e.ok()) return e.status();
    int slot = fields->AddDerived(s.derive[i].name);
    if (slot < 0)
      return Status::InvalidArgument(s.job_path + ": " + p + "/name: found \"" + s.derive[i].name +
                                     "\" again; expected a name not used by an earlier derived field");
    plan->derive.push_back(CompiledDerive{slot, std::move(e.value())});
  }
  if (!s.keep.empty()) {
    Result<Expr> e = CompileAt(*plan, fields, s.keep, "/keep");
    if (!e.ok()) return e.status();
    plan->keep.emplace(std::move(e.value()));
  }
  std::set<std::string> names;
  for (size_t i = 0; i < s.group.size(); ++i) {
    const std::string p = ChildPointer("/group", i);
    Result<Expr> e = CompileAt(*plan, fields, s.group[i], p);
    if (!e.ok()) return e.status();
    plan->group.push_back(std::move(e.value()));
    std::string column = GroupColumnName(s.group[i]);
    if (!names.insert(column).second)
      return Status::InvalidArgument(s.job_path + ": " + p + ": found \"" + s.group[i] + "\" (column \"" +
                                     column + "\") twice; expected each group column name once");
    plan->group_columns.push_back(column);
  }
  for (size_t i = 0; i < s.measures.size(); ++i) {
    const MeasureSpec& ms = s.measures[i];
    const std::string p = ChildPointer("/measures", i);
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
        return Status::InvalidArgument(s.job_path + ": " + p + "/name: output column \"" + col +
                                       "\" is already used; expected a name distinct from the group keys "
                                       "and other measures");
    }
    plan->measures.push_back(std::move(cm));
  }
  plan->columns = plan->group_columns;
  for (const auto& m : plan->measures)
    plan->columns.insert(plan->columns.end(), m.columns.begin(), m.columns.end());
  Result<RowsPlan> rows = CompileRowsPlan(s, plan->columns);
  if (!rows.ok()) return rows.status();
  plan->rows = std::move(rows.value());
  std::vector<std::string> shown = plan->columns;  // what emit.order may name
  for (const AddedColumn& a : plan->rows.add) {
    names.insert(a.name);
    shown.push_back(a.name);
  }
  for (size_t i = 0; i < s.emit.order.size(); ++i) {
    if (!names.count(s.emit.order[i].by)) {
      std::string list;
      for (const auto& c : shown) list += (list.empty() ? "" : ", ") + c;
      const std::string near = DidYouMean(s.emit.order[i].by, shown,
                                          [](std::string_view c) { return std::string("\"").append(c).append("\""); });
      return Status::InvalidArgument(s.job_path + ": " + ChildPointer("/emit/order", i) + "/by: found \"" +
                                     s.emit.order[i].by + "\"" + near + "; expected an output column: " + list);
    }
  }
  // Derived fields the filter reads (directly or through other derived
  // fields), then those only keys and measures read.
  auto closure = [&](std::vector<bool> need) {
    for (size_t i = plan->derive.size(); i-- > 0;)
      if (need[plan->derive[i].slot])
        for (int s : plan->derive[i].expr.SlotsRead()) need[s] = true;
    return need;
  };
  std::vector<bool> for_keep(fields->size(), false), for_rest(fields->size(), false);
  if (plan->keep)
    for (int s : plan->keep->SlotsRead()) for_keep[s] = true;
  for (const Expr& g : plan->group)
    for (int s : g.SlotsRead()) for_rest[s] = true;
  for (const CompiledMeasure& m : plan->measures) {
    for (const Expr& a : m.args)
      for (int s : a.SlotsRead()) for_rest[s] = true;
    if (m.only)
      for (int s : m.only->SlotsRead()) for_rest[s] = true;
  }
  for_keep = closure(for_keep);
  for_rest = closure(for_rest);
  for (size_t i = 0; i < plan->derive.size(); ++i) {
    const int slot = plan->derive[i].slot;
    if (for_keep[slot]) plan->derive_before_keep.push_back(i);
    else if (for_rest[slot]) plan->derive_after_keep.push_back(i);
  }
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

std::string PlanCanonicalText(const Plan& plan) {
  const JobSpec& s = plan.spec;
  std::string out = std::string(kPlanTextCodecPrefix) + std::to_string(kPartialFormatVersion) + "\n";
  out += std::string("format=") + FormatName(plan.format) + "\n";
  // Which NDJSON lines are malformed depends on it (ValueChecks).
  if (plan.format == RecordFormat::kNdjson) out += std::string("values=") + (s.check_unread_values ? "every" : "read") + "\n";
  out += "keep=" + s.keep + "\n";
  for (const auto& d : s.derive) out += "derive " + d.name + "=" + d.expr + "\n";
  for (const auto& g : s.group) out += "group " + g + "\n";
  for (const auto& m : s.measures) {
    out += "measure " + m.name + " fn=" + MeasureRowOf(m.config.kind).fn + " of=" + m.of + " by=" + m.by + MeasureOptionsText(m.config);
    // Only when set, so that plans without it keep their earlier text.
    if (!m.only.empty()) out += " only=" + m.only;
    out += "\n";
  }
  return out;
}

}  // namespace fanfold
