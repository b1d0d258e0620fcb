// The tidemark process exit codes: one documented enum (docs/cli.md).
#ifndef TIDEMARK_SRC_CLI_EXIT_CODES_H_
#define TIDEMARK_SRC_CLI_EXIT_CODES_H_

namespace tidemark::cli {

enum ExitCode : int {
  kExitOk = 0,            ///< success
  kExitFailure = 1,       ///< the operation failed (bad input in --strict, I/O error, ...)
  kExitUsage = 2,         ///< bad command line
  kExitContaminated = 3,  ///< --fail-above: some benchmark's rate exceeds the limit
  kExitCorrupt = 4,       ///< an index failed verification (checksum, invariant)
  kExitMismatch = 5,      ///< index built with other text options than requested
  kExitInterrupted = 130  ///< SIGINT/SIGTERM; temporary files were removed
};

}  // namespace tidemark::cli

#endif  // TIDEMARK_SRC_CLI_EXIT_CODES_H_
