// CSV (RFC 4180): the examples of RFC 4180 section 2, cross-checked against
// Python's csv module, plus the malformed-row classes.
#include <catch2/catch.hpp>

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
  const std::string path = testing::ScratchDir("csv") + "/" + name;
  WriteFile(path, contents);
  return path;
}

TEST_CASE("csv: RFC 4180 section 2 examples", "[read][csv]") {
  // Rules 1-7 of RFC 4180 section 2: CRLF row ends, an optional final line break,
  // a header row, quoted fields, quoted line breaks/commas, "" for a quote.
  const std::string p = Put("rfc.csv",
                            "field_name,text,extra\r\n"      // rule 3 (header)
                            "aaa,bbb,ccc\r\n"                // rule 1
                            "\"aaa\",\"bbb\",\"ccc\"\r\n"    // rule 5
                            "\"aaa\",\"b\r\nbb\",\"ccc\"\r\n"  // rule 6: quoted CRLF
                            "zzz,\"b,b\",xxx\r\n"            // rule 6: quoted comma
                            "\"aaa\",\"b\"\"bb\",\"ccc\"\r\n"  // rule 7
                            "zzz,yyy,xxx");                  // rule 2: no final line break
  ReadOptions o;
  o.id_field = "field_name";
  const auto r = ReadAll(p, o);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 6);
  CHECK(r.records[0].text == "bbb");
  CHECK(r.records[0].id == "aaa");
  CHECK(r.records[1].text == "bbb");
  CHECK(r.records[2].text == "b\r\nbb");
  CHECK(r.records[3].text == "b,b");
  CHECK(r.records[4].text == "b\"bb");
  CHECK(r.records[5].text == "yyy");
  // Line numbers: a row starts on the line after the previous row's end.
  CHECK(r.records[0].line == 2);
  CHECK(r.records[2].line == 4);
  CHECK(r.records[3].line == 6);
  CHECK(r.records[5].line == 8);
  CHECK(r.records[0].byte_offset == 23);
  CHECK(r.records[0].record_number == 1);
  CHECK(r.skips.total() == 0);

  // Python's csv module reads the same fields.
  const std::string script = p + ".py";
  WriteFile(script,
            "import csv, sys\n"
            "with open(sys.argv[1], newline='', encoding='utf-8') as f:\n"
            "    for row in csv.DictReader(f):\n"
            "        sys.stdout.write(row['text'].replace('\\r', '<CR>').replace('\\n', '<LF>') + '\\n')\n");
  int rc = 0;
  const std::string py = testing::RunCommand("/usr/bin/python3 " + script + " " + p, &rc);
  REQUIRE(rc == 0);
  std::string ours;
  for (const auto& rec : r.records) {
    std::string t = rec.text;
    std::string esc;
    for (char c : t) esc += c == '\r' ? "<CR>" : c == '\n' ? "<LF>" : std::string(1, c);
    ours += esc + "\n";
  }
  CHECK(ours == py);
}

TEST_CASE("csv: several fields, BOM, LF ends, empty lines, invalid UTF-8", "[read][csv]") {
  const std::string p = Put("multi.csv",
                            "\xEF\xBB\xBFid,question,answer\n"
                            "q1,What is 2+2?,four\n"
                            "\n"
                            "q2,\"Say \"\"hi\"\"\",\"hi\"\n"
                            "q3,bad \xFF byte,x\n");
  ReadOptions o;
  o.fields = {"question", "answer"};
  o.field_joiner = " || ";
  o.id_field = "id";
  const auto r = ReadAll(p, o);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 3);
  CHECK(r.records[0].text == "What is 2+2? || four");
  CHECK(r.records[0].fields == std::vector<std::string>{"What is 2+2?", "four"});
  CHECK(r.records[1].text == "Say \"hi\" || hi");
  CHECK(r.records[1].id == "q2");
  CHECK(r.records[1].line == 4);
  CHECK(r.records[1].record_number == 3);  // the empty line counts as a record
  CHECK(r.records[2].text == "bad \xFF byte || x");  // kept as is: the tokenizer repairs
  CHECK(Count(r.skips, SkipReason::kEmptyLine) == 1);
  CHECK(Count(r.skips, SkipReason::kInvalidUtf8) == 1);
}

TEST_CASE("csv: malformed rows are kBadCsvRow skips, errors with strict", "[read][csv]") {
  const std::string p = Put("bad.csv",
                            "a,text\n"
                            "1,fine\n"
                            "2,too,many\n"            // 3: wrong field count
                            "3\n"                     // 4: too few
                            "4,bro\"ken\n"            // 5: quote in unquoted field
                            "5,\"closed\"junk\n"      // 6: text after closing quote
                            "6,ok again\n"            // 7
                            "7,\"never closed\n8,x\n");  // 8: unterminated to EOF
  const auto r = ReadAll(p);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 2);
  CHECK(r.records[1].text == "ok again");
  CHECK(r.records[1].line == 7);
  CHECK(Count(r.skips, SkipReason::kBadCsvRow) == 5);
  REQUIRE(r.skips.examples.size() == 5);
  CHECK(r.skips.examples[0] == p + ":3: bad CSV row: expected 2 fields, got 3: '2,too,many'");
  CHECK_THAT(r.skips.examples[1], Catch::Contains(":4: bad CSV row: expected 2 fields, got 1"));
  CHECK_THAT(r.skips.examples[2], Catch::Contains(":5: bad CSV row: quote inside an unquoted field"));
  CHECK_THAT(r.skips.examples[3], Catch::Contains(":6: bad CSV row: text after a closing quote"));
  CHECK_THAT(r.skips.examples[4], Catch::Contains(":8: bad CSV row: quoted field not closed"));

  ReadOptions strict;
  strict.strict = true;
  const auto s = ReadAll(p, strict);
  CHECK(s.status.code() == StatusCode::kBadInput);
  CHECK_THAT(s.status.message(), Catch::StartsWith(p + ":3: bad CSV row"));

  ReadOptions small;
  small.max_record_bytes = 10;
  const auto l = ReadAll(Put("long.csv", "a,text\n1,\"" + std::string(50, 'x') + "\n\"\n2,y\n"),
                         small);
  REQUIRE(l.status.ok());
  REQUIRE(l.records.size() == 1);
  CHECK(l.records[0].text == "y");
  CHECK(l.records[0].line == 4);
  CHECK(Count(l.skips, SkipReason::kLineTooLong) == 1);
}

TEST_CASE("csv: a missing column is an error naming the header", "[read][csv]") {
  const std::string p = Put("cols.csv", "id,body\n1,x\n");
  const auto r = ReadAll(p);
  CHECK(r.status.code() == StatusCode::kBadInput);
  CHECK(r.status.message() == p + ":1: no column \"text\" in the CSV header (columns: id, body)");
  ReadOptions o;
  o.allow_missing_fields = true;
  const auto m = ReadAll(p, o);
  REQUIRE(m.records.size() == 1);
  CHECK(m.records[0].text.empty());
  const auto e = ReadAll(Put("empty.csv", ""));
  CHECK(e.status.ok());
  CHECK(e.records.empty());
}

}  // namespace
}  // namespace tidemark
