// JSON Lines records: field selection (keys, RFC 6901 pointers, arrays), every
// bad-record class, line numbers and byte offsets (checked against `grep -bn`),
// strict mode, and real text round-tripped through Python's json module.
#include <catch2/catch.hpp>
#include <sys/stat.h>
#include <unistd.h>

#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "read_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

using testing::Count;
using testing::ReadAll;
using testing::WriteFile;

std::string Put(const std::string& name, const std::string& contents) {
  const std::string dir = testing::ScratchDir("jsonl");
  const std::string path = dir + "/" + name;
  WriteFile(path, contents);
  return path;
}

TEST_CASE("jsonl: plain records, ids from the record number", "[read][jsonl]") {
  const std::string p = Put("a.jsonl", "{\"text\":\"one\"}\n{\"text\":\"two\",\"x\":[1,{}]}\n");
  const auto r = ReadAll(p);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 2);
  CHECK(r.records[0].text == "one");
  CHECK(r.records[1].text == "two");
  CHECK(r.records[0].id == "1");
  CHECK(r.records[1].id == "2");
  CHECK(r.records[1].line == 2);
  CHECK(r.records[1].byte_offset == 15);
  CHECK(r.skips.total() == 0);
}

TEST_CASE("jsonl: each bad-record class is skipped, counted and quoted", "[read][jsonl]") {
  const std::string p = Put("bad.jsonl",
                            "{\"text\":\"good 1\"}\n"          // 1
                            "{\"text\": \"unterminated}\n"     // 2 malformed
                            "{\"body\":\"no text here\"}\n"    // 3 missing
                            "{\"text\":null}\n"                // 4 not a string
                            "{\"text\":42}\n"                  // 5 not a string
                            "{\"text\":[\"a\",7]}\n"           // 6 array with a number
                            "\n"                               // 7 empty line
                            "   \t\n"                          // 8 blank line
                            "[\"an array\"]\n"                 // 9 not an object
                            "{\"text\":\"good 2\"} trailing\n"  // 10 malformed
                            "{\"text\":\"good 3\"}");           // 11, no final newline
  const auto r = ReadAll(p);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 2);
  CHECK(r.records[0].text == "good 1");
  CHECK(r.records[1].text == "good 3");
  CHECK(r.records[1].line == 11);
  CHECK(Count(r.skips, SkipReason::kMalformedJson) == 3);
  CHECK(Count(r.skips, SkipReason::kMissingField) == 1);
  CHECK(Count(r.skips, SkipReason::kNotString) == 3);
  CHECK(Count(r.skips, SkipReason::kEmptyLine) == 2);
  CHECK(r.skips.dropped() == 9);
  REQUIRE(r.skips.examples.size() == 9);
  CHECK_THAT(r.skips.examples[0], Catch::StartsWith(p + ":2: malformed JSON"));
  CHECK_THAT(r.skips.examples[0], Catch::EndsWith("'{\"text\": \"unterminated}'"));
  CHECK(r.skips.examples[1] == p + ":3: missing field \"text\": '{\"body\":\"no text here\"}'");
  CHECK(r.skips.examples[2] ==
        p + ":4: field \"text\": expected a string, got null: '{\"text\":null}'");
  CHECK_THAT(r.skips.examples[3], Catch::Contains(":5: field \"text\": expected a string, got a number"));
  CHECK_THAT(r.skips.examples[4], Catch::Contains(":6: field \"text\": expected a string or an array"));
  CHECK(r.skips.examples[5] == p + ":7: empty line");
  CHECK_THAT(r.skips.examples[7], Catch::Contains(":9: not a JSON object (got an array)"));
  CHECK_THAT(r.skips.examples[8], Catch::StartsWith(p + ":10: malformed JSON"));
}

