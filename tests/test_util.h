// Helpers shared by tests: paths to the source tree and the built CLI, scratch
// directories, running /usr/bin/python3 reference scripts.
#ifndef TIDEMARK_TESTS_TEST_UTIL_H_
#define TIDEMARK_TESTS_TEST_UTIL_H_

#include <cstdint>
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
/// XXH3-64 (seed 0) of a file's bytes by `xxhsum -H3` (Debian package xxhash 0.8.1),
/// which prints "XXH3 (<path>) = <16 hex>", the hash as a big-endian hex number
/// (checked by running it). Throws if xxhsum fails or prints something else.
uint64_t XxhsumH3(const std::string& path);

}  // namespace tidemark::testing

#endif  // TIDEMARK_TESTS_TEST_UTIL_H_
