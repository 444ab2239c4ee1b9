// The version of the partial-state format (docs/partial-state.md): written
// in every partial's header and in the plan's canonical text, so partials
// of another format are refused and never reused by `resume`. Here, below
// both the plan (common/job) and the codec (common/partial), so that the
// plan need not include the codec. Bump it with every change to the bytes.
#pragma once

#include <cstdint>

namespace fanfold {

// 3: exact integers in value keys, group keys and number-holding states, and
// per-field presence counts in the body.
// 4: one group table per reduction, each with its own kept count.
inline constexpr uint16_t kPartialFormatVersion = 4;

}  // namespace fanfold