TEST_CASE("jsonl: strict turns each skip into an error naming file:line", "[read][jsonl]") {
  ReadOptions strict;
  strict.strict = true;
  struct Case {
    const char* line2;
    const char* expect;
  };
  const Case cases[] = {
      {"{\"text\": [}", ":2: malformed JSON"},
      {"{\"other\":1}", ":2: missing field \"text\""},
      {"{\"text\":{\"a\":1}}", ":2: field \"text\": expected a string, got an object"},
      {"{\"text\":\"x\",\"id\":true}", ":2: id field \"id\": expected a string or a number"},
  };
  for (const Case& c : cases) {
    ReadOptions o = strict;
    if (std::string(c.expect).find("id field") != std::string::npos) o.id_field = "id";
    const std::string p =
        Put("s.jsonl", std::string("{\"text\":\"ok\",\"id\":1}\n") + c.line2 + "\n{\"text\":\"z\"}\n");
    const auto r = ReadAll(p, o);
    INFO(c.line2);
    CHECK(r.status.code() == StatusCode::kBadInput);
    CHECK_THAT(r.status.message(), Catch::StartsWith(p + c.expect));
    CHECK(r.records.size() == 1);
  }
  // A line over the limit, under strict.
  ReadOptions small = strict;
  small.max_record_bytes = 30;
  const std::string p = Put("long.jsonl", "{\"text\":\"ok\"}\n{\"text\":\"" +
                                              std::string(100, 'x') + "\"}\n");
  const auto r = ReadAll(p, small);
  CHECK(r.status.code() == StatusCode::kBadInput);
  CHECK_THAT(r.status.message(), Catch::StartsWith(p + ":2: line too long (111 bytes, limit 30)"));

  // Empty lines and invalid UTF-8 are counted, never errors, even under strict.
  const std::string q = Put("blank.jsonl", "\n{\"text\":\"a\xFFz\"}\n\n");
  const auto b = ReadAll(q, strict);
  CHECK(b.status.ok());
  CHECK(b.records.size() == 1);
  CHECK(Count(b.skips, SkipReason::kEmptyLine) == 2);
  CHECK(Count(b.skips, SkipReason::kInvalidUtf8) == 1);
}

TEST_CASE("jsonl: invalid UTF-8 is repaired with U+FFFD and counted, record kept",
          "[read][jsonl]") {
  // \xFF never occurs in UTF-8; \xC3 must be followed by a continuation byte
  // (RFC 3629 section 4); \xED\xA0\x80 would be a UTF-16 surrogate.
  const std::string p = Put("u.jsonl",
                            "{\"text\":\"caf\xC3\xA9 ok\"}\n"
                            "{\"text\":\"bad \xFF byte\"}\n"
                            "{\"text\":\"lone \xC3 lead\"}\n"
                            "{\"text\":\"sur\xED\xA0\x80rogate\"}\n");
  const auto r = ReadAll(p);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 4);
  CHECK(r.records[0].text == "caf\xC3\xA9 ok");
  CHECK(r.records[1].text == "bad \xEF\xBF\xBD byte");
  CHECK(r.records[2].text == "lone \xEF\xBF\xBD lead");
  CHECK(r.records[3].text == "sur\xEF\xBF\xBD\xEF\xBF\xBD\xEF\xBF\xBDrogate");
  CHECK(Count(r.skips, SkipReason::kInvalidUtf8) == 3);
  CHECK(r.skips.dropped() == 0);
  CHECK_THAT(r.skips.examples[0],
             Catch::StartsWith(p + ":2: invalid UTF-8 (1 bytes replaced by U+FFFD)"));
  // Python's decoder (errors="replace") agrees on these single-byte cases.
  int rc = 0;
  const std::string py = testing::RunCommand(
      "/usr/bin/python3 -c \"import sys; sys.stdout.buffer.write(b'bad \\xff byte|lone \\xc3 "
      "lead'.decode('utf-8','replace').encode())\"",
      &rc);
  REQUIRE(rc == 0);
  CHECK(py == r.records[1].text + "|" + r.records[2].text);
}

TEST_CASE("jsonl: UTF-8 BOM, CRLF line ends, empty file", "[read][jsonl]") {
  const std::string p = Put("bom.jsonl", "\xEF\xBB\xBF{\"text\":\"first\"}\r\n{\"text\":\"second\"}\r\n");
  const auto r = ReadAll(p);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 2);
  CHECK(r.records[0].text == "first");
  CHECK(r.records[0].byte_offset == 3);  // offsets count the BOM's bytes
  CHECK(r.records[1].text == "second");
  CHECK(r.records[1].byte_offset == 3 + 18);
  CHECK(r.skips.total() == 0);

  const auto e = ReadAll(Put("empty.jsonl", ""));
  CHECK(e.status.ok());
  CHECK(e.records.empty());
  CHECK(e.skips.total() == 0);
  const auto only_bom = ReadAll(Put("bomonly.jsonl", "\xEF\xBB\xBF"));
  CHECK(only_bom.status.ok());
  CHECK(only_bom.records.empty());
}

