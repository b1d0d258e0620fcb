#include "test_util.h"

#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <array>
#include <atomic>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>

namespace tidemark::testing {

std::string SourceDir() { return TIDEMARK_SOURCE_DIR; }
std::string CliPath() { return TIDEMARK_CLI_PATH; }

std::string ScratchDir(const std::string& name) {
  static std::atomic<int> counter{0};
  const std::string dir = std::string(TIDEMARK_SCRATCH_DIR) + "/" + name + "." +
                          std::to_string(::getpid()) + "." + std::to_string(counter++);
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  return dir;
}

std::string RunCommand(const std::string& command, int* exit_code) {
  FILE* pipe = ::popen(command.c_str(), "r");
  if (pipe == nullptr) throw std::runtime_error("popen failed: " + command);
  std::string out;
  std::array<char, 65536> buf;
  size_t n;
  while ((n = std::fread(buf.data(), 1, buf.size(), pipe)) > 0) out.append(buf.data(), n);
  const int status = ::pclose(pipe);
  if (exit_code != nullptr) *exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : 128;
  return out;
}

bool PathExists(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0;
}

void WriteFile(const std::string& path, const std::string& contents) {
  std::ofstream f(path, std::ios::binary);
  f << contents;
  if (!f) throw std::runtime_error("cannot write " + path);
}

uint64_t XxhsumH3(const std::string& path) {
  int rc = -1;
  const std::string out = RunCommand("xxhsum -H3 '" + path + "' 2>/dev/null", &rc);
  const size_t eq = out.rfind(" = ");
  if (rc != 0 || out.rfind("XXH3 (", 0) != 0 || eq == std::string::npos || out.size() < eq + 19) {
    throw std::runtime_error("xxhsum -H3 failed on " + path + ": " + out);
  }
  return std::stoull(out.substr(eq + 3, 16), nullptr, 16);
}

std::string ReadFile(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) throw std::runtime_error("cannot read " + path);
  std::stringstream ss;
  ss << f.rdbuf();
  return ss.str();
}

}  // namespace tidemark::testing
