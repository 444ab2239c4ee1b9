// FieldPrecheck: what `check` and `run` do before any work to catch a
// misspelt field — sample the first shards (common/input/field_sampler.h)
// and compare the plan's raw fields with the data. A CSV/TSV column missing
// from a sampled shard's header is an error (that shard would fail); an
// NDJSON field in none of the sampled records is a warning naming the nearest
// fields seen (it may only be rare). Coordinator main thread; reads shards.
#pragma once

#include <string>
#include <vector>

#include "common/base/status.h"
#include "common/input/field_sampler.h"
#include "common/job/plan.h"
#include "common/job/shard_list.h"

namespace fanfold {

struct FieldPrecheck {
  // Not ok (InvalidArgument, exit status 2): a referenced column is missing
  // from a sampled header; it names the job file, where the job reads the
  // column, the shard, and the nearest columns.
  Status error;
  // One line each, without "warning: ": fields in no sampled record, and
  // shards that could not be read for the sample.
  std::vector<std::string> warnings;
  // Of the warnings, how many are about fields in no sampled record.
  size_t unseen = 0;
  // True iff the sample had something to judge by (a record, a header).
  bool judged = false;
  // What was read, for `check`: "1,000 records from the first of 48 shards".
  std::string sampled;
  // The names the data has (JSON Pointers or columns), for suggestions.
  std::vector<std::string> names_seen;
};

// Samples the first shards of `shards` within `limits` and checks plan's raw
// fields against them.
FieldPrecheck PrecheckFields(const Plan& plan, const ShardList& shards, const SampleLimits& limits = {});

// Where the job file first reads raw field `name` ("/measures/1/of"), in the
// order the plan compiles (derive, keep, group, measures); "" iff nowhere.
std::string WhereFieldIsRead(const Plan& plan, const std::string& name);

// " (did you mean {X}?)" with the names nearest to field, or "": the field
// itself and (for a JSON Pointer) the objects it lies in are no suggestion
// (the prefix rule of NearestNames would offer {/fw} for {/fw/versoin}).
std::string FieldSuggestion(const std::string& field, const std::vector<std::string>& names);

// "{name}": a field as the job file writes it.
std::string FieldInBraces(std::string_view name);

}  // namespace fanfold
