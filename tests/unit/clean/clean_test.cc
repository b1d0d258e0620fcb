// Cleaning tests. Outside references:
//  * real text from Debian packages (REFERENCES.md): KJV verses Gen 1:1-3:24
//    (`bible`, package bible-kjv) as the benchmark; GCIDE dictionary paragraphs
//    (/usr/share/dictd/gcide.dict.dz, package dict-gcide; Webster 1913 quotes the
//    Bible) as the corpus;
//  * an independent checker, tests/unit/clean/clean_check.py, run with /usr/bin/python3:
//    its own tokenizer and Python's json module;
//  * the zstd and gzip command-line tools (packages zstd, gzip) to decompress outputs.
#include <catch2/catch.hpp>

#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "clean/clean_internal.h"
#include "clean/codec.h"
#include "clean/json_locate.h"
#include "common/env.h"
#include "common/text_util.h"
#include "faulty_env.h"
#include "test_util.h"
#include "tidemark/clean.h"

namespace tidemark {
namespace {

using testing::PathExists;
using testing::ReadFile;
using testing::RunCommand;
using testing::ScratchDir;
using testing::SourceDir;
using testing::WriteFile;

std::string Py(const std::string& args) {
  int rc = -1;
  const std::string out = RunCommand("/usr/bin/python3 " + SourceDir() +
                                         "/tests/unit/clean/clean_check.py " + args, &rc);
  REQUIRE(rc == 0);
  return out;
}

bool HaveRealText() {
  if (!PathExists("/usr/bin/bible") || !PathExists("/usr/share/dictd/gcide.dict.dz")) {
    WARN("bible-kjv or dict-gcide missing (scripts/setup.sh installs them); skipped");
    return false;
  }
  return true;
}

struct Fixture {
  std::string dir, bench, corpus;
  std::set<std::string> py_records, py_items;  // what the Python audit finds
};

Fixture MakeFixture(const std::string& name) {
  Fixture f;
  f.dir = ScratchDir(name);
  f.bench = f.dir + "/kjv_gen1_3.jsonl";
  f.corpus = f.dir + "/in/gcide.jsonl";
  Py("make-bench " + f.bench);
  int rc;
  RunCommand("mkdir -p " + f.dir + "/in", &rc);
  Py("make-corpus " + f.corpus);
  std::istringstream audit(Py("audit " + f.bench + " " + f.corpus));
  std::string kind, id;
  while (audit >> kind >> id) (kind == "record" ? f.py_records : f.py_items).insert(id);
  return f;
}

std::unique_ptr<BenchmarkTable> BuildTable(const Fixture& f) {
  CleanBenchmark b;
  b.path = f.bench;
  b.read.fields = {"question"};
  b.read.id_field = "id";
  auto t = BenchmarkTable::Build({b}, TextOptions{});
  REQUIRE(t.ok());
  return std::move(t).value();
}

// Record ids in the log.
std::set<std::string> LoggedIds(const std::string& log) {
  std::set<std::string> ids;
  std::istringstream in(ReadFile(log));
  std::string line;
  while (std::getline(in, line)) {
    const size_t p = line.find("\"id\":\"");
    REQUIRE(p != std::string::npos);
    ids.insert(line.substr(p + 6, line.find('"', p + 6) - p - 6));
  }
  return ids;
}

TEST_CASE("clean drop: the dropped records are exactly those an independent audit finds", "[clean]") {
  if (!HaveRealText()) return;
  const Fixture f = MakeFixture("clean_drop");
  REQUIRE(f.py_records.size() >= 5);  // GCIDE quotes Genesis 1-3 in several entries
  auto table = BuildTable(f);
  CleanOptions opt;
  opt.corpus_read.id_field = "id";
  opt.benchmark_subset_dir = "benchmarks";
  auto s = CleanCorpus(*table, {f.corpus}, f.dir + "/out", opt);
  REQUIRE(s.ok());
  REQUIRE(s->files.size() == 1);
  const CleanFileStats& fs = s->files[0];
  CHECK(fs.output == f.dir + "/out/gcide.jsonl");
  CHECK(fs.contaminated == f.py_records.size());
  CHECK(fs.dropped == fs.contaminated);
  CHECK(fs.redacted == 0);
  CHECK(LoggedIds(s->log_path) == f.py_records);
  // Untouched records byte-identical and in order, blank lines kept (Python check).
  const std::string cmp = Py("compare " + f.corpus + " " + fs.output + " " + s->log_path + " drop");
  CHECK(cmp.rfind("ok ", 0) == 0);
  INFO(cmp);
  // Re-audit of the cleaned copy: zero hits, by tidemark and by the Python audit.
  auto again = CleanCorpus(*table, {fs.output}, f.dir + "/out2", opt);
  REQUIRE(again.ok());
  CHECK(again->files[0].contaminated == 0);
  CHECK(Py("audit " + f.bench + " " + fs.output).empty());
  // The benchmark items the corpus contains are those Python finds; the clean subset
  // holds the others, byte for byte.
  std::set<std::string> ours;
  const BenchmarkResult& br = s->benchmarks.at(0);
  for (const ItemResult& it : br.items) {
    if (it.verdicts.at(0) == Verdict::kContaminated) ours.insert(it.id);
  }
  CHECK(ours == f.py_items);
  std::string found;
  for (const std::string& id : f.py_items) found += id + "\n";
  WriteFile(f.dir + "/found.txt", found);
  REQUIRE(s->benchmark_subsets.size() == 1);
  CHECK(s->benchmark_subsets[0] == f.dir + "/out/benchmarks/kjv_gen1_3.clean.jsonl");
  const std::string sub = Py("subset " + f.bench + " " + s->benchmark_subsets[0] + " " + f.dir + "/found.txt");
  INFO(sub);
  CHECK(sub.rfind("ok ", 0) == 0);
}

TEST_CASE("clean redact: only the text value changes, and no hit remains", "[clean]") {
  if (!HaveRealText()) return;
  const Fixture f = MakeFixture("clean_redact");
  auto table = BuildTable(f);
  CleanOptions opt;
  opt.corpus_read.id_field = "id";
  opt.mode = CleanMode::kRedact;
  auto s = CleanCorpus(*table, {f.corpus}, f.dir + "/out", opt);
  REQUIRE(s.ok());
  const CleanFileStats& fs = s->files[0];
  CHECK(fs.contaminated == f.py_records.size());
  CHECK(fs.redacted == fs.contaminated);
  CHECK(fs.redact_fallback_drops == 0);
  CHECK(fs.spans_redacted >= fs.redacted);
  const std::string cmp = Py("compare " + f.corpus + " " + fs.output + " " + s->log_path + " redact");
  INFO(cmp);
  CHECK(cmp.rfind("ok ", 0) == 0);
  CHECK(Py("audit " + f.bench + " " + fs.output).empty());
  auto again = CleanCorpus(*table, {fs.output}, f.dir + "/out2", opt);
  REQUIRE(again.ok());
  CHECK(again->files[0].contaminated == 0);
}

TEST_CASE("clean keeps .zst and .gz compression and reruns byte-identically", "[clean]") {
  if (!HaveRealText()) return;
  const Fixture f = MakeFixture("clean_codecs");
  int rc;
  RunCommand("zstd -q -k " + f.corpus + " && gzip -k " + f.corpus, &rc);
  REQUIRE(rc == 0);
  auto table = BuildTable(f);
  CleanOptions opt;
  opt.corpus_read.id_field = "id";
  opt.mode = CleanMode::kRedact;
  opt.block_bytes = 4096;  // many blocks: the parallel path must keep input order
  auto plain = CleanCorpus(*table, {f.corpus}, f.dir + "/plain", opt);
  REQUIRE(plain.ok());
  const std::string want = ReadFile(plain->files[0].output);
  auto packed = CleanCorpus(*table, {f.corpus + ".zst", f.corpus + ".gz"}, f.dir + "/packed", opt);
  REQUIRE(packed.ok());
  REQUIRE(packed->files.size() == 2);
  CHECK(packed->files[0].output == f.dir + "/packed/gcide.jsonl.zst");
  CHECK(RunCommand("zstd -dc " + packed->files[0].output, &rc) == want);
  CHECK(rc == 0);
  CHECK(RunCommand("zcat " + packed->files[1].output, &rc) == want);
  CHECK(rc == 0);
  // Rerun: every output, compressed or not, and the log are identical.
  auto rerun = CleanCorpus(*table, {f.corpus + ".zst", f.corpus + ".gz"}, f.dir + "/rerun", opt);
  REQUIRE(rerun.ok());
  for (size_t i = 0; i < 2; ++i) {
    CHECK(ReadFile(rerun->files[i].output) == ReadFile(packed->files[i].output));
  }
  std::string log_a = ReadFile(packed->log_path), log_b = ReadFile(rerun->log_path);
  CHECK(log_a == log_b);
  CHECK(!log_a.empty());
  // Written through the page cache instead of O_DIRECT (and three files, so that a
  // commit runs in the background while the next file is cleaned): the same bytes.
  CleanOptions cached = opt;
  cached.direct_writes = false;
  auto c = CleanCorpus(*table, {f.corpus, f.corpus + ".zst", f.corpus + ".gz"}, f.dir + "/cached", cached);
  REQUIRE(c.ok());
  REQUIRE(c->files.size() == 3);
  CHECK(ReadFile(c->files[0].output) == want);
  CHECK(ReadFile(c->files[1].output) == ReadFile(packed->files[0].output));
  CHECK(ReadFile(c->files[2].output) == ReadFile(packed->files[1].output));
}

using testing::FaultyEnv;

TEST_CASE("a failed write or commit is an error and leaves no partial file", "[clean][faults]") {
  if (!HaveRealText()) return;
  const Fixture f = MakeFixture("clean_faults");
  int rc;
  RunCommand("mkdir -p " + f.dir + "/three && for n in a b c; do cp " + f.corpus + " " + f.dir +
                 "/three/$n.jsonl; done",
             &rc);
  REQUIRE(rc == 0);
  const std::vector<std::string> inputs = {f.dir + "/three/a.jsonl", f.dir + "/three/b.jsonl",
                                           f.dir + "/three/c.jsonl"};
  auto table = BuildTable(f);
  auto no_temp_files = [](const std::string& dir) {
    int r;
    const std::string temps = RunCommand("find " + dir + " -name '*.tmp.*' | wc -l", &r);
    return r == 0 && std::stoi(temps) == 0;
  };
  // The commit of the second file (which runs while the third is cleaned) fails: the
  // run fails, b's output does not exist, and no temp file is left.
  for (const bool direct : {true, false}) {
    FaultyEnv env;
    env.fail_rename = "/b.jsonl";
    CleanOptions opt;
    opt.corpus_read.id_field = "id";
    opt.direct_writes = direct;
    opt.env = &env;
    const std::string out = f.dir + (direct ? "/out_rename_direct" : "/out_rename_cached");
    auto r = CleanCorpus(*table, inputs, out, opt);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().code() == StatusCode::kIOError);
    CHECK(r.status().message().find("injected failure") != std::string::npos);
    CHECK_FALSE(PathExists(out + "/b.jsonl"));
    CHECK_FALSE(PathExists(out + "/tidemark-clean-log.jsonl"));
    CHECK(no_temp_files(out));
  }
  // Disk full while the first file is written.
  FaultyEnv env;
  env.budget = 100000;
  CleanOptions opt;
  opt.corpus_read.id_field = "id";
  opt.env = &env;
  auto r = CleanCorpus(*table, inputs, f.dir + "/out_full", opt);
  REQUIRE_FALSE(r.ok());
  CHECK(r.status().message().find("No space left") != std::string::npos);
  CHECK_FALSE(PathExists(f.dir + "/out_full/a.jsonl"));
  CHECK(no_temp_files(f.dir + "/out_full"));
}

TEST_CASE("clean refuses to overwrite its input", "[clean]") {
  const std::string dir = ScratchDir("clean_overwrite");
  WriteFile(dir + "/b.jsonl", "{\"text\": \"one two three four five six seven eight nine ten eleven twelve thirteen\"}\n");
  WriteFile(dir + "/c.jsonl", "{\"text\": \"x\"}\n");
  CleanBenchmark b;
  b.path = dir + "/b.jsonl";
  auto t = BenchmarkTable::Build({b}, TextOptions{});
  REQUIRE(t.ok());
  auto s = CleanCorpus(**t, {dir + "/c.jsonl"}, dir, CleanOptions{});
  REQUIRE(!s.ok());
  CHECK(s.status().code() == StatusCode::kInvalidArgument);
  CHECK(ReadFile(dir + "/c.jsonl") == "{\"text\": \"x\"}\n");
}

TEST_CASE("JSON string decoding and raw offsets agree with Python's json module", "[clean]") {
  // Tokens written by Python json.dumps(ensure_ascii=True), decoded by json.loads.
  int rc;
  const std::string out = RunCommand(
      "/usr/bin/python3 -c 'import json,sys; s=\"caf\\u00e9 \\\"q\\\" \\\\ \\U0001F600 tab\\t end\";"
      "sys.stdout.write(json.dumps(s)+\"\\n\"+s)'", &rc);
  REQUIRE(rc == 0);
  const size_t nl = out.find('\n');
  const std::string token = out.substr(0, nl), value = out.substr(nl + 1);
  std::string decoded;
  REQUIRE(DecodeJsonString(token, &decoded).ok());
  CHECK(decoded == value);
  // "end" starts after the tab escape: raw offset must point at 'e' of "end".
  const size_t at = value.find("end");
  CHECK(token.substr(RawOffsetInJsonString(token, at), 3) == "end");
  CHECK(RawOffsetInJsonString(token, value.size()) == token.size() - 1);
  CHECK(!DecodeJsonString("\"bad \\q\"", &decoded).ok());
}

TEST_CASE("JsonFieldLocator finds strings, arrays and JSON Pointers in the raw line", "[clean]") {
  ReadOptions ro;
  ro.fields = {"/a/b", "list"};
  ro.field_joiner = "|";
  ro.array_joiner = "+";
  JsonFieldLocator loc(ro);
  const std::string line = R"({"x": 1, "a": {"b": "h\u00e9llo"}, "list": ["p", "q\n"]})";
  LocatedText lt;
  REQUIRE(loc.Locate(line, &lt).ok());
  CHECK(lt.text == "h\xC3\xA9llo|p+q\n");
  REQUIRE(lt.pieces.size() == 3);
  CHECK(line.substr(lt.pieces[0].raw_begin, lt.pieces[0].raw_end - lt.pieces[0].raw_begin) ==
        "\"h\\u00e9llo\"");
  CHECK(lt.pieces[2].text_begin == 9);
  CHECK(!loc.Locate(R"({"a": {"b": 3}, "list": []})", &lt).ok());
}

TEST_CASE("MergeMatchedRuns joins overlapping and touching n-grams into token runs", "[clean]") {
  const auto runs = MergeMatchedRuns({0, 1, 2, 5, 10, 20}, 3);
  REQUIRE(runs.size() == 3);
  CHECK(runs[0].begin == 0);  // 0..3, 1..4, 2..5 and 5..8 cover tokens 0..8
  CHECK(runs[0].end == 8);
  CHECK(runs[1].begin == 10);
  CHECK(runs[1].end == 13);
  CHECK(runs[2].begin == 20);
  CHECK(runs[2].end == 23);
}

}  // namespace
}  // namespace tidemark
