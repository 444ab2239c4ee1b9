// ConsoleLog: fanfold's stderr. Notes, warnings and debug lines ("fanfold:
// ...") go through one spdlog logger whose level --log-level sets; below
// them a terminal may show one live progress line, which a message first
// erases and then draws again, so the two never tangle. Nothing here writes
// to stdout (data goes there). Coordinator thread only; not thread-safe.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

namespace fanfold {

enum class LogLevel { kDebug, kInfo, kWarning, kError, kOff };

// Parses "debug", "info", "warning" (or "warn"), "error", "off". Returns
// false iff the text is none of them.
bool ParseLogLevel(std::string_view text, LogLevel* out);
// The accepted names, for usage messages: "debug, info, warning, error, off".
const char* LogLevelNames();

// Sets the threshold; messages below it are dropped. Default: kInfo.
void SetLogLevel(LogLevel level);
LogLevel CurrentLogLevel();

void LogDebug(const std::string& message);    // "fanfold: debug: message"
void LogInfo(const std::string& message);     // "fanfold: message"
void LogWarning(const std::string& message);  // "fanfold: warning: message"

// The live line: replaces what is shown with `text` (cut to the terminal's
// width so it never wraps, since a wrapped line cannot be redrawn with a
// carriage return). ClearLiveLine erases it; a no-op when none is shown.
void DrawLiveLine(const std::string& text);
void ClearLiveLine();
// The terminal's width in columns (80 when it cannot be asked).
size_t ConsoleColumns();
// One plain line on stderr (newline added), erasing the live line around it.
void WriteConsoleLine(const std::string& text);

// True iff stderr is a terminal that can redraw a line (not TERM=dumb).
bool StderrIsLiveTerminal();
// True iff colour is allowed on stderr: a live terminal and NO_COLOR unset
// or empty (no-color.org).
bool StderrWantsColor();

}  // namespace fanfold
