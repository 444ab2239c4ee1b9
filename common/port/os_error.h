// ErrnoText: the one place where an errno value becomes text for a Status
// message ("No such file or directory"). Every other file builds its message
// from this, so the wording is the same everywhere. Thread-safe.
#pragma once

#include <string>

namespace fanfold {

// Returns the system's description of errno value `err` (never empty).
std::string ErrnoText(int err);

}  // namespace fanfold
