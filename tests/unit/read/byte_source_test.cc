// Compressed inputs: zstd (RFC 8878) and gzip (RFC 1952) streams made at test time
// with the Debian zstd/gzip command-line tools and with libzstd/zlib, read back and
// compared with what `zstd -dc` / `zcat` print.
#include <catch2/catch.hpp>
#include <unistd.h>
#include <zlib.h>
#include <zstd.h>

#include <string>

#include "read/byte_source.h"
#include "read_test_util.h"
#include "test_util.h"

namespace tidemark {
namespace {

using testing::ReadAll;
using testing::RunCommand;
using testing::WriteFile;

std::string Run(const std::string& cmd) {
  int rc = -1;
  std::string out = RunCommand(cmd, &rc);
  INFO(cmd);
  REQUIRE(rc == 0);
  return out;
}

std::string Decode(const std::string& path, Compression c = Compression::kAuto) {
  auto src = OpenByteSource(path, c);
  REQUIRE(src.ok());
  std::string out;
  char buf[7919];  // odd size: decoded chunks do not line up with frames
  while (true) {
    auto n = (*src)->Read(buf, sizeof(buf));
    REQUIRE(n.ok());
    if (*n == 0) break;
    out.append(buf, *n);
  }
  return out;
}

Status DecodeError(const std::string& path, Compression c = Compression::kAuto) {
  auto src = OpenByteSource(path, c);
  if (!src.ok()) return src.status();
  char buf[65536];
  while (true) {
    auto n = (*src)->Read(buf, sizeof(buf));
    if (!n.ok()) return n.status();
    if (*n == 0) return Status::Ok();
  }
}

std::string Lines(int from, int to) {
  std::string s;
  for (int i = from; i <= to; ++i) {
    s += "{\"text\": \"line " + std::to_string(i) + " of the sample\"}\n";
  }
  return s;
}

std::string ZstdFrame(const std::string& data, int level = 3) {
  std::string out(ZSTD_compressBound(data.size()), '\0');
  const size_t n = ZSTD_compress(out.data(), out.size(), data.data(), data.size(), level);
  REQUIRE_FALSE(ZSTD_isError(n));
  out.resize(n);
  return out;
}

// A skippable frame by hand (RFC 8878 section 3.1.2): a little-endian magic
// 0x184D2A50 + variant (0..15), a little-endian 4-byte size, then the user data.
std::string SkippableFrame(unsigned variant, const std::string& payload) {
  std::string f;
  const uint32_t magic = 0x184D2A50u + variant;
  const uint32_t size = static_cast<uint32_t>(payload.size());
  for (int i = 0; i < 4; ++i) f.push_back(static_cast<char>((magic >> (8 * i)) & 0xFF));
  for (int i = 0; i < 4; ++i) f.push_back(static_cast<char>((size >> (8 * i)) & 0xFF));
  return f + payload;
}

std::string GzipMember(const std::string& data) {
  z_stream s{};
  REQUIRE(deflateInit2(&s, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) == Z_OK);
  std::string out(deflateBound(&s, data.size()) + 64, '\0');
  s.next_in = reinterpret_cast<Bytef*>(const_cast<char*>(data.data()));
  s.avail_in = static_cast<uInt>(data.size());
  s.next_out = reinterpret_cast<Bytef*>(out.data());
  s.avail_out = static_cast<uInt>(out.size());
  REQUIRE(deflate(&s, Z_FINISH) == Z_STREAM_END);
  out.resize(s.total_out);
  deflateEnd(&s);
  return out;
}

TEST_CASE("zstd: several frames made by the zstd CLI decode as one stream", "[read][zstd]") {
  const std::string dir = testing::ScratchDir("zstd_cli");
  WriteFile(dir + "/a.jsonl", Lines(1, 500));
  WriteFile(dir + "/b.jsonl", Lines(501, 700));
  const std::string f = dir + "/two.jsonl.zst";
  Run("zstd -q -c " + dir + "/a.jsonl > " + f + " && zstd -q -c " + dir + "/b.jsonl >> " + f);
  const std::string cli = Run("zstd -dc " + f);
  CHECK(cli == Lines(1, 700));
  CHECK(Decode(f) == cli);
  const auto r = ReadAll(f);
  REQUIRE(r.status.ok());
  REQUIRE(r.records.size() == 700);
  CHECK(r.records[500].text == "line 501 of the sample");
  CHECK(r.records[500].line == 501);
}

TEST_CASE("zstd: skippable frames are skipped (libzstd frames + RFC 8878 skippable frames)",
          "[read][zstd]") {
  const std::string dir = testing::ScratchDir("zstd_skip");
  const std::string bytes = SkippableFrame(0, "hello") + ZstdFrame(Lines(1, 40)) +
                            SkippableFrame(15, std::string(1000, 'x')) +
                            ZstdFrame(Lines(41, 90), 19) + SkippableFrame(7, "");
  const std::string f = dir + "/skip.jsonl.zst";
  WriteFile(f, bytes);
  // The zstd CLI agrees on the content.
  CHECK(Run("zstd -dc " + f) == Lines(1, 90));
  CHECK(Decode(f) == Lines(1, 90));
  const auto r = ReadAll(f);
  REQUIRE(r.status.ok());
  CHECK(r.records.size() == 90);

  // Without a .zst name, the magic bytes still say zstd (both the skippable-frame
  // magic and the frame magic).
  WriteFile(dir + "/plainname.jsonl", bytes);
  CHECK(ReadAll(dir + "/plainname.jsonl").records.size() == 90);
  WriteFile(dir + "/plainname2.jsonl", ZstdFrame(Lines(1, 3)));
  CHECK(ReadAll(dir + "/plainname2.jsonl").records.size() == 3);
  auto det = DetectFormat(dir + "/plainname.jsonl", {});
  REQUIRE(det.ok());
  CHECK(det->compression == Compression::kZstd);
  CHECK(det->format == InputFormat::kJsonl);
}

TEST_CASE("zstd: a truncated stream is an error naming file and offset", "[read][zstd]") {
  const std::string dir = testing::ScratchDir("zstd_trunc");
  std::string big;
  for (int i = 0; i < 300; ++i) big += Lines(i * 1000, i * 1000 + 999);
  WriteFile(dir + "/big.jsonl", big);
  const std::string f = dir + "/big.jsonl.zst";
  Run("zstd -q -c " + dir + "/big.jsonl > " + f);
  const std::string full = testing::ReadFile(f);
  const size_t cut = full.size() / 2;
  WriteFile(f, full.substr(0, cut));
  int rc = 0;
  RunCommand("zstd -t -q " + f + " 2>/dev/null", &rc);
  CHECK(rc != 0);  // the zstd CLI also refuses it
  const Status s = DecodeError(f);
  CHECK(s.code() == StatusCode::kBadInput);
  CHECK_THAT(s.message(), Catch::Contains(f + "@" + std::to_string(cut)));
  CHECK_THAT(s.message(), Catch::Contains("premature end"));
  // The record reader fails the same way, after handing out the whole lines before.
  const auto r = ReadAll(f);
  CHECK(r.status.code() == StatusCode::kBadInput);
  CHECK_THAT(r.status.message(), Catch::Contains("premature end"));
  CHECK(r.records.size() > 0);
  CHECK(r.records.size() < 300000);  // whole 4 MiB blocks before the cut

  // Cut inside the frame header (4 bytes of magic only).
  WriteFile(dir + "/head.jsonl.zst", full.substr(0, 4));
  CHECK_THAT(DecodeError(dir + "/head.jsonl.zst").message(), Catch::Contains("premature end"));
}

TEST_CASE("zstd: a flipped byte is reported as corrupt data", "[read][zstd]") {
  const std::string dir = testing::ScratchDir("zstd_flip");
  WriteFile(dir + "/a.jsonl", Lines(1, 20000));
  const std::string f = dir + "/a.jsonl.zst";
  Run("zstd -q -c " + dir + "/a.jsonl > " + f);  // the CLI adds a content checksum
  std::string bytes = testing::ReadFile(f);
  bytes[bytes.size() / 2] = static_cast<char>(bytes[bytes.size() / 2] ^ 0x5A);
  WriteFile(f, bytes);
  const Status s = DecodeError(f);
  CHECK(s.code() == StatusCode::kBadInput);
  CHECK_THAT(s.message(), Catch::Contains(f + "@"));
  CHECK_THAT(s.message(), Catch::Contains("corrupt zstd data"));
}

TEST_CASE("zstd: a file named .zst that is not zstd is refused", "[read][zstd]") {
  const std::string dir = testing::ScratchDir("zstd_fake");
  const std::string f = dir + "/fake.jsonl.zst";
  WriteFile(f, Lines(1, 3));
  const auto r = ReadAll(f);
  CHECK(r.status.code() == StatusCode::kBadInput);
  CHECK_THAT(r.status.message(), Catch::Contains(f + "@0: not a zstd stream"));
  // A gzip file named .zst is not zstd either.
  WriteFile(f, GzipMember(Lines(1, 3)));
  CHECK_THAT(ReadAll(f).status.message(), Catch::Contains("not a zstd stream"));
}

TEST_CASE("gzip: multi-member files (gzip CLI and zlib) decode as one stream", "[read][gzip]") {
  const std::string dir = testing::ScratchDir("gzip_multi");
  WriteFile(dir + "/a.jsonl", Lines(1, 300));
  WriteFile(dir + "/b.jsonl", Lines(301, 310));
  const std::string f = dir + "/two.jsonl.gz";
  Run("gzip -c " + dir + "/a.jsonl > " + f + " && gzip -c " + dir + "/b.jsonl >> " + f);
  const std::string cli = Run("zcat " + f);
  CHECK(cli == Lines(1, 310));
  CHECK(Decode(f) == cli);
  CHECK(ReadAll(f).records.size() == 310);

  const std::string g = dir + "/zlib.jsonl.gz";
  WriteFile(g, GzipMember(Lines(1, 5)) + GzipMember("") + GzipMember(Lines(6, 9)));
  CHECK(Run("zcat " + g) == Lines(1, 9));
  CHECK(Decode(g) == Lines(1, 9));

  // Without the .gz name the magic bytes 1F 8B decide.
  WriteFile(dir + "/plain.jsonl", GzipMember(Lines(1, 4)));
  CHECK(ReadAll(dir + "/plain.jsonl").records.size() == 4);
}

TEST_CASE("gzip: truncated and fake .gz files are errors", "[read][gzip]") {
  const std::string dir = testing::ScratchDir("gzip_bad");
  WriteFile(dir + "/a.jsonl", Lines(1, 20000));
  const std::string f = dir + "/a.jsonl.gz";
  Run("gzip -c " + dir + "/a.jsonl > " + f);
  const std::string full = testing::ReadFile(f);
  const size_t cut = full.size() - 100;
  WriteFile(f, full.substr(0, cut));
  int rc = 0;
  RunCommand("gzip -t " + f + " 2>/dev/null", &rc);
  CHECK(rc != 0);  // gzip agrees the file is damaged
  const Status s = DecodeError(f);
  CHECK(s.code() == StatusCode::kBadInput);
  CHECK_THAT(s.message(), Catch::Contains(f + "@" + std::to_string(cut)));
  CHECK_THAT(s.message(), Catch::Contains("premature end of gzip stream"));

  const std::string g = dir + "/fake.jsonl.gz";
  WriteFile(g, Lines(1, 2));
  CHECK_THAT(ReadAll(g).status.message(), Catch::Contains(g + "@0: not a gzip stream"));
}

TEST_CASE("empty compressed-named files are empty inputs", "[read]") {
  const std::string dir = testing::ScratchDir("empty_comp");
  for (const char* name : {"e.jsonl.zst", "e.jsonl.gz", "e.jsonl"}) {
    WriteFile(dir + "/" + name, "");
    const auto r = ReadAll(dir + "/" + name);
    INFO(name);
    CHECK(r.status.ok());
    CHECK(r.records.empty());
    CHECK(r.skips.total() == 0);
  }
}

TEST_CASE("disk_checksum: XXH3-64 of the bytes on disk once all were read, as xxhsum -H3",
          "[read][checksum]") {
  // Reference: `xxhsum -H3` of Debian's xxhash package on the same files.
  const std::string dir = testing::ScratchDir("disk_checksum");
  std::string text;
  for (int i = 0; i < 40; ++i) text += Lines(1 + 1000 * i, 1000 * i + 900);  // ~1.7 MB
  WriteFile(dir + "/plain.jsonl", text);
  Run("zstd -q -c " + dir + "/plain.jsonl > " + dir + "/z.jsonl.zst");
  Run("gzip -c " + dir + "/plain.jsonl > " + dir + "/g.jsonl.gz");
  WriteFile(dir + "/empty.jsonl", "");
  for (const std::string name : {"plain.jsonl", "z.jsonl.zst", "g.jsonl.gz", "empty.jsonl"}) {
    const std::string path = dir + "/" + name;
    INFO(path);
    auto src = OpenByteSource(path, Compression::kAuto);
    REQUIRE(src.ok());
    std::string buf(1 << 16, '\0');
    // Not before the end: a checksum of a prefix would pass for the file's. (The
    // compressed files here fit in one disk read, so theirs is known at once.)
    if (name == std::string("plain.jsonl")) {
      auto n = (*src)->Read(buf.data(), buf.size());
      REQUIRE(n.ok());
      CHECK(*n > 0);
      CHECK_FALSE((*src)->disk_checksum().has_value());
    }
    while (true) {
      auto n = (*src)->Read(buf.data(), buf.size());
      REQUIRE(n.ok());
      if (*n == 0) break;
    }
    REQUIRE((*src)->disk_checksum().has_value());
    CHECK(*(*src)->disk_checksum() == testing::XxhsumH3(path));
  }
  // A block reader and a record reader hand on the same value at their end.
  auto blocks = BlockReader::Open(dir + "/z.jsonl.zst", ReadOptions{});
  REQUIRE(blocks.ok());
  LineBlock b;
  while (true) {
    auto more = (*blocks)->Next(&b);
    REQUIRE(more.ok());
    if (!*more) break;
  }
  REQUIRE((*blocks)->disk_checksum().has_value());
  CHECK(*(*blocks)->disk_checksum() == testing::XxhsumH3(dir + "/z.jsonl.zst"));
  auto records = RecordReader::Open(dir + "/g.jsonl.gz", ReadOptions{});
  REQUIRE(records.ok());
  Record r;
  while (true) {
    auto more = (*records)->Next(&r);
    REQUIRE(more.ok());
    if (!*more) break;
  }
  REQUIRE((*records)->disk_checksum().has_value());
  CHECK(*(*records)->disk_checksum() == testing::XxhsumH3(dir + "/g.jsonl.gz"));
}

}  // namespace
}  // namespace tidemark
