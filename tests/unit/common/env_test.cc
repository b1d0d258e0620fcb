#include <catch2/catch.hpp>

#include <memory>

#include "common/env.h"
#include "test_util.h"

namespace tidemark {
namespace {

// An Env whose renames fail: models a crash or a full disk at the last step.
class FailingRenameEnv : public Env {
 public:
  Status Rename(const std::string&, const std::string&) override {
    return Status::IOError("injected rename failure");
  }
};

TEST_CASE("AtomicFileWriter publishes only on Commit", "[common]") {
  const std::string dir = testing::ScratchDir("atomic");
  const std::string path = dir + "/out.json";
  {
    AtomicFileWriter w(path);
    REQUIRE(w.Open().ok());
    REQUIRE(w.Append("{}").ok());
    CHECK(testing::PathExists(w.temp_path()));
    CHECK_FALSE(testing::PathExists(path));
    // Destroyed without Commit: abandoned.
  }
  CHECK_FALSE(testing::PathExists(path));
  auto names = Env::Default()->ListDir(dir);
  REQUIRE(names.ok());
  CHECK(names->empty());

  REQUIRE(WriteFileAtomically(path, "v1").ok());
  REQUIRE(WriteFileAtomically(path, "v2").ok());
  CHECK(testing::ReadFile(path) == "v2");
}

TEST_CASE("A failed rename leaves the old file and no temp file", "[common]") {
  const std::string dir = testing::ScratchDir("atomic_fail");
  const std::string path = dir + "/out.json";
  REQUIRE(WriteFileAtomically(path, "old").ok());
  FailingRenameEnv env;
  const Status s = WriteFileAtomically(path, "new", &env);
  CHECK(s.code() == StatusCode::kIOError);
  CHECK(testing::ReadFile(path) == "old");
  auto names = Env::Default()->ListDir(dir);
  REQUIRE(names.ok());
  CHECK(names->size() == 1);
}

TEST_CASE("Errors name the path", "[common]") {
  auto r = ReadFileToString("/nonexistent/tidemark/file");
  REQUIRE_FALSE(r.ok());
  CHECK(r.status().message().find("/nonexistent/tidemark/file") != std::string::npos);
}

}  // namespace
}  // namespace tidemark
