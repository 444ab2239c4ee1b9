// ConsoleLog: the --log-level names and the threshold. (What reaches
// stderr is checked end to end by the golden CLI tests.)
#include "coordinator/run/console_log.h"

#include <doctest/doctest.h>

#include <string>
#include <utility>

namespace fanfold {
namespace {

// Intent: every documented name parses, "warn" included; anything else is refused.
TEST_CASE("console_log: level names") {
  const std::pair<const char*, LogLevel> names[] = {{"debug", LogLevel::kDebug},     {"info", LogLevel::kInfo},
                                                    {"warning", LogLevel::kWarning}, {"warn", LogLevel::kWarning},
                                                    {"error", LogLevel::kError},     {"off", LogLevel::kOff}};
  for (const auto& [text, level] : names) {
    LogLevel got = LogLevel::kOff;
    CHECK(ParseLogLevel(text, &got));
    CHECK(got == level);
  }
  LogLevel untouched = LogLevel::kInfo;
  for (const char* bad : {"", "DEBUG", "verbose", "info "}) CHECK_FALSE(ParseLogLevel(bad, &untouched));
  CHECK(std::string(LogLevelNames()) == "debug, info, warning, error, off");
}

// Intent: the threshold set is the threshold read back; restored afterwards.
TEST_CASE("console_log: the level is kept") {
  const LogLevel before = CurrentLogLevel();
  SetLogLevel(LogLevel::kError);
  CHECK(CurrentLogLevel() == LogLevel::kError);
  SetLogLevel(LogLevel::kDebug);
  CHECK(CurrentLogLevel() == LogLevel::kDebug);
  SetLogLevel(before);
}

// Intent: the terminal width is never zero (80 when it cannot be asked), so
// cutting the live line to it is always safe.
TEST_CASE("console_log: a usable width") {
  CHECK(ConsoleColumns() > 0);
}

}  // namespace
}  // namespace fanfold
