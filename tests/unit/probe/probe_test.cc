// ProbeBenchmark on small worked examples. Texts: King James Bible, Genesis 1:1-5
// (public domain; package bible-kjv, `bible -f gen1:1-gen1:5`), quoted verbatim.
#include <catch2/catch.hpp>

#include "test_util.h"
#include "tidemark/index_builder.h"
#include "tidemark/probe.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

const char* kGen1v1 = "In the beginning God created the heaven and the earth.";
const char* kGen1v3 = "And God said, Let there be light: and there was light.";
const char* kGen1v4 =
    "And God saw the light, that it was good: and God divided the light from the darkness.";
const char* kGen1v5 =
    "And God called the light Day, and the darkness he called Night. And the evening and "
    "the morning were the first day.";

std::vector<uint64_t> Fingerprints(const std::string& text, const TextOptions& t) {
  Tokenizer tok(t);
  std::vector<Token> tokens;
  tok.Tokenize(text, &tokens);
  std::vector<uint64_t> fps;
  ComputeFingerprints(tokens, t, &fps);
  return fps;
}

std::string JsonLine(const std::string& id, const std::string& text) {
  return "{\"id\":\"" + id + "\",\"text\":\"" + text + "\"}\n";
}

struct Fixture {
  std::string dir;
  std::unique_ptr<Index> index;
  TextOptions text;

  // Corpus: verse 1 once, verse 3 in 10 documents (boilerplate-like), verse 4's first
  // half once.
  explicit Fixture(int n) {
    text.ngram = n;
    dir = testing::ScratchDir("probe");
    std::vector<std::vector<uint64_t>> docs;
    docs.push_back(Fingerprints(kGen1v1, text));
    for (int i = 0; i < 10; ++i) docs.push_back(Fingerprints(kGen1v3, text));
    docs.push_back(Fingerprints("And God saw the light, that it was good", text));
    IndexBuildOptions o;
    o.text = text;
    o.shard_bits = 2;
    IndexBuildStats stats;
    REQUIRE(BuildIndexFromDocuments(dir + "/index", docs, o, false, &stats).ok());
    auto opened = Index::Open(dir + "/index");
    REQUIRE(opened.ok());
    index = std::move(opened).value();
  }

  BenchmarkResult Probe(const std::string& jsonl, const ProbeOptions& options) {
    const std::string path = testing::ScratchDir("bench") + "/bench.jsonl";
    testing::WriteFile(path, jsonl);
    BenchmarkSpec spec;
    spec.name = "gen";
    spec.path = path;
    spec.read.id_field = "id";
    auto r = ProbeBenchmark(*index, spec, options);
    REQUIRE(r.ok());
    return std::move(r).value();
  }
};

TEST_CASE("a verbatim item is fully covered, with its byte span", "[probe]") {
  Fixture fx(3);
  const BenchmarkResult r = fx.Probe(JsonLine("v1", kGen1v1), {});
  REQUIRE(r.items.size() == 1);
  const OverlapResult& o = r.items[0].whole;
  CHECK(o.tokens == 10);
  CHECK(o.ngrams == 8);
  CHECK(o.hits == 8);
  CHECK(o.hit_fraction == 1.0);
  CHECK(o.coverage == 1.0);
  CHECK(o.longest_run == 10);
  REQUIRE(o.spans.size() == 1);
  CHECK(o.spans[0].byte_begin == 0);
  CHECK(o.spans[0].byte_end == std::string(kGen1v1).size() - 1);  // the final '.' is not a token
  CHECK(o.max_corpus_count == 1);
  REQUIRE(r.items[0].verdicts.size() == 1);
  CHECK(r.items[0].verdicts[0] == Verdict::kContaminated);
}

TEST_CASE("a partial leak gives partial coverage and the right span", "[probe]") {
  Fixture fx(3);
  // Verse 4: 17 tokens; the corpus holds its first 9 ("and god saw the light that it
  // was good"), i.e. 7 of its 15 trigrams.
  const BenchmarkResult r = fx.Probe(JsonLine("v4", kGen1v4), {});
  const OverlapResult& o = r.items[0].whole;
  CHECK(o.tokens == 17);
  CHECK(o.ngrams == 15);
  CHECK(o.hits == 7);
  CHECK(o.longest_run == 9);
  CHECK(o.coverage == Approx(9.0 / 17.0));
  REQUIRE(o.spans.size() == 1);
  CHECK(std::string(kGen1v4).substr(o.spans[0].byte_begin,
                                    o.spans[0].byte_end - o.spans[0].byte_begin) ==
        "And God saw the light, that it was good");
}

