#include <catch2/catch.hpp>

#include <unistd.h>

#include <algorithm>
#include <memory>
#include <string>
#include <vector>

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

TEST_CASE("direct (O_DIRECT) files hold exactly the bytes appended", "[common]") {
  // Sizes around the 4096-byte alignment and the 4 MiB staging buffer; appends in odd
  // pieces; an append after Sync (falls back to ordinary writes). Also on /dev/shm
  // (tmpfs), which may refuse O_DIRECT: the file must then be written through the
  // page cache with the same bytes.
  std::vector<std::string> dirs = {testing::ScratchDir("direct")};
  if (testing::PathExists("/dev/shm")) {
    const std::string shm = "/dev/shm/tidemark-direct-test-" + std::to_string(::getpid());
    REQUIRE(Env::Default()->CreateDirs(shm).ok());
    dirs.push_back(shm);
  }
  for (const std::string& dir : dirs) {
    for (const size_t size : {size_t{0}, size_t{1}, size_t{4095}, size_t{4096}, size_t{4097},
                              size_t{3 << 20}, (size_t{4} << 20) + 12345, size_t{9} << 20}) {
      std::string data(size, '\0');
      for (size_t i = 0; i < size; ++i) data[i] = static_cast<char>((i * 131 + size) % 251);
      const std::string path = dir + "/f" + std::to_string(size);
      auto f = Env::Default()->NewWritableFile(path, FileOptions{true});
      REQUIRE(f.ok());
      size_t pos = 0, piece = 1;
      while (pos < size) {
        const size_t n = std::min(piece, size - pos);
        REQUIRE((*f)->Append(std::string_view(data).substr(pos, n)).ok());
        pos += n;
        piece = piece * 7 + 3;
      }
      CHECK((*f)->size() == size);
      REQUIRE((*f)->Sync().ok());
      REQUIRE((*f)->Append("tail").ok());
      REQUIRE((*f)->Close().ok());
      INFO(path);
      CHECK(testing::ReadFile(path) == data + "tail");
    }
  }
  if (dirs.size() > 1) (void)Env::Default()->RemoveTree(dirs[1]);
}

TEST_CASE("Errors name the path", "[common]") {
  auto r = ReadFileToString("/nonexistent/tidemark/file");
  REQUIRE_FALSE(r.ok());
  CHECK(r.status().message().find("/nonexistent/tidemark/file") != std::string::npos);
}

}  // namespace
}  // namespace tidemark
