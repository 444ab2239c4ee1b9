// Terminal: the two questions the console output asks about standard error —
// is it a terminal, and how wide is it. Stateless; thread-safe.
#pragma once

#include <cstddef>

namespace fanfold {

// True iff standard error is a terminal (isatty).
bool StderrIsTerminal();

// The width of the terminal on standard error in columns, or `fallback` when
// it is not a terminal or does not say.
size_t StderrColumns(size_t fallback);

}  // namespace fanfold
