#include "coordinator/cli/cli.h"

#include <memory>
#include <string>
#include <vector>

#include <CLI/CLI.hpp>

#include "coordinator/cli/subcommand_table.h"
#include "coordinator/cli/usage_text.h"

namespace fanfold {
namespace {

// The one way out for bad usage: the message, then main() adds the hint.
CliOutcome UsageError(const std::string& message) {
  CliOutcome result;
  result.outcome.status = Status::InvalidArgument(message);
  result.usage_hint = true;
  return result;
}

// The subcommands' names, in table order.
std::vector<std::string> CommandNames() {
  std::vector<std::string> names;
  for (const SubcommandRow& row : SubcommandTable()) names.emplace_back(row.name);
  return names;
}

// "" iff argv names no subcommand or a known one; else the usage message.
// Checked before CLI11 parses, whose own message for this case is vaguer.
std::string UnknownSubcommand(int argc, char** argv) {
  if (argc < 2) return "";
  const std::string name = argv[1];
  if (name.empty() || name[0] == '-') return TopLevelFlagText(name, CommandNames());
  for (const SubcommandRow& row : SubcommandTable())
    if (row.name == name) return "";
  return UnknownCommandText(name, CommandNames());
}

}  // namespace

CliOutcome ParseAndRun(int argc, char** argv) {
  CLI::App app{"fanfold: split-apply-combine over sharded, compressed event logs, on every core.", "fanfold"};
  app.set_version_flag("--version", std::string("fanfold ") + FANFOLD_VERSION);
  app.require_subcommand(1);
  app.footer("Exit status: 0 all shards done, 1 some shards failed, 2 bad usage or job file,\n"
             "3 I/O or system error, 130 interrupted.");
  std::vector<std::pair<CLI::App*, std::unique_ptr<Subcommand>>> commands;
  for (const SubcommandRow& row : SubcommandTable()) {
    CLI::App* cmd = app.add_subcommand(row.name, row.summary);
    cmd->allow_extras();  // LeftoverArgumentsText words them, not CLI11
    std::unique_ptr<Subcommand> command = row.make();
    command->AddFlags(cmd);
    cmd->footer(std::string("Example:\n  ") + row.example);
    commands.emplace_back(cmd, std::move(command));
  }

  if (std::string e = UnknownSubcommand(argc, argv); !e.empty()) return UsageError(e);
  CliOutcome result;
  try {
    app.parse(argc, argv);
  } catch (const CLI::Success& e) {  // --help, --help-all or --version: printed by exit()
    app.exit(e);
    result.exit_zero_early = true;
    return result;
  } catch (const CLI::ParseError& e) {
    // The subcommand being parsed, if CLI11 got that far.
    const CLI::App* where = &app;
    const char* example = nullptr;
    for (size_t i = 0; i < commands.size(); ++i) {
      if (commands[i].first->parsed()) {
        where = commands[i].first;
        example = SubcommandTable()[i].example;
      }
    }
    return UsageError(ParseErrorText(e, *where, example, CommandNames()));
  }
  for (auto& [cmd, command] : commands) {
    if (!cmd->parsed()) continue;
    if (std::string e = LeftoverArgumentsText(*cmd); !e.empty()) return UsageError(e);
    if (Status s = command->CheckFlags(); !s.ok()) return UsageError(s.message());
    result.outcome = command->Run();
    break;
  }
  return result;
}

}  // namespace fanfold
