// Every input in tests/golden/bad must be rejected with its expected message
// (tests/golden/bad/README.md describes the layout).
#include <catch2/catch.hpp>

#include <algorithm>
#include <filesystem>
#include <string>
#include <vector>

#include "read_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

// Glob match where '*' matches any run of characters.
bool GlobMatch(std::string_view pattern, std::string_view text) {
  if (pattern.empty()) return text.empty();
  if (pattern[0] == '*') {
    for (size_t i = 0; i <= text.size(); ++i) {
      if (GlobMatch(pattern.substr(1), text.substr(i))) return true;
    }
    return false;
  }
  return !text.empty() && pattern[0] == text[0] && GlobMatch(pattern.substr(1), text.substr(1));
}

TEST_CASE("golden bad inputs are rejected with their expected messages", "[read][golden]") {
  namespace fs = std::filesystem;
  const std::string dir = testing::SourceDir() + "/tests/golden/bad";
  std::vector<std::string> inputs;
  for (const auto& e : fs::directory_iterator(dir)) {
    const std::string name = e.path().filename().string();
    if (name.size() > 9 && name.substr(name.size() - 9) == ".expected") continue;
    if (name == "README.md") continue;
    inputs.push_back(e.path().string());
  }
  std::sort(inputs.begin(), inputs.end());
  REQUIRE(inputs.size() >= 13);
  ReadOptions strict;
  strict.strict = true;
  for (const std::string& path : inputs) {
    INFO(path);
    REQUIRE(testing::PathExists(path + ".expected"));
    std::string expected = testing::ReadFile(path + ".expected");
    while (!expected.empty() && expected.back() == '\n') expected.pop_back();
    const size_t at = expected.find("{file}");
    REQUIRE(at != std::string::npos);
    expected.replace(at, 6, path);
    const auto r = testing::ReadAll(path, strict);
    REQUIRE_FALSE(r.status.ok());
    CHECK(GlobMatch(expected, r.status.ToString()));
    if (!GlobMatch(expected, r.status.ToString())) {
      FAIL_CHECK("got:      " << r.status.ToString() << "\nexpected: " << expected);
    }
  }
}

}  // namespace
}  // namespace tidemark
