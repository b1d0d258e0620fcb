// tidemark: command-line front end. Parses flags, builds options, calls the
// library, prints. The only code in the project that prints or exits.
#include <CLI/CLI.hpp>

#include <cstdio>

#include "cli/cli_common.h"
#include "cli/commands.h"
#include "tidemark_version.h"

namespace tidemark::cli {
namespace {
Handler g_handler;
}  // namespace
void SetHandler(Handler handler) { g_handler = std::move(handler); }
}  // namespace tidemark::cli

int main(int argc, char** argv) {
  using namespace tidemark::cli;
  CLI::App app{
      "tidemark: audit language-model training data for benchmark contamination.\n"
      "Index a corpus of word n-gram fingerprints once, then probe benchmarks against it."};
  app.set_version_flag("--version", std::string("tidemark ") + TIDEMARK_VERSION);
  app.require_subcommand(1);
  app.fallthrough();
  auto& g = Globals();
  app.add_flag_callback("-q,--quiet", [&g] { g.verbosity = -1; }, "Only errors on stderr");
  app.add_flag_callback("-v,--verbose", [&g] { g.verbosity = 1; }, "More detail on stderr");
  app.add_flag("--no-progress", g.no_progress, "Do not show progress lines");

  // Subcommands register here (see commands.h).
  RegisterProbe(app);
  RegisterClean(app);
  RegisterEvidence(app);
  RegisterIndex(app);
  RegisterTokens(app);

  try {
    app.parse(argc, argv);
  } catch (const CLI::CallForHelp& e) {
    return app.exit(e);  // --help: stdout, exit 0
  } catch (const CLI::CallForAllHelp& e) {
    return app.exit(e);
  } catch (const CLI::Success& e) {
    return app.exit(e);  // --version
  } catch (const CLI::ParseError& e) {
    app.exit(e);  // message to stderr
    return kExitUsage;
  }
  if (!g_handler) {
    std::fprintf(stderr, "tidemark: no command given; see tidemark --help\n");
    return kExitUsage;
  }
  InstallSignalHandlers();
  return g_handler();
}
