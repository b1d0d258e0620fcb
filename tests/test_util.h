// Helpers shared by tests: paths to the source tree and the built CLI, scratch
// directories, running /usr/bin/python3 reference scripts.
#ifndef TIDEMARK_TESTS_TEST_UTIL_H_
#define TIDEMARK_TESTS_TEST_UTIL_H_

#include <string>

namespace tidemark::testing {

/// Absolute path of the source tree (compile definition).
std::string SourceDir();
/// Absolute path of the built `tidemark` binary.
std::string CliPath();
/// A fresh empty directory under the build tree's scratch area, unique per call.
std::string ScratchDir(const std::string& name);
/// Runs a shell command; returns its stdout; *exit_code gets the exit status.
std::string RunCommand(const std::string& command, int* exit_code);
/// True if `path` exists (for skipping checks whose Debian package is absent:
/// scripts/setup.sh installs them, so in CI they are always present).
bool PathExists(const std::string& path);
/// Writes `contents` to `path` (test fixtures).
void WriteFile(const std::string& path, const std::string& contents);
std::string ReadFile(const std::string& path);

}  // namespace tidemark::testing

#endif  // TIDEMARK_TESTS_TEST_UTIL_H_