TEST_CASE("an unseen item is clean; short and empty items are too short", "[probe]") {
  Fixture fx(13);
  const BenchmarkResult r = fx.Probe(JsonLine("v5", kGen1v5) + JsonLine("short", "Let there be light") +
                                         JsonLine("empty", ""),
                                     {});
  REQUIRE(r.items.size() == 3);
  CHECK(r.items[0].whole.ngrams == 10);
  CHECK(r.items[0].whole.hits == 0);
  CHECK(r.items[0].verdicts[0] == Verdict::kClean);
  CHECK(r.items[1].whole.too_short());
  CHECK(r.items[1].verdicts[0] == Verdict::kTooShort);
  CHECK(r.items[2].whole.tokens == 0);
  CHECK(r.items[2].verdicts[0] == Verdict::kTooShort);
}

TEST_CASE("the boilerplate cap ignores n-grams common in the corpus", "[probe]") {
  Fixture fx(3);
  ProbeOptions o;
  o.boilerplate_cap = 5;  // verse 3 occurs in 10 documents
  const BenchmarkResult r = fx.Probe(JsonLine("v3", kGen1v3) + JsonLine("v1", kGen1v1), o);
  CHECK(r.items[0].whole.hits == 0);
  CHECK(r.items[0].whole.ignored_boilerplate == r.items[0].whole.ngrams);
  CHECK(r.items[0].verdicts[0] == Verdict::kClean);
  CHECK(r.items[1].whole.hits == 8);  // count 1: kept
}

TEST_CASE("the template filter ignores n-grams shared by many items", "[probe]") {
  Fixture fx(3);
  ProbeOptions o;
  o.template_share = 0.5;
  o.min_template_items = 3;
  // Items 1-3 all start with verse 1's opening trigram "in the beginning"; item 4 is
  // verse 1 itself. "in the beginning" is in 4 of 5 items: a template.
  std::string jsonl;
  for (int i = 1; i <= 3; ++i) jsonl += JsonLine("t" + std::to_string(i), "In the beginning was item " + std::to_string(i));
  jsonl += JsonLine("v1", kGen1v1) + JsonLine("v5", kGen1v5);
  const BenchmarkResult r = fx.Probe(jsonl, o);
  REQUIRE(r.items.size() == 5);
  for (int i = 0; i < 3; ++i) {
    CHECK(r.items[i].whole.hits == 0);
    CHECK(r.items[i].whole.ignored_template == 1);
  }
  CHECK(r.items[3].whole.hits == 7);
  CHECK(r.items[3].whole.ignored_template == 1);
}

TEST_CASE("sample mode audits a reproducible subset in file order", "[probe]") {
  Fixture fx(3);
  std::string jsonl;
  for (int i = 0; i < 50; ++i) jsonl += JsonLine("i" + std::to_string(i), kGen1v5);
  ProbeOptions o;
  o.sample_size = 7;
  o.sample_seed = 42;
  const BenchmarkResult a = fx.Probe(jsonl, o);
  const BenchmarkResult b = fx.Probe(jsonl, o);
  CHECK(a.population == 50);
  REQUIRE(a.items.size() == 7);
  for (size_t i = 0; i < 7; ++i) {
    CHECK(a.items[i].id == b.items[i].id);
    if (i > 0) CHECK(a.items[i - 1].line < a.items[i].line);
  }
  o.sample_seed = 43;
  const BenchmarkResult c = fx.Probe(jsonl, o);
  bool differs = false;
  for (size_t i = 0; i < 7; ++i) differs |= a.items[i].id != c.items[i].id;
  CHECK(differs);
}

TEST_CASE("a rule published for another n is refused with the n to build", "[probe]") {
  Fixture fx(3);
  const std::string path = testing::ScratchDir("bench") + "/b.jsonl";
  testing::WriteFile(path, JsonLine("v1", kGen1v1));
  BenchmarkSpec spec;
  spec.path = path;
  ProbeOptions o;
  auto palm = PresetRule("palm");
  REQUIRE(palm.ok());
  o.rules.push_back(*palm);
  auto r = ProbeBenchmark(*fx.index, spec, o);
  REQUIRE_FALSE(r.ok());
  CHECK(r.status().code() == StatusCode::kInvalidArgument);
  CHECK(r.status().message().find("-n 8") != std::string::npos);
}

}  // namespace
}  // namespace tidemark
