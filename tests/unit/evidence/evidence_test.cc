// Evidence pass tests. Outside references:
//  * real text (REFERENCES.md): KJV verses Gen 1:1-3:24 (`bible`, package bible-kjv)
//    as benchmark items; paragraphs of the GCIDE dictionary
//    (/usr/share/dictd/gcide.dict.dz, package dict-gcide), which quotes them, as the
//    corpus, gzip-compressed with the gzip CLI;
//  * tests/unit/evidence/evidence_check.py (/usr/bin/python3): reads the corpus file at
//    the reported offsets and re-tokenizes with its own tokenizer and json module.
#include <catch2/catch.hpp>

#include <set>
#include <sstream>

#include "common/env.h"
#include "test_util.h"
#include "tidemark/clean.h"
#include "tidemark/evidence.h"
#include "tidemark/index_builder.h"
#include "tidemark/probe.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

using testing::PathExists;
using testing::ReadFile;
using testing::RunCommand;
using testing::ScratchDir;
using testing::SourceDir;
using testing::WriteFile;

std::string Run(const std::string& cmd) {
  int rc = -1;
  const std::string out = RunCommand(cmd, &rc);
  REQUIRE(rc == 0);
  return out;
}

struct Fixture {
  std::string dir, bench, corpus;  // corpus: .jsonl.gz
  std::vector<BenchmarkResult> results;
};

// Benchmark and corpus from real text; the flagged items come from a cleaning run
// (any shared 13-gram), which fills hit_fingerprints like a probe does.
Fixture MakeFixture(const std::string& name) {
  Fixture f;
  f.dir = ScratchDir(name);
  f.bench = f.dir + "/kjv.jsonl";
  const std::string py = "/usr/bin/python3 " + SourceDir() + "/tests/unit/clean/clean_check.py ";
  Run(py + "make-bench " + f.bench);
  Run(py + "make-corpus " + f.dir + "/gcide.jsonl");
  Run("gzip -k " + f.dir + "/gcide.jsonl");
  f.corpus = f.dir + "/gcide.jsonl.gz";
  CleanBenchmark b;
  b.path = f.bench;
  b.read.fields = {"question"};
  b.read.id_field = "id";
  auto table = BenchmarkTable::Build({b}, TextOptions{});
  REQUIRE(table.ok());
  CleanOptions co;
  auto s = CleanCorpus(**table, {f.dir + "/gcide.jsonl"}, f.dir + "/cleaned", co);
  REQUIRE(s.ok());
  f.results = s->benchmarks;
  return f;
}

bool HaveRealText() {
  if (!PathExists("/usr/bin/bible") || !PathExists("/usr/share/dictd/gcide.dict.dz")) {
    WARN("bible-kjv or dict-gcide missing (scripts/setup.sh installs them); skipped");
    return false;
  }
  return true;
}

ReadOptions CorpusRead() {
  ReadOptions r;
  r.id_field = "id";
  return r;
}

TEST_CASE("evidence: every occurrence holds the item's tokens at the reported offsets", "[evidence]") {
  if (!HaveRealText()) return;
  Fixture f = MakeFixture("evidence_real");
  EvidenceOptions opt;
  opt.max_occurrences_per_item = 1000;
  opt.block_bytes = 8192;  // many blocks
  uint64_t unresolved = 99;
  auto targets = CollectEvidenceTargets(f.results, TextOptions{}, opt, &unresolved);
  REQUIRE(targets.ok());
  CHECK(unresolved == 0);
  REQUIRE(!targets->empty());
  auto rep = ScanForEvidence(f.results, *targets, {f.corpus}, CorpusRead(), TextOptions{}, opt);
  REQUIRE(rep.ok());
  CHECK(rep->stats.collisions == 0);
  CHECK(rep->stats.verified > 0);
  const std::string ev = f.dir + "/evidence.jsonl";
  REQUIRE(WriteEvidenceJsonl(*rep, ev).ok());
  const std::string checker = "/usr/bin/python3 " + SourceDir() + "/tests/unit/evidence/evidence_check.py ";
  const std::string verdict = Run(checker + f.bench + " " + f.corpus + " " + ev);
  INFO(verdict);
  CHECK(verdict.rfind("ok ", 0) == 0);
  // The (item, record) pairs found are exactly those the Python scan finds.
  std::set<std::string> ours, theirs;
  for (const ItemEvidence& it : rep->items) {
    for (const EvidenceOccurrence& o : it.occurrences) ours.insert(it.id + " " + o.record_id);
  }
  std::istringstream in(Run(checker + "pairs " + f.bench + " " + f.corpus));
  std::string line;
  while (std::getline(in, line)) theirs.insert(line);
  CHECK(ours == theirs);
  CHECK(ours.size() >= 5);

  // The cap keeps the first occurrences in corpus order; the total stays.
  EvidenceOptions capped = opt;
  capped.max_occurrences_per_item = 1;
  auto rep1 = ScanForEvidence(f.results, *targets, {f.corpus}, CorpusRead(), TextOptions{}, capped);
  REQUIRE(rep1.ok());
  REQUIRE(rep1->items.size() == rep->items.size());
  for (size_t i = 0; i < rep->items.size(); ++i) {
    CHECK(rep1->items[i].occurrences_total == rep->items[i].occurrences_total);
    REQUIRE(rep1->items[i].occurrences.size() == 1);
    CHECK(rep1->items[i].occurrences[0].line == rep->items[i].occurrences[0].line);
  }
  // Thread count and block size do not change the evidence file.
  EvidenceOptions big = opt;
  big.block_bytes = 1 << 20;
  auto rep2 = ScanForEvidence(f.results, *targets, {f.corpus}, CorpusRead(), TextOptions{}, big);
  REQUIRE(rep2.ok());
  REQUIRE(WriteEvidenceJsonl(*rep2, f.dir + "/evidence2.jsonl").ok());
  CHECK(ReadFile(ev) == ReadFile(f.dir + "/evidence2.jsonl"));
}