TEST_CASE("jsonl: line numbers and byte offsets agree with grep -bn", "[read][jsonl]") {
  std::string s;
  for (int i = 1; i <= 3000; ++i) {
    if (i % 97 == 0) {
      s += "\n";
      continue;
    }
    s += "{\"text\":\"record " + std::to_string(i) + " \\u00e9 " + std::string(i % 50, 'w') +
         "\"}" + (i % 5 == 0 ? "\r\n" : "\n");
  }
  const std::string p = Put("offs.jsonl", s);
  int rc = 0;
  // grep -b prints the byte offset of each matching line, -n its number.
  const std::string grep = testing::RunCommand("grep -bn '^{' " + p, &rc);
  REQUIRE(rc == 0);
  std::istringstream in(grep);
  std::vector<std::pair<uint64_t, uint64_t>> expect;  // line, offset
  std::string line;
  while (std::getline(in, line)) {
    const size_t a = line.find(':');
    const size_t b = line.find(':', a + 1);
    expect.emplace_back(std::stoull(line.substr(0, a)), std::stoull(line.substr(a + 1, b - a - 1)));
  }
  for (const size_t block : {size_t{4} << 20, size_t{1000}, size_t{1}}) {
    // RecordReader uses 4 MiB blocks; smaller blocks through BlockReader directly.
    auto br = BlockReader::Open(p, {}, block);
    REQUIRE(br.ok());
    BlockParser parser(ReadOptions{});
    LineBlock b;
    std::vector<std::pair<uint64_t, uint64_t>> got;
    std::string joined;
    while (true) {
      auto more = (*br)->Next(&b);
      REQUIRE(more.ok());
      if (!*more) break;
      CHECK(b.byte_offset == joined.size());
      joined += b.data;
      parser.Reset(&b);
      Record r;
      while (true) {
        auto m = parser.Next(&r);
        REQUIRE(m.ok());
        if (!*m) break;
        got.emplace_back(r.line, r.byte_offset);
        CHECK(r.record_number == r.line);
        CHECK(r.text.substr(0, 7) == "record ");
      }
    }
    INFO("block size " << block);
    CHECK(joined == s);
    CHECK(got == expect);
    CHECK(Count(parser.skips(), SkipReason::kEmptyLine) == 3000 / 97);
  }
}

TEST_CASE("jsonl: a line over the limit is skipped without being buffered", "[read][jsonl]") {
  ReadOptions o;
  o.max_record_bytes = 1 << 20;
  std::string s = "{\"text\":\"before\"}\n{\"text\":\"";
  s.append(20u << 20, 'y');  // 20 MiB line
  s += "\"}\n{\"text\":\"after\"}\n";
  s += "{\"text\":\"" + std::string((1 << 20) - 11, 'z') + "\"}\n";  // exactly at the limit
  const std::string p = Put("huge.jsonl", s);
  auto br = BlockReader::Open(p, o, 64 << 10);
  REQUIRE(br.ok());
  LineBlock b;
  size_t max_capacity = 0;
  uint64_t lines = 0;
  while (true) {
    auto more = (*br)->Next(&b);
    REQUIRE(more.ok());
    if (!*more) break;
    max_capacity = std::max(max_capacity, b.data.capacity());
    if (lines == 0) CHECK(b.first_line == 1);
    lines += static_cast<uint64_t>(std::count(b.data.begin(), b.data.end(), '\n'));
    if (b.data.find("after") != std::string::npos) {
      CHECK(b.first_line == 3);
      CHECK(b.byte_offset == 18 + 9 + (20u << 20) + 3);
    }
  }
  CHECK(lines == 3);  // lines 1, 3, 4; line 2 was cut out
  // Bounded by the block size plus the longest accepted line, not the 20 MiB line.
  CHECK(max_capacity < (3u << 20));
  CHECK(Count((*br)->skips(), SkipReason::kLineTooLong) == 1);
  CHECK_THAT((*br)->skips().examples[0],
             Catch::StartsWith(p + ":2: line too long (" + std::to_string((20u << 20) + 11) +
                               " bytes, limit 1048576): '{\"text\":\"yyy"));

  const auto r = ReadAll(p, o);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 3);
  CHECK(r.records[1].text == "after");
  CHECK(r.records[1].line == 3);
  CHECK(r.records[2].line == 4);
  CHECK(Count(r.skips, SkipReason::kLineTooLong) == 1);

  // The long line is the last one and has no newline.
  const auto t = ReadAll(Put("tail.jsonl", "{\"text\":\"a\"}\n" + std::string(3 << 20, 'q')), o);
  CHECK(t.status.ok());
  CHECK(t.records.size() == 1);
  CHECK(Count(t.skips, SkipReason::kLineTooLong) == 1);
}

