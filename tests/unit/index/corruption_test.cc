// Damage to a shard file is always detected: a flipped byte in any section (or in the
// header, or in the padding) and any truncation make Open (which verifies checksums by
// default) or VerifyIndex fail with kCorruption naming the file; nothing is answered
// from a damaged shard. Pattern after LevelDB db/corruption_test.cc.
#include <catch2/catch.hpp>

#include <filesystem>
#include <fstream>

#include "index/format.h"
#include "index/manifest.h"
#include "index/shard_reader.h"
#include "index_test_util.h"
#include "test_util.h"
#include "tidemark/index.h"
#include "tidemark/index_builder.h"

namespace tidemark {
namespace {

namespace fmt = index_format;

std::string BuildSmall(const std::string& name) {
  // Counts above 254 so that the exception sections are not empty.
  auto docs = testing::MakeDocuments(21, 400, 40, 3000);
  const uint64_t hi = 1ull << 63;  // shard 1 of 2
  for (int i = 0; i < 300; ++i) docs.push_back({hi | 111, hi | 222, hi | 111, 333});
  const std::string dir = testing::ScratchDir(name) + "/idx";
  IndexBuildOptions o;
  o.shard_bits = 1;
  o.threads = 2;
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, docs, o, false, &st).ok());
  return dir;
}

void FlipByte(const std::string& path, uint64_t offset) {
  std::fstream f(path, std::ios::in | std::ios::out | std::ios::binary);
  f.seekg(static_cast<std::streamoff>(offset));
  char c;
  f.read(&c, 1);
  c = static_cast<char>(c ^ 0x10);
  f.seekp(static_cast<std::streamoff>(offset));
  f.write(&c, 1);
}

// Both detection paths: Open with checksums, and Open without + VerifyIndex.
void ExpectDetected(const std::string& dir, const std::string& file, const std::string& what) {
  INFO(what);
  auto idx = Index::Open(dir);
  REQUIRE(!idx.ok());
  // A flipped version field reads as another format version (kUnsupported), by design.
  const bool version_byte = what == "header byte 8";
  CHECK(idx.status().code() == (version_byte ? StatusCode::kUnsupported : StatusCode::kCorruption));
  CHECK(idx.status().message().find(file) != std::string::npos);
  CHECK(idx.status().message().find('@') != std::string::npos);
  IndexVerifyReport vr;
  Status v = VerifyIndex(dir, 2, &vr);
  CHECK(v.code() == (version_byte ? StatusCode::kUnsupported : StatusCode::kCorruption));
  CHECK(v.message().find(file) != std::string::npos);
}

TEST_CASE("a flipped byte in every section of a shard is detected", "[index][corruption]") {
  const std::string dir = BuildSmall("flip");
  const std::string shard = dir + "/seg-000001/shard-00001.tms";
  const std::string pristine = testing::ReadFile(shard);
  ShardParams p;
  p.shard_bits = 1;
  p.shard_id = 1;
  p.bloom_bits_per_key = 10;
  auto m = ReadManifest(dir);
  REQUIRE(m.ok());
  p.params_hash = m->params_hash();
  std::vector<std::pair<uint64_t, std::string>> offsets;
  {
    auto r = ShardReader::Open(shard, p);
    REQUIRE(r.ok());
    for (int i = 0; i < fmt::kNumSections; ++i) {
      const auto& sec = (*r)->section(i);
      const std::string name = fmt::kSectionNames[i];
      INFO(name);
      REQUIRE(sec.bytes > 0);  // the fixture fills every section
      offsets.emplace_back(sec.offset, name + " first byte");
      offsets.emplace_back(sec.offset + sec.bytes / 2, name + " middle");
      offsets.emplace_back(sec.offset + sec.bytes - 1, name + " last byte");
    }
    for (const uint64_t h : {0, 8, 16, 20, 24, 32, 40, 56, 64, 80, 100, 247, 248, 255}) {
      offsets.emplace_back(h, "header byte " + std::to_string(h));
    }
    // A padding byte (between the directory and the remainders, if there is one).
    const uint64_t dir_end = (*r)->section(fmt::kSecDirectory).offset + (*r)->section(fmt::kSecDirectory).bytes;
    if (dir_end < (*r)->section(fmt::kSecRemainders).offset) offsets.emplace_back(dir_end, "padding");
  }
  for (const auto& [off, what] : offsets) {
    testing::WriteFile(shard, pristine);
    FlipByte(shard, off);
    ExpectDetected(dir, "shard-00001.tms", what);
  }
  testing::WriteFile(shard, pristine);
  CHECK(Index::Open(dir).ok());
}

TEST_CASE("a truncated or extended shard is detected", "[index][corruption]") {
  const std::string dir = BuildSmall("trunc");
  const std::string shard = dir + "/seg-000001/shard-00000.tms";
  const std::string pristine = testing::ReadFile(shard);
  for (const size_t len : {size_t{0}, size_t{7}, size_t{100}, size_t{255}, size_t{256}, size_t{300},
                           pristine.size() / 2, pristine.size() - 1}) {
    testing::WriteFile(shard, pristine.substr(0, len));
    ExpectDetected(dir, "shard-00000.tms", "truncated to " + std::to_string(len));
  }
  testing::WriteFile(shard, pristine + std::string(8, '\0'));
  ExpectDetected(dir, "shard-00000.tms", "8 bytes appended");
  std::filesystem::remove(shard);
  ExpectDetected(dir, "shard-00000.tms", "missing shard");
}

TEST_CASE("a shard from another index is detected", "[index][corruption]") {
  const std::string a = BuildSmall("swap_a");
  const std::string dir = testing::ScratchDir("swap_b") + "/idx";
  IndexBuildOptions o;
  o.shard_bits = 1;
  IndexBuildStats st;
  REQUIRE(BuildIndexFromDocuments(dir, testing::MakeDocuments(22, 100, 20, 1000), o, false, &st).ok());
  // Same parameters, different content: valid on its own, but not the one the
  // manifest lists (its header checksum differs).
  std::filesystem::copy_file(a + "/seg-000001/shard-00000.tms", dir + "/seg-000001/shard-00000.tms",
                             std::filesystem::copy_options::overwrite_existing);
  ExpectDetected(dir, "shard-00000.tms", "foreign shard");
}

TEST_CASE("a damaged manifest is refused", "[index][corruption]") {
  const std::string dir = BuildSmall("manifest_damage");
  const std::string path = dir + "/manifest.json";
  const std::string pristine = testing::ReadFile(path);
  for (const size_t len : {size_t{0}, size_t{1}, pristine.size() / 2, pristine.size() - 3}) {
    testing::WriteFile(path, pristine.substr(0, len));
    auto idx = Index::Open(dir);
    REQUIRE(!idx.ok());
    CHECK(idx.status().code() == StatusCode::kCorruption);
    CHECK(idx.status().message().find("manifest.json") != std::string::npos);
  }
  // A changed shard checksum in the manifest.
  std::string bad = pristine;
  const size_t at = bad.find("\"header_xxh3\": \"") + 16;
  bad[at] = bad[at] == '0' ? '1' : '0';
  testing::WriteFile(path, bad);
  CHECK(Index::Open(dir).status().code() == StatusCode::kCorruption);
}

}  // namespace
}  // namespace tidemark
