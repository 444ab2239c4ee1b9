#include "common/job/lookup_plan.h"

#include <filesystem>
#include <map>

#include "common/base/json_location.h"

namespace fanfold {
namespace {

constexpr std::string_view kTablePrefix = "table ";

// Per table line of a plan text: its name (the second word) and the line.
std::map<std::string, std::string> TableLines(std::string_view text) {
  std::map<std::string, std::string> out;
  size_t start = 0;
  while (start < text.size()) {
    size_t end = text.find('\n', start);
    if (end == std::string_view::npos) end = text.size();
    const std::string_view line = text.substr(start, end - start);
    if (line.substr(0, kTablePrefix.size()) == kTablePrefix) {
      const std::string_view rest = line.substr(kTablePrefix.size());
      out[std::string(rest.substr(0, rest.find(' ')))] = std::string(line);
    }
    start = end + 1;
  }
  return out;
}

// The path=... word of a table line.
std::string PathOf(const std::string& line) {
  const size_t at = line.find(" path=");
  if (at == std::string::npos) return "";
  const size_t from = at + 6;
  return line.substr(from, line.find(" format=", from) - from);
}

}  // namespace

Result<CompiledLookup> CompileLookup(const JobSpec& spec, size_t index, Expr match, FieldTable* fields,
                                     const TableLimits& limits) {
  const TableSpec& t = spec.tables[index];
  const std::string p = ChildPointer("/tables", index);
  TableSource source;
  source.job_path = spec.job_path;
  source.pointer = p;
  source.name = t.name;
  std::filesystem::path path(t.path);
  if (path.is_relative()) path = std::filesystem::path(spec.base_dir) / path;
  source.path = std::filesystem::absolute(path).lexically_normal().string();
  source.format = t.format;
  source.compression = t.compression;
  source.key = TableExpr{t.key, p + "/key"};
  for (size_t f = 0; f < t.fields.size(); ++f) {
    source.field_names.push_back(t.fields[f].name);
    source.field_exprs.push_back(TableExpr{t.fields[f].expr, ChildPointer(p + "/fields", f)});
  }
  Result<std::shared_ptr<const LookupTable>> table = LoadLookupTable(source, limits);
  if (!table.ok()) return table.status();
  CompiledLookup out{t.name, std::move(table.value()), std::move(match), {}};
  for (size_t f = 0; f < t.fields.size(); ++f) {
    const int slot = fields->AddDerived(t.fields[f].name);
    if (slot < 0)
      return Status::InvalidArgument(spec.job_path + ": " + ChildPointer(p + "/fields", f) + ": found \"" +
                                     t.fields[f].name +
                                     "\", a name an earlier table already brings; expected each field name once "
                                     "across the tables");
    out.slots.push_back(slot);
  }
  return out;
}

std::string LookupCanonicalLine(const CompiledLookup& l, const TableSpec& spec) {
  const TableIdentity& id = l.table->identity();
  char hash[17];
  snprintf(hash, sizeof hash, "%016llx", static_cast<unsigned long long>(id.content_hash));
  std::string out = std::string(kTablePrefix) + l.name + " path=" + id.path + " format=" + FormatName(spec.format) +
                    " size=" + std::to_string(id.size) + " mtime_ns=" + std::to_string(id.mtime_ns) +
                    " xxh3=" + hash + " key=" + spec.key + " match=" + spec.match;
  for (const TableFieldSpec& f : spec.fields) out += " field " + f.name + "=" + f.expr;
  return out;
}

std::string ChangedLookupTables(std::string_view old_plan_text, std::string_view new_plan_text) {
  const std::map<std::string, std::string> before = TableLines(old_plan_text);
  const std::map<std::string, std::string> after = TableLines(new_plan_text);
  std::string out;
  for (const auto& [name, line] : before) {
    const auto it = after.find(name);
    if (it == after.end() || it->second == line) continue;
    out += (out.empty() ? "" : ", ") + std::string("lookup table \"") + name + "\" ('" + PathOf(line) + "')";
  }
  return out;
}

}  // namespace fanfold