TEST_CASE("jsonl: JSON Pointer fields, RFC 6901 section 5 examples", "[read][jsonl]") {
  // The example document of RFC 6901 section 5, on one line, with a "text" member
  // added. Each pointer of the RFC's table is used as the id field and must resolve
  // to the value the RFC gives.
  const std::string doc =
      R"({"foo": ["bar", "baz"], "": 0, "a/b": 1, "c%d": 2, "e^f": 3, "g|h": 4, )"
      R"("i\\j": 5, "k\"l": 6, " ": 7, "m~n": 8, "text": "t"})";
  const std::string p = Put("rfc6901.jsonl", doc + "\n");
  const std::pair<const char*, const char*> table[] = {
      {"/", "0"},     {"/a~1b", "1"}, {"/c%d", "2"},  {"/e^f", "3"}, {"/g|h", "4"},
      {"/i\\j", "5"}, {"/k\"l", "6"}, {"/ ", "7"},    {"/m~0n", "8"}, {"/foo/0", "bar"},
      {"/foo/1", "baz"}};
  for (const auto& [pointer, value] : table) {
    ReadOptions o;
    o.id_field = pointer;
    const auto r = ReadAll(p, o);
    INFO(pointer);
    REQUIRE(r.status.ok());
    REQUIRE(r.records.size() == 1);
    CHECK(r.records[0].id == value);
  }
  // "/foo" is the array ["bar", "baz"]: as a text field it is joined.
  ReadOptions o;
  o.fields = {"/foo", "text"};
  o.array_joiner = " | ";
  o.field_joiner = " // ";
  const auto r = ReadAll(p, o);
  REQUIRE(r.records.size() == 1);
  CHECK(r.records[0].fields == std::vector<std::string>{"bar | baz", "t"});
  CHECK(r.records[0].text == "bar | baz // t");
  // A plain key with a slash is a key, not a pointer.
  o.fields = {"a/b"};
  CHECK(ReadAll(p, o).skips.counts[static_cast<size_t>(SkipReason::kNotString)] == 1);
  // "~2" is not an RFC 6901 escape.
  o.fields = {"/m~2n"};
  const auto bad = ReadAll(p, o);
  CHECK(bad.status.code() == StatusCode::kInvalidArgument);
  CHECK_THAT(bad.status.message(), Catch::Contains("RFC 6901"));
}

TEST_CASE("jsonl: nested pointers, arrays of strings, numeric ids, missing fields",
          "[read][jsonl]") {
  const std::string p = Put("nested.jsonl",
                            R"({"id": 17, "q": {"stem": "What?", "choices": ["A", "B", "C"]}})" "\n"
                            R"({"id": "x-2", "q": {"stem": "Why?", "choices": []}})" "\n"
                            R"({"id": 3.5, "q": {"stem": "Who?"}})" "\n"
                            R"({"id": 18446744073709551615, "q": {"stem": "How?", "choices": ["D"]}})" "\n");
  ReadOptions o;
  o.fields = {"/q/stem", "/q/choices"};
  o.id_field = "id";
  o.field_joiner = "\n";
  o.array_joiner = "; ";
  auto r = ReadAll(p, o);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 3);
  CHECK(r.records[0].id == "17");
  CHECK(r.records[0].text == "What?\nA; B; C");
  CHECK(r.records[1].id == "x-2");
  CHECK(r.records[1].text == "Why?\n");
  CHECK(r.records[2].id == "18446744073709551615");
  CHECK(Count(r.skips, SkipReason::kMissingField) == 1);
  CHECK_THAT(r.skips.examples[0], Catch::Contains(":3: missing field \"/q/choices\""));

  o.allow_missing_fields = true;
  r = ReadAll(p, o);
  REQUIRE(r.records.size() == 4);
  CHECK(r.records[2].id == "3.5");
  CHECK(r.records[2].text == "Who?\n");
  CHECK(r.records[2].fields[1].empty());
}

