// MeasureOptions: the one list of MeasureConfig's settable options — each
// option's job-file key, the config field it fills and its valid range. The
// job-file parser validates from it and the plan fingerprint's text is
// generated from it, so an option cannot be parsed yet left out of the
// fingerprint. Immutable tables; thread-safe.
#pragma once

#include <array>
#include <cstddef>
#include <cstdint>
#include <limits>
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
  // True for options added after plans were first fingerprinted: their
  // text appears only when set (a number not NaN, a non-empty array), so
  // the plans of every earlier job keep their text and fingerprint.
  bool text_only_when_set;
};

// In the job file's order: the parser checks and reads options in this order,
// so with two bad options the first one listed is the one reported.
inline constexpr double kMaxFinite = std::numeric_limits<double>::max();
inline constexpr std::array<MeasureOption, 9> kMeasureOptions = {{
    {"at", &MeasureConfig::probabilities, 0, 1, 64, "an array of 1 to 64 probabilities in [0, 1]",
     "\"at\": a list of probabilities in [0, 1]", false},
    // Below 0.001 the sketch folds its lowest buckets early and loses its bound.
    {"alpha", &MeasureConfig::alpha, 0.001, 0.5, 0, nullptr, nullptr, false},
    {"precision", &MeasureConfig::precision, 4, 18, 0, nullptr, nullptr, false},
    {"k", &MeasureConfig::k, 1, 100000, 0, nullptr, nullptr, false},
    {"limit", &MeasureConfig::limit, 1, 4294967296.0, 0, nullptr, nullptr, false},
    // histogram: any finite numbers here; the row's check (histogram_bins.h)
    // says which of them make bins, so its messages can name the rule.
    {"edges", &MeasureConfig::edges, -kMaxFinite, kMaxFinite, 257, "an array of 2 to 257 numbers", nullptr, true},
    {"from", &MeasureConfig::from, -kMaxFinite, kMaxFinite, 0, nullptr, nullptr, true},
    {"to", &MeasureConfig::to, -kMaxFinite, kMaxFinite, 0, nullptr, nullptr, true},
    {"width", &MeasureConfig::width, -kMaxFinite, kMaxFinite, 0, nullptr, nullptr, true},
}};

// Returns the option named key, or nullptr.
const MeasureOption* FindMeasureOption(const std::string& key);

// The fingerprint text of every option of config (those its measure ignores
// too, at their defaults; text_only_when_set ones only when set):
// " key=value" per option, numbers as %.17g;
// scalars first, then arrays (each element followed by ','), which keeps the
// text of plans fingerprinted before the options had one home.
std::string MeasureOptionsText(const MeasureConfig& config);

}  // namespace fanfold
