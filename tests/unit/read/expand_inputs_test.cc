// ExpandInputs and DetectFormat.
#include <catch2/catch.hpp>

#include <filesystem>

#include "read_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

using testing::WriteFile;

TEST_CASE("ExpandInputs: files, directories, @lists; sorted, de-duplicated", "[read]") {
  const std::string d = testing::ScratchDir("expand");
  std::filesystem::create_directories(d + "/corpus/sub");
  std::filesystem::create_directories(d + "/corpus/.hidden_dir");
  std::filesystem::create_directories(d + "/lists");
  for (const char* f : {"corpus/b.jsonl", "corpus/a.jsonl.zst", "corpus/sub/c.jsonl",
                        "corpus/.hidden.jsonl", "corpus/.hidden_dir/x.jsonl", "single.jsonl"}) {
    WriteFile(d + "/" + f, "");
  }
  WriteFile(d + "/lists/l.txt",
            "# a comment\n"
            "../single.jsonl\n"
            "\n"
            "  ../corpus/b.jsonl  \r\n" +
                d + "/corpus/sub/c.jsonl\n");
  auto r = ExpandInputs({d + "/corpus", "@" + d + "/lists/l.txt", d + "/single.jsonl"});
  REQUIRE(r.ok());
  const std::vector<std::string> want = {d + "/corpus/a.jsonl.zst", d + "/corpus/b.jsonl",
                                         d + "/corpus/sub/c.jsonl", d + "/single.jsonl"};
  CHECK(*r == want);

  auto missing = ExpandInputs({d + "/nope"});
  CHECK(missing.status().code() == StatusCode::kNotFound);
  CHECK_THAT(missing.status().message(), Catch::Contains(d + "/nope"));
  WriteFile(d + "/lists/bad.txt", "ok\n../gone.jsonl\n");
  WriteFile(d + "/lists/ok", "");
  auto in_list = ExpandInputs({"@" + d + "/lists/bad.txt"});
  CHECK(in_list.status().code() == StatusCode::kNotFound);
  CHECK_THAT(in_list.status().message(), Catch::Contains("bad.txt:2: "));
  CHECK(ExpandInputs({"@" + d + "/no-list"}).status().code() == StatusCode::kNotFound);
}

TEST_CASE("DetectFormat: extensions, magic bytes, content", "[read]") {
  const std::string d = testing::ScratchDir("detect");
  struct Case {
    const char* name;
    const char* contents;
    InputFormat format;
    Compression compression;
  };
  const Case cases[] = {
      {"a.jsonl", "{}", InputFormat::kJsonl, Compression::kNone},
      {"a.NDJSON", "{}", InputFormat::kJsonl, Compression::kNone},
      {"a.json.gz", "", InputFormat::kJsonArray, Compression::kGzip},
      {"a.csv.zst", "", InputFormat::kCsv, Compression::kZstd},
      {"a.txt", "hello", InputFormat::kText, Compression::kNone},
      {"noext", "\n  {\"text\": 1}", InputFormat::kJsonl, Compression::kNone},
      {"noext2", "[{}]", InputFormat::kJsonArray, Compression::kNone},
  };
  for (const Case& c : cases) {
    WriteFile(d + "/" + c.name, c.contents);
    auto r = DetectFormat(d + "/" + c.name, {});
    INFO(c.name);
    REQUIRE(r.ok());
    CHECK(r->format == c.format);
    CHECK(r->compression == c.compression);
  }
  WriteFile(d + "/README", "plain words");
  auto unknown = DetectFormat(d + "/README", {});
  CHECK(unknown.status().code() == StatusCode::kInvalidArgument);
  CHECK_THAT(unknown.status().message(), Catch::Contains("cannot tell the input format"));
  ReadOptions forced;
  forced.format = InputFormat::kText;
  auto f = DetectFormat(d + "/README", forced);
  REQUIRE(f.ok());
  CHECK(f->format == InputFormat::kText);
  CHECK(DetectFormat(d + "/missing", {}).status().code() == StatusCode::kNotFound);

  DetectedFormat jsonl{InputFormat::kJsonl, Compression::kNone};
  DetectedFormat text{InputFormat::kText, Compression::kNone};
  ReadOptions lines;
  lines.text_lines = true;
  CHECK(IsLineOriented(jsonl, {}));
  CHECK_FALSE(IsLineOriented(text, {}));
  CHECK(IsLineOriented(text, lines));
  CHECK(BlockReader::Open(d + "/a.txt", {}).status().code() == StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace tidemark
