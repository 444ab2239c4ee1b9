// Fuzz target: job-file text → ParseJobSpec, and for every spec it accepts,
// CompilePlan for each record format; a compiled plan is then run on two
// made-up records (filter, derived fields, group key, measures, encode,
// decode, finalize) so configs the parser accepts are exercised end to end.
#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/partial/group_key.h"
#include "common/partial/group_table.h"
#include "common/job/job_spec.h"
#include "common/job/plan.h"

using namespace fanfold;

namespace {

// Touches every byte of v's string so ASan checks the view.
unsigned Touch(const Value& v) {
  unsigned h = 0;
  for (char c : v.str) h = h * 31 + static_cast<unsigned char>(c);
  return h;
}

void RunPlan(const Plan& plan) {
  std::vector<MeasureConfig> configs;
  for (const CompiledMeasure& m : plan.reductions[0].measures) configs.push_back(m.config);
  GroupTable table(&configs);
  ScratchArena arena;
  std::vector<Value> slots(plan.fields.size());
  volatile unsigned sink = 0;
  for (int rec = 0; rec < 2; ++rec) {
    arena.Reset();
    for (size_t i = 0; i < slots.size(); ++i) {
      if (plan.fields.slot(i).derived) continue;
      slots[i] = rec == 0 ? Value::Number(1.5 + static_cast<double>(i))
                          : Value::String("2026-03-01T00:00:03Z");
    }
    if (plan.keep) sink = sink + plan.keep->Eval(slots.data(), &arena).Truthy();
    for (const CompiledDerive& d : plan.derive) {
      slots[d.slot] = d.expr.Eval(slots.data(), &arena);
      sink = sink + Touch(slots[d.slot]);
    }
    std::string key;
    for (const Expr& g : plan.reductions[0].group) AppendKeyValue(g.Eval(slots.data(), &arena), &key);
    MeasureState* const* states = table.FindOrAdd(key);
    for (size_t j = 0; j < plan.reductions[0].measures.size(); ++j) {
      Value args[2];
      for (size_t a = 0; a < plan.reductions[0].measures[j].args.size() && a < 2; ++a)
        args[a] = plan.reductions[0].measures[j].args[a].Eval(slots.data(), &arena);
      if (!states[j]->Add(args)) return;  // past a bound: the state is unusable
    }
  }
  std::string bytes;
  ByteWriter w(&bytes);
  table.Encode(w);
  GroupTable back(&configs);
  ByteReader r(bytes);
  if (!back.Decode(r).ok() || !r.at_end()) __builtin_trap();  // our own encoding must decode
  std::vector<Cell> cells;
  for (size_t g = 0; g < back.group_count(); ++g) {
    cells.clear();
    if (!DecodeKey(back.key(g), plan.reductions[0].group.size(), &cells).ok()) __builtin_trap();
    for (size_t j = 0; j < back.measure_count(); ++j) back.states(g)[j]->Finalize(&cells);
  }
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  std::string_view text(reinterpret_cast<const char*>(data), size);
  Result<JobSpec> spec = ParseJobSpec(text, "fuzz/job.json");
  if (!spec.ok()) return 0;
  // A fuzzed "tables" entry names a file to read (/dev/stdin would block):
  // its parsing is fuzzed above; plans are compiled without the tables.
  spec->tables.clear();
  for (RecordFormat f : {RecordFormat::kNdjson, RecordFormat::kCsv, RecordFormat::kTsv}) {
    Result<std::unique_ptr<Plan>> plan = CompilePlan(*spec, f);
    if (!plan.ok()) continue;
    (void)PlanCanonicalText(**plan);
    RunPlan(**plan);
  }
  return 0;
}
