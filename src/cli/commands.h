// Subcommand registration: each subcommand lives in its own cmd_<name>.cc and adds
// itself to the CLI11 app. A handler returns the process exit code.
#ifndef TIDEMARK_SRC_CLI_COMMANDS_H_
#define TIDEMARK_SRC_CLI_COMMANDS_H_

#include <CLI/CLI.hpp>

#include <functional>

namespace tidemark::cli {

/// The work of the chosen subcommand, returning the exit code. A subcommand's
/// CLI11 callback calls SetHandler; main() runs the handler after parsing, so that
/// parse errors and work errors stay apart.
using Handler = std::function<int()>;
void SetHandler(Handler handler);

// One registration function per cmd_<name>.cc; keep alphabetical.
// (added as subcommands land)
void RegisterClean(CLI::App& app);
void RegisterEvidence(CLI::App& app);
void RegisterIndex(CLI::App& app);
void RegisterProbe(CLI::App& app);
void RegisterTokens(CLI::App& app);

}  // namespace tidemark::cli

#endif  // TIDEMARK_SRC_CLI_COMMANDS_H_
