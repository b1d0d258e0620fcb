// .json inputs: one array of objects, cross-checked against Python's json module.
#include <catch2/catch.hpp>
#include <unistd.h>

#include <string>

#include "read_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

using testing::Count;
using testing::ReadAll;
using testing::WriteFile;

std::string Put(const std::string& name, const std::string& contents) {
  const std::string path = testing::ScratchDir("jsonarr") + "/" + name;
  WriteFile(path, contents);
  return path;
}

TEST_CASE("json array: records, ids, offsets of each element", "[read][json]") {
  const std::string doc =
      "[\n"
      "  {\"id\": \"a\", \"text\": \"first [with] {brackets}\"},\n"
      "  {\"id\": \"b\", \"text\": \"quote \\\" and \\\\ \", \"n\": [1, [2, {\"x\": \"]\"}]]},\n"
      "  {\"id\": \"c\", \"text\": null},\n"
      "  7,\n"
      "  {\"id\": \"d\", \"text\": \"last\"}\n"
      "]\n";
  const std::string p = Put("bench.json", doc);
  ReadOptions o;
  o.id_field = "id";
  const auto r = ReadAll(p, o);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 3);
  CHECK(r.records[0].text == "first [with] {brackets}");
  CHECK(r.records[1].text == "quote \" and \\ ");
  CHECK(r.records[2].id == "d");
  CHECK(r.records[2].record_number == 5);
  CHECK(r.records[2].line == 5);  // record number, as reader.h documents for .json
  for (const auto& rec : r.records) {
    CHECK(doc.substr(rec.byte_offset, 7) == "{\"id\": ");
  }
  CHECK(Count(r.skips, SkipReason::kNotString) == 1);
  CHECK(Count(r.skips, SkipReason::kMalformedJson) == 1);
  CHECK_THAT(r.skips.examples[0], Catch::StartsWith(p + "@"));
  CHECK_THAT(r.skips.examples[0], Catch::Contains("(record 3): field \"text\": expected a string, got null"));

  // Python's json module agrees on the texts of the string-valued records.
  int rc = 0;
  const std::string py = testing::RunCommand(
      "/usr/bin/python3 -c \"import json,sys; d=json.load(open(sys.argv[1])); "
      "print('|'.join(x['text'] for x in d if isinstance(x, dict) and isinstance(x.get('text'), str)))\" " +
          p,
      &rc);
  REQUIRE(rc == 0);
  CHECK(py == r.records[0].text + "|" + r.records[1].text + "|" + r.records[2].text + "\n");
}

TEST_CASE("json array: structural errors are BadInput with an offset", "[read][json]") {
  struct Case {
    const char* doc;
    const char* expect;
  };
  const Case cases[] = {
      {"{\"text\": \"not an array\"}", "@0: expected a JSON array of objects"},
      {"[{\"text\": \"a\"}, {\"text\": \"b\"", "unterminated element"},
      {"[{\"text\": \"a\"} {\"text\": \"b\"}]", "@15: expected ',' or ']'"},
      {"[{\"text\": \"a\"},]", "@15: missing array element"},
      {"[{\"text\": \"a\"}] x", "@16: unexpected content after the array"},
      {"[{\"text\": \"a\"", "unterminated"},
  };
  for (const Case& c : cases) {
    const std::string p = Put("bad.json", c.doc);
    const auto r = ReadAll(p);
    INFO(c.doc);
    CHECK(r.status.code() == StatusCode::kBadInput);
    CHECK_THAT(r.status.message(), Catch::StartsWith(p));
    CHECK_THAT(r.status.message(), Catch::Contains(c.expect));
  }
  const auto empty = ReadAll(Put("empty.json", ""));
  CHECK(empty.status.ok());
  CHECK(empty.records.empty());
  const auto none = ReadAll(Put("none.json", " [ ] \n"));
  CHECK(none.status.ok());
  CHECK(none.records.empty());
}

TEST_CASE("json array: a file over the size limit is refused up front", "[read][json]") {
  // A sparse file one byte over kMaxJsonArrayBytes: refused from its size, unread.
  const std::string p = Put("huge.json", "[");
  REQUIRE(::truncate(p.c_str(), static_cast<off_t>(kMaxJsonArrayBytes + 1)) == 0);
  const auto r = ReadAll(p);
  CHECK(r.status.code() == StatusCode::kBadInput);
  CHECK_THAT(r.status.message(), Catch::Contains("over the limit of 1073741824 bytes"));
  CHECK_THAT(r.status.message(), Catch::Contains("JSON Lines"));
}

}  // namespace
}  // namespace tidemark
