#include "coordinator/cli/usage_text.h"

#include <algorithm>

#include <CLI/CLI.hpp>

#include "common/base/nearest_names.h"

namespace fanfold {
namespace {

std::string Join(const std::vector<std::string>& names) {
  std::string out;
  for (const std::string& n : names) out += (out.empty() ? "" : ", ") + n;
  return out;
}

// "-j/--workers" for a flag, "JOB" for a positional argument.
std::string DisplayName(const CLI::Option& opt) {
  if (opt.get_positional()) return opt.get_name(/*positional=*/true);
  std::string out;
  for (const std::string& s : opt.get_snames()) out += (out.empty() ? "-" : "/-") + s;
  for (const std::string& l : opt.get_lnames()) out += (out.empty() ? "--" : "/--") + l;
  return out;
}

// Every flag cmd takes ("-j/--workers", ..., "-h/--help"), and every single
// spelling of them ("-j", "--workers", ...) for suggestions.
void FlagNames(const CLI::App& cmd, std::vector<std::string>* display, std::vector<std::string>* spellings) {
  for (const CLI::Option* opt : cmd.get_options()) {
    if (opt->get_positional()) continue;
    display->push_back(DisplayName(*opt));
    for (const std::string& s : opt->get_snames()) spellings->push_back("-" + s);
    for (const std::string& l : opt->get_lnames()) spellings->push_back("--" + l);
  }
}

// The option CLI11 named at the start of its message ("--workers: ..."), or
// nullptr.
const CLI::Option* OptionNamedIn(const CLI::App& cmd, const std::string& what) {
  const size_t colon = what.find(':');
  if (colon == std::string::npos) return nullptr;
  return cmd.get_option_no_throw(what.substr(0, colon));
}

std::string Prefix(const CLI::App& cmd) { return cmd.get_parent() == nullptr ? "" : cmd.get_name() + ": "; }

// The message for the first argument of `left` that cmd does not take.
std::string UnexpectedText(const CLI::App& cmd, std::vector<std::string> left) {
  // "--" ends the flags (what follows is positional); CLI11 hands it back.
  left.erase(std::remove(left.begin(), left.end(), std::string("--")), left.end());
  if (left.empty()) return "";
  const std::string& arg = left.front();
  if (arg.size() > 1 && arg[0] == '-') {
    std::vector<std::string> display, spellings;
    FlagNames(cmd, &display, &spellings);
    const bool is_long = arg.rfind("--", 0) == 0;
    const std::string flag = is_long ? arg.substr(0, arg.find('=')) : arg;  // --workres=2 → --workres
    // A one-letter flag is one edit from every other: suggest only another case of it (-J → -j).
    std::vector<std::string> near;
    for (const std::string& s : spellings)
      if ((s.rfind("--", 0) == 0) == is_long && (is_long || EditDistance(s, flag) == 0)) near.push_back(s);
    return Prefix(cmd) + "unknown flag '" + flag + "'" + DidYouMean(flag, near) + "; expected one of: " + Join(display);
  }
  std::string positionals;
  for (const CLI::Option* opt : cmd.get_options())
    if (opt->get_positional()) positionals += (positionals.empty() ? "" : " and ") + DisplayName(*opt);
  return Prefix(cmd) + "unexpected argument '" + arg + "'; expected only " +
         (positionals.empty() ? "flags" : positionals + " and flags") + " (see 'fanfold " + cmd.get_name() +
         " --help')";
}

}  // namespace

std::string UnknownCommandText(const std::string& name, const std::vector<std::string>& commands) {
  return "unknown command '" + name + "'" + DidYouMean(name, commands) + "; expected one of: " + Join(commands);
}

std::string TopLevelFlagText(const std::string& arg, const std::vector<std::string>& commands) {
  if (arg.empty() || arg[0] != '-' || arg == "-h" || arg == "--help" || arg == "--version") return "";
  return "unknown flag '" + arg + "' before the command" + DidYouMean(arg, {"--help", "--version"}) +
         "; expected a command first, one of: " + Join(commands) + " (flags follow it: fanfold run JOB -j 4)";
}

std::string ParseErrorText(const CLI::ParseError& e, const CLI::App& cmd, const char* example,
                           const std::vector<std::string>& commands) {
  const std::string what = e.what();
  const bool required = dynamic_cast<const CLI::RequiredError*>(&e) != nullptr;
  const bool mismatch = dynamic_cast<const CLI::ArgumentMismatch*>(&e) != nullptr;
  if (required && cmd.get_parent() == nullptr) return "missing a command; expected one of: " + Join(commands);
  if (required) {
    // "JOB is required": find the positional by its name.
    for (const CLI::Option* opt : cmd.get_options()) {
      if (!opt->get_positional() || what.rfind(opt->get_name(true) + " ", 0) != 0) continue;
      std::string text = Prefix(cmd) + "missing " + DisplayName(*opt) + " (" + opt->get_description() + ")";
      if (example != nullptr) text += "; e.g. " + std::string(example);
      return text;
    }
  }
  if (mismatch) {
    // "--workers: 1 required TEXT missing": the flag ended the command line.
    if (const CLI::Option* opt = OptionNamedIn(cmd, what); opt != nullptr && what.find(" missing") != std::string::npos)
      return Prefix(cmd) + DisplayName(*opt) +
             ": found no value after it; expected its value: " + opt->get_description();
  }
  if (mismatch && what.find(": At Most ") != std::string::npos) {
    // "--output: At Most 1 required but received 2": the flag was repeated.
    if (const CLI::Option* opt = OptionNamedIn(cmd, what); opt != nullptr)
      return Prefix(cmd) + DisplayName(*opt) + ": found it more than once; expected it at most once";
  }
  if (dynamic_cast<const CLI::ExtrasError*>(&e) != nullptr) {
    // "The following argument(s) was/were not expected: b a" (after "--", where extras are not
    // kept), listed last first.
    std::vector<std::string> left;
    for (size_t at = what.find(": "); at != std::string::npos && at + 1 < what.size();) {
      const size_t next = what.find(' ', at + 2);
      left.push_back(what.substr(at + 2, next == std::string::npos ? std::string::npos : next - at - 2));
      at = next == std::string::npos ? next : next - 1;
    }
    std::reverse(left.begin(), left.end());
    if (std::string text = UnexpectedText(cmd, left); !text.empty()) return text;
  }
  if (dynamic_cast<const CLI::ConversionError*>(&e) != nullptr) {
    // "Could not convert: --fresh = abc": a value given to a switch.
    const size_t colon = what.find(": "), equals = what.find(" = ");
    if (colon != std::string::npos && equals != std::string::npos && equals > colon) {
      const CLI::Option* opt = cmd.get_option_no_throw(what.substr(colon + 2, equals - colon - 2));
      if (opt != nullptr)
        return Prefix(cmd) + DisplayName(*opt) + ": found the value '" + what.substr(equals + 3) +
               "'; expected the switch alone (it takes no value)";
    }
  }
  return Prefix(cmd) + what;
}

std::string LeftoverArgumentsText(const CLI::App& cmd) { return UnexpectedText(cmd, cmd.remaining()); }

}  // namespace fanfold
