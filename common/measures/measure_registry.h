// MeasureRegistry: one row per measure kind — its job-file name, how many
// arguments it reads, which options it takes, its output columns, a check
// across its options, and its factory. The job-file parser, the plan (its
// columns and fingerprint text), the fuzzers and the documentation test all
// read these rows; adding a measure is its own files plus one row here.
// Immutable after first use; thread-safe.
#pragma once

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "common/measures/measure.h"

namespace fanfold {

// What a row's cross-option check found wrong: the job-file key to point at
// (when the job file has no such key, the message points at the measure
// and says the key is missing), the element of an array option when
// index >= 0, and what was expected there.
struct OptionComplaint {
  std::string key;
  std::string expected;
  int index = -1;
};

struct MeasureRow {
  MeasureKind kind;
  const char* fn;  // the job file's "fn", e.g. "ddsketch"
  int arg_count;   // 0: none; 1: "of" (the value); 2: "of" and "by" (an ordering key)
  std::vector<const char*> options;  // keys of kMeasureOptions the job file may set
  // Output column names for a measure named `name` with this config.
  std::vector<std::string> (*columns)(const std::string& name, const MeasureConfig& config);
  // A rule across options, run after each option was checked alone; null
  // iff there is none.
  std::optional<OptionComplaint> (*check)(const MeasureConfig& config);
  // A new empty state. REQUIRES: config validated.
  std::unique_ptr<MeasureState> (*make)(const MeasureConfig& config);

  bool Takes(const std::string& option_key) const;
};

// Every measure, in MeasureKind order.
const std::vector<MeasureRow>& MeasureRows();

// The row of kind. REQUIRES: kind is a declared MeasureKind.
const MeasureRow& MeasureRowOf(MeasureKind kind);

// The row whose fn is `fn`, or nullptr.
const MeasureRow* FindMeasureRow(const std::string& fn);

}  // namespace fanfold
