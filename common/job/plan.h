// Plan: a validated JobSpec compiled for execution — the field table, the
// job's filter and derived fields, and per reduction its own filter, derived
// fields, group-key expressions, measures with their argument expressions and
// output column names; and the plan fingerprint that ties partial states and
// run directories to this exact computation.
// Built once (by the coordinator and by each worker from the same job file),
// then read-only; share freely between threads.
#pragma once

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "common/expr/expr.h"
#include "common/input/field_table.h"
#include "common/job/job_spec.h"
#include "common/job/lookup_plan.h"
#include "common/job/rows_plan.h"
#include "common/input/record_reader.h"
#include "common/base/status.h"

namespace fanfold {

struct CompiledDerive {
  int slot = -1;
  Expr expr;
  std::string pointer;  // JSON Pointer of its expression in the job file ("/derive/0/expr")
};

struct CompiledMeasure {
  std::string name;
  MeasureConfig config;
  std::vector<Expr> args;            // MeasureArgCount(config.kind) expressions
  std::optional<Expr> only;          // the measure's own filter (MeasureSpec::only)
  std::vector<std::string> columns;  // output column names
};

// One reduction compiled (Plan::reductions[i] is JobSpec::reductions[i]).
struct ReductionPlan {
  std::string name;  // "" for the one reduction of a job without "reductions"
  std::optional<Expr> keep;  // its own filter, after the job's
  // Its own derived fields to evaluate, as indices into Plan::derive: those
  // its filter needs, then those only its keys and measures need.
  std::vector<size_t> derive_before_keep;
  std::vector<size_t> derive_after_keep;
  std::vector<Expr> group;                 // one expression per key
  std::vector<std::string> group_columns;  // their output names
  std::vector<CompiledMeasure> measures;
  std::vector<MeasureConfig> configs;      // the measures' configs, in order (for group tables)
  std::vector<std::string> columns;        // every column the merge gives, in order
  RowsPlan rows;  // the "rows" step after the merge: added columns, row filter (not fingerprinted)
};

struct Plan {
  JobSpec spec;
  RecordFormat format = RecordFormat::kNdjson;
  FieldTable fields;
  // The lookup tables, in job-file order: each record is looked up in
  // every one before "keep" (lookup_plan.h). Loaded once per plan.
  std::vector<CompiledLookup> lookups;
  std::optional<Expr> keep;            // the job's filter, shared by every reduction
  // Every derived field: the job's, then each reduction's own.
  std::vector<CompiledDerive> derive;
  // Which of the job's derived fields to evaluate, as indices into `derive`
  // in order: those the job's filter needs (before it), then those only the
  // reductions need (for kept records only). Unused ones are never evaluated.
  std::vector<size_t> derive_before_keep;
  std::vector<size_t> derive_after_keep;
  std::vector<ReductionPlan> reductions;  // at least one
  uint64_t fingerprint = 0;
};

// Compiles spec for records of `format`. Expression errors name the job file
// and the JSON Pointer of the expression plus the column inside it.
Result<std::unique_ptr<Plan>> CompilePlan(JobSpec spec, RecordFormat format);

// A stable, human-readable description of everything the fingerprint
// covers (codec version, format, lookup tables with their files' identity
// and content hash, the job's filter and derived fields, then per reduction
// its name, filter, derived fields, keys and measures).
std::string PlanCanonicalText(const Plan& plan);

// The partial-state format version a canonical plan text names in its first
// line ("fanfold-plan codec=N"), or -1 if it names none: how `resume` tells
// a run directory of another format from one whose job changed.
int PlanTextCodecVersion(std::string_view plan_text);

}  // namespace fanfold
