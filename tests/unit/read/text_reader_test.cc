// .txt inputs over real Debian text: GPL-3 (base-files) and the web2 word list
// (miscfiles), record counts compared with wc -l / grep -c / zcat | wc -l.
#include <catch2/catch.hpp>

#include <string>

#include "read_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

using testing::Count;
using testing::ReadAll;
using testing::RunCommand;

const char kGpl[] = "/usr/share/common-licenses/GPL-3";
const char kWeb2[] = "/usr/share/dict/web2";

uint64_t Number(const std::string& cmd) {
  int rc = 0;
  const std::string out = RunCommand(cmd, &rc);
  INFO(cmd);
  REQUIRE(rc == 0);
  return std::stoull(out);
}

TEST_CASE("text: GPL-3 as one document and one record a line, plain and gzip",
          "[read][text]") {
  REQUIRE(testing::PathExists(kGpl));
  const std::string dir = testing::ScratchDir("text");
  const std::string txt = dir + "/gpl3.txt";
  const std::string gz = dir + "/gpl3.txt.gz";
  const std::string zst = dir + "/gpl3.txt.zst";
  int rc = 0;
  RunCommand(std::string("cp ") + kGpl + " " + txt + " && gzip -c " + txt + " > " + gz +
                 " && zstd -q -c " + txt + " > " + zst,
             &rc);
  REQUIRE(rc == 0);

  const auto whole = ReadAll(txt);
  REQUIRE(whole.status.ok());
  REQUIRE(whole.records.size() == 1);
  CHECK(whole.records[0].text == testing::ReadFile(kGpl));

  const uint64_t lines = Number("wc -l < " + txt);
  const uint64_t nonblank = Number("grep -c -v '^[[:blank:]]*$' " + txt);
  CHECK(Number("zcat " + gz + " | wc -l") == lines);
  ReadOptions o;
  o.text_lines = true;
  for (const std::string& path : {txt, gz, zst}) {
    const auto r = ReadAll(path, o);
    INFO(path);
    REQUIRE(r.status.ok());
    CHECK(r.records.size() == nonblank);
    CHECK(r.records.size() + Count(r.skips, SkipReason::kEmptyLine) == lines);
    CHECK(r.records.front().text == "                    GNU GENERAL PUBLIC LICENSE");
    CHECK(r.records.front().line == 1);
    CHECK(r.records.back().line == lines);
  }
}

TEST_CASE("text: web2 word list through small blocks matches wc -l", "[read][text]") {
  REQUIRE(testing::PathExists(kWeb2));
  const std::string dir = testing::ScratchDir("web2");
  const std::string txt = dir + "/web2.txt";
  const std::string zst = dir + "/web2.txt.zst";
  int rc = 0;
  RunCommand(std::string("cp ") + kWeb2 + " " + txt + " && zstd -q -c " + txt + " > " + zst, &rc);
  REQUIRE(rc == 0);
  const uint64_t lines = Number("wc -l < " + txt);
  const std::string contents = testing::ReadFile(kWeb2);
  ReadOptions o;
  o.text_lines = true;
  for (const std::string& path : {txt, zst}) {
    auto br = BlockReader::Open(path, o, 100000);
    REQUIRE(br.ok());
    LineBlock b;
    std::string joined;
    uint64_t next_line = 1;
    uint64_t records = 0;
    BlockParser parser(o);
    while (true) {
      auto more = (*br)->Next(&b);
      REQUIRE(more.ok());
      if (!*more) break;
      CHECK(b.first_line == next_line);
      CHECK(b.byte_offset == joined.size());
      CHECK(b.data.back() == '\n');
      CHECK(b.format == InputFormat::kText);
      next_line += static_cast<uint64_t>(std::count(b.data.begin(), b.data.end(), '\n'));
      joined += b.data;
      parser.Reset(&b);
      Record r;
      while (true) {
        auto m = parser.Next(&r);
        REQUIRE(m.ok());
        if (!*m) break;
        ++records;
      }
    }
    INFO(path);
    CHECK(joined == contents);
    CHECK(next_line - 1 == lines);
    CHECK(records == lines);
    CHECK((*br)->disk_bytes_read() == (*br)->disk_bytes_total());
  }
}

TEST_CASE("text: BOM, CRLF, invalid UTF-8, empty and over-long documents", "[read][text]") {
  const std::string dir = testing::ScratchDir("textbad");
  testing::WriteFile(dir + "/bom.txt", "\xEF\xBB\xBFline one\r\nline \xFF two\r\n\r\n");
  ReadOptions lines;
  lines.text_lines = true;
  const auto r = ReadAll(dir + "/bom.txt", lines);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 2);
  CHECK(r.records[0].text == "line one");
  CHECK(r.records[0].byte_offset == 3);
  CHECK(r.records[1].text == "line \xFF two");  // kept: the tokenizer replaces the byte
  CHECK(Count(r.skips, SkipReason::kInvalidUtf8) == 1);
  CHECK(Count(r.skips, SkipReason::kEmptyLine) == 1);
  CHECK_THAT(r.skips.examples[0], Catch::StartsWith(dir + "/bom.txt:2: invalid UTF-8"));

  const auto whole = ReadAll(dir + "/bom.txt");
  REQUIRE(whole.records.size() == 1);
  CHECK(whole.records[0].text == "line one\r\nline \xFF two\r\n\r\n");
  CHECK(whole.records[0].byte_offset == 3);

  testing::WriteFile(dir + "/empty.txt", "");
  CHECK(ReadAll(dir + "/empty.txt").records.empty());

  ReadOptions small;
  small.max_record_bytes = 10;
  testing::WriteFile(dir + "/long.txt", std::string(100, 'a'));
  const auto l = ReadAll(dir + "/long.txt", small);
  CHECK(l.status.ok());
  CHECK(l.records.empty());
  CHECK(Count(l.skips, SkipReason::kLineTooLong) == 1);
  small.strict = true;
  CHECK(ReadAll(dir + "/long.txt", small).status.code() == StatusCode::kBadInput);
}

}  // namespace
}  // namespace tidemark