TEST_CASE("evidence: an injected fingerprint collision is counted, never reported", "[evidence]") {
  if (!HaveRealText()) return;
  Fixture f = MakeFixture("evidence_collision");
  EvidenceOptions opt;
  uint64_t unresolved = 0;
  auto targets = CollectEvidenceTargets(f.results, TextOptions{}, opt, &unresolved);
  REQUIRE(targets.ok());
  REQUIRE(!targets->empty());
  // A clean item whose target claims the fingerprint of a real corpus n-gram (one of
  // the flagged item's), while its tokens are a different n-gram: a simulated 64-bit
  // collision.
  const EvidenceTarget real = targets->front();
  uint32_t clean_item = UINT32_MAX;
  for (size_t i = 0; i < f.results[0].items.size(); ++i) {
    if (f.results[0].items[i].verdicts[0] == Verdict::kClean) {
      clean_item = static_cast<uint32_t>(i);
      break;
    }
  }
  REQUIRE(clean_item != UINT32_MAX);
  EvidenceTarget fake;
  fake.fingerprint = real.fingerprint;
  fake.benchmark = 0;
  fake.item = clean_item;
  {
    // The fake item's own first n-gram, via the library tokenizer.
    Tokenizer tok(TextOptions{});
    std::vector<Token> tokens;
    std::vector<std::string> norm;
    auto reader = RecordReader::Open(f.bench, f.results[0].spec.read);
    REQUIRE(reader.ok());
    Record rec;
    for (uint32_t i = 0; i <= clean_item; ++i) REQUIRE(*(*reader)->Next(&rec));
    tok.TokenizeWithText(rec.text, &tokens, &norm);
    REQUIRE(tokens.size() >= 13);
    for (size_t j = 0; j < 13; ++j) {
      fake.token_hashes.push_back(tokens[j].hash);
      fake.tokens.push_back(norm[j]);
    }
    CHECK(fake.tokens != real.tokens);
  }
  std::vector<EvidenceTarget> with_fake = *targets;
  with_fake.push_back(fake);
  auto base = ScanForEvidence(f.results, *targets, {f.corpus}, CorpusRead(), TextOptions{}, opt);
  auto rep = ScanForEvidence(f.results, with_fake, {f.corpus}, CorpusRead(), TextOptions{}, opt);
  REQUIRE(base.ok());
  REQUIRE(rep.ok());
  CHECK(base->stats.collisions == 0);
  const ItemEvidence* fake_ev = nullptr;
  for (const ItemEvidence& it : rep->items) {
    if (it.item == clean_item) fake_ev = &it;
  }
  REQUIRE(fake_ev != nullptr);
  CHECK(fake_ev->collisions >= 1);
  CHECK(fake_ev->occurrences_total == 0);
  CHECK(fake_ev->occurrences.empty());
  CHECK(rep->stats.collisions == fake_ev->collisions);
  CHECK(rep->stats.verified == base->stats.verified);
  // Same fingerprint and same token hashes but other normalized tokens (a token-hash
  // collision) is caught by the text comparison.
  EvidenceTarget fake2 = real;
  fake2.item = clean_item;
  fake2.tokens.back() += "x";
  std::vector<EvidenceTarget> with_fake2 = *targets;
  with_fake2.push_back(fake2);
  auto rep2 = ScanForEvidence(f.results, with_fake2, {f.corpus}, CorpusRead(), TextOptions{}, opt);
  REQUIRE(rep2.ok());
  CHECK(rep2->stats.collisions >= 1);
  CHECK(rep2->stats.verified == base->stats.verified);
}

