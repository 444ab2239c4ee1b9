// UsageText: the usage-error messages of the command line in fanfold's own
// words — an unknown command or flag (with the nearest names), a missing
// argument or flag value, an unexpected argument — built from the CLI11 app's
// declared options rather than from CLI11's text. Pure functions of their
// arguments; main thread only (the CLI11 app is not shared).
#pragma once

#include <string>
#include <vector>

namespace CLI {
class App;
class ParseError;
}  // namespace CLI

namespace fanfold {

// "unknown command 'rnu' (did you mean run?); expected one of: run, resume, ...".
std::string UnknownCommandText(const std::string& name, const std::vector<std::string>& commands);

// For `fanfold -x ...` (a flag before any command): "unknown flag '-x'; expected
// a command first, one of: ...". "" iff arg is a flag the top level knows
// (--help, -h, --version) or not a flag at all.
std::string TopLevelFlagText(const std::string& arg, const std::vector<std::string>& commands);

// What CLI11 refused, said again with the flag's names and help: a missing
// positional argument or flag value, a missing command. `cmd` is the
// subcommand being parsed (nullptr: the top level). Falls back to CLI11's own
// text only for a refusal this list does not know.
std::string ParseErrorText(const CLI::ParseError& e, const CLI::App& cmd, const char* example,
                           const std::vector<std::string>& commands);

// "" iff cmd (parsed, with extras allowed) kept no argument it does not take;
// else the message for the first: an unknown flag (with the nearest flag
// names) or an unexpected argument.
std::string LeftoverArgumentsText(const CLI::App& cmd);

}  // namespace fanfold
