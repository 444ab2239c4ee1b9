// MeasureOptions: the one list of MeasureConfig's settable options — each
// option's job-file key, the config field it fills and its valid range. The
// job-file parser validates from it and the plan fingerprint's text is
// generated from it, so an option cannot be parsed yet left out of the
// fingerprint. Immutable tables; thread-safe.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <string>
#include <variant>
#include <vector>

#include "common/measures/measure.h"

namespace fanfold {

struct MeasureOption {
  // The field the option fills; its type says how the job file writes it:
  // double = a number, the integers = an integer, vector<double> = an array
  // of numbers.
  using Field = std::variant<double MeasureConfig::*, int MeasureConfig::*, uint32_t MeasureConfig::*,
                             uint64_t MeasureConfig::*, std::vector<double> MeasureConfig::*>;

  const char* key;  // the job file's key, e.g. "alpha"
  Field field;
  double lo;        // closed range of the value (of each element, for arrays);
  double hi;        // integer bounds are exact in a double (all below 2^53)
  size_t max_items;        // arrays: at most this many elements (at least 1)
  const char* array_text;  // arrays: what the job file must hold, for messages
  // Non-null iff a measure that takes the option must set it (it has no
  // default): what the job file must hold, for the "no ..." message.
  const char* required_text;
};

// In the job file's order: the parser checks and reads options in this order,
// so with two bad options the first one listed is the one reported.
inline constexpr std::array<MeasureOption, 5> kMeasureOptions = {{
    {"at", &MeasureConfig::probabilities, 0, 1, 64, "an array of 1 to 64 probabilities in [0, 1]",
     "\"at\": a list of probabilities in [0, 1]"},
    // Below 0.001 the sketch folds its lowest buckets early and loses its bound.
    {"alpha", &MeasureConfig::alpha, 0.001, 0.5, 0, nullptr, nullptr},
    {"precision", &MeasureConfig::precision, 4, 18, 0, nullptr, nullptr},
    {"k", &MeasureConfig::k, 1, 100000, 0, nullptr, nullptr},
    {"limit", &MeasureConfig::limit, 1, 4294967296.0, 0, nullptr, nullptr},
}};

// Returns the option named key, or nullptr.
const MeasureOption* FindMeasureOption(const std::string& key);

// The fingerprint text of every option of config (those its measure ignores
// too, at their defaults): " key=value" per option, numbers as %.17g;
// scalars first, then arrays (each element followed by ','), which keeps the
// text of plans fingerprinted before the options had one home.
std::string MeasureOptionsText(const MeasureConfig& config);

}  // namespace fanfold