TEST_CASE("evidence: against a real index and probe, with a moved corpus root", "[evidence]") {
  if (!HaveRealText()) return;
  Fixture f = MakeFixture("evidence_index");
  // Index the gzip corpus, then move it: the manifest keeps the old path.
  IndexBuildOptions bo;
  bo.read = CorpusRead();
  bo.shard_bits = 2;
  // Two build workers on one file: also the regression test for a use-after-free
  // the ASan build found here (a worker parsed a block whose LineBlock::path belonged
  // to a BlockReader another worker had already closed at the end of the file).
  bo.threads = 2;
  IndexBuildStats bs;
  Run("mkdir -p " + f.dir + "/old && cp " + f.corpus + " " + f.dir + "/old/");
  REQUIRE(BuildIndex(f.dir + "/idx", {f.dir + "/old/gcide.jsonl.gz"}, bo, &bs).ok());
  Run("mv " + f.dir + "/old " + f.dir + "/new");
  auto index = Index::Open(f.dir + "/idx");
  REQUIRE(index.ok());
  BenchmarkSpec spec;
  spec.name = "kjv";
  spec.path = f.bench;
  spec.read.fields = {"question"};
  spec.read.id_field = "id";
  auto probed = ProbeBenchmark(**index, spec, ProbeOptions{});
  REQUIRE(probed.ok());
  std::vector<BenchmarkResult> results = {*probed};
  EvidenceOptions opt;
  opt.max_occurrences_per_item = 1000;
  // Without the remap the corpus is gone: an error naming the file, not silence.
  auto missing = RunEvidencePass(results, f.dir + "/idx", opt);
  CHECK(!missing.ok());
  opt.root_remaps = {{f.dir + "/old", f.dir + "/new"}};
  auto rep = RunEvidencePass(results, f.dir + "/idx", opt);
  REQUIRE(rep.ok());
  CHECK(rep->stats.unresolved == 0);
  CHECK(rep->stats.collisions == 0);
  // The probe flags the same items as the cleaning run (same n-grams, same corpus),
  // and every one has evidence.
  std::set<std::string> flagged, with_evidence, from_clean;
  for (const ItemResult& it : probed->items) {
    for (Verdict v : it.verdicts) {
      if (v == Verdict::kContaminated) flagged.insert(it.id);
    }
  }
  for (const ItemEvidence& it : rep->items) {
    if (it.occurrences_total > 0) with_evidence.insert(it.id);
  }
  for (const ItemResult& it : f.results[0].items) {
    if (it.verdicts[0] == Verdict::kContaminated) from_clean.insert(it.id);
  }
  CHECK(flagged == from_clean);
  CHECK(with_evidence == flagged);
  const std::string ev = f.dir + "/evidence.jsonl";
  REQUIRE(WriteEvidenceJsonl(*rep, ev).ok());
  const std::string checker = "/usr/bin/python3 " + SourceDir() + "/tests/unit/evidence/evidence_check.py ";
  const std::string verdict = Run(checker + f.bench + " " + f.dir + "/new/gcide.jsonl.gz " + ev);
  INFO(verdict);
  CHECK(verdict.rfind("ok ", 0) == 0);
}

TEST_CASE("evidence: probe items JSONL and corpus root remapping", "[evidence]") {
  const std::string dir = ScratchDir("evidence_load");
  WriteFile(dir + "/b.jsonl", "{\"id\": \"a\", \"text\": \"x\"}\n{\"id\": \"b\", \"text\": \"y\"}\n");
  WriteFile(dir + "/items.jsonl",
            "{\"benchmark\": \"b.jsonl\", \"id\": \"b\", \"item\": {\"hit_fingerprints\": "
            "[\"00000000000000ff\", \"8000000000000001\"]}}\n"
            "{\"benchmark\": \"b.jsonl\", \"id\": \"a\"}\n");
  BenchmarkSpec spec;
  spec.path = dir + "/b.jsonl";
  spec.read.id_field = "id";
  auto r = LoadProbeItems(dir + "/items.jsonl", {spec});
  REQUIRE(r.ok());
  REQUIRE(r->size() == 1);
  REQUIRE((*r)[0].items.size() == 2);
  CHECK((*r)[0].items[0].whole.hit_fingerprints.empty());
  CHECK((*r)[0].items[1].whole.hit_fingerprints == std::vector<uint64_t>{0xff, 0x8000000000000001ull});
  CHECK((*r)[0].items[1].verdicts[0] == Verdict::kContaminated);
  WriteFile(dir + "/bad.jsonl", "{\"benchmark\": \"b.jsonl\", \"id\": \"zz\", \"hit_fingerprints\": []}\n");
  CHECK(LoadProbeItems(dir + "/bad.jsonl", {spec}).status().code() == StatusCode::kNotFound);

  EvidenceOptions opt;
  opt.root_remaps = {{"/data/old", "/mnt/new"}};
  CHECK(RemapCorpusPath("/data/old/x/part-1.jsonl", opt) == "/mnt/new/x/part-1.jsonl");
  CHECK(RemapCorpusPath("/data/older/x.jsonl", opt) == "/data/older/x.jsonl");
  CHECK(RemapCorpusPath("/elsewhere/x.jsonl", opt) == "/elsewhere/x.jsonl");
}

}  // namespace
}  // namespace tidemark