TEST_CASE("jsonl: missing, unreadable and directory paths are errors naming the path",
          "[read][jsonl]") {
  const std::string dir = testing::ScratchDir("unreadable");
  const auto missing = ReadAll(dir + "/nope.jsonl");
  CHECK(missing.status.code() == StatusCode::kNotFound);
  CHECK_THAT(missing.status.message(), Catch::Contains(dir + "/nope.jsonl"));

  const auto is_dir = ReadAll(dir);
  CHECK(is_dir.status.code() != StatusCode::kOk);
  CHECK_THAT(is_dir.status.message(), Catch::Contains(dir));
  ReadOptions o;
  o.format = InputFormat::kJsonl;
  const auto is_dir2 = ReadAll(dir, o);
  CHECK(is_dir2.status.code() == StatusCode::kIOError);
  CHECK_THAT(is_dir2.status.message(), Catch::Contains(dir + ": is a directory"));

  // chmod 000 stops reads only for a non-root user; as root (CI containers) the
  // file stays readable, and the directory case above stands in for it.
  const std::string locked = dir + "/locked.jsonl";
  WriteFile(locked, "{\"text\":\"a\"}\n");
  REQUIRE(::chmod(locked.c_str(), 0) == 0);
  const auto r = ReadAll(locked);
  if (::geteuid() != 0) {
    CHECK(r.status.code() == StatusCode::kIOError);
    CHECK_THAT(r.status.message(), Catch::Contains(locked + ": cannot open: Permission denied"));
  } else {
    CHECK(r.status.ok());
    WARN("running as root: chmod 000 does not stop reads; directory path used instead");
  }
  ::chmod(locked.c_str(), 0644);
}

TEST_CASE("jsonl: real text round-trips through Python's json encoder", "[read][jsonl]") {
  // GPL-3 (base-files) line by line, encoded by Python's json module both with
  // ASCII escapes (\uXXXX) and raw UTF-8; the reader must give back each line.
  const std::string gpl = "/usr/share/common-licenses/GPL-3";
  REQUIRE(testing::PathExists(gpl));
  const std::string dir = testing::ScratchDir("pyjson");
  const std::string script = dir + "/enc.py";
  WriteFile(script,
            "import json, sys\n"
            "src, out, ascii_ = sys.argv[1], sys.argv[2], sys.argv[3] == '1'\n"
            "with open(src, encoding='utf-8') as f, open(out, 'w', encoding='utf-8') as o:\n"
            "    for i, line in enumerate(f):\n"
            "        o.write(json.dumps({'id': i, 'meta': {'n': i}, 'text': line.rstrip('\\n') +"
            " ' \\u00e9\\u4e2d\\U0001F600'}, ensure_ascii=ascii_) + '\\n')\n");
  std::vector<std::string> want;
  {
    std::ifstream in(gpl);
    std::string line;
    while (std::getline(in, line)) want.push_back(line + " \xC3\xA9\xE4\xB8\xAD\xF0\x9F\x98\x80");
  }
  for (const char* ascii : {"1", "0"}) {
    const std::string out = dir + "/gpl" + ascii + ".jsonl";
    int rc = 0;
    testing::RunCommand("/usr/bin/python3 " + script + " " + gpl + " " + out + " " + ascii, &rc);
    REQUIRE(rc == 0);
    ReadOptions o;
    o.id_field = "/meta/n";
    const auto r = ReadAll(out, o);
    REQUIRE(r.status.ok());
    REQUIRE(r.records.size() == want.size());
    for (size_t i = 0; i < want.size(); ++i) {
      INFO("line " << i + 1);
      REQUIRE(r.records[i].text == want[i]);
      REQUIRE(r.records[i].id == std::to_string(i));
    }
  }
}

}  // namespace
}  // namespace tidemark
