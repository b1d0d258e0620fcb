// Decision rules on worked examples. Each example is an item of T tokens in which
// the n-grams starting at the listed token positions were found in the corpus;
// the test derives the overlap figures (hits, spans, coverage, longest run) from
// that by hand-checkable arithmetic, then asks each rule for its verdict.
// Thresholds: Brown et al. 2020 (GPT-3) App. C, any 13-gram hit; Chowdhery et al.
// 2022 (PaLM) section 8, >= 70% of 8-grams; Touvron et al. 2023 (Llama 2) App. A.6,
// coverage over spans >= 10 tokens, clean < 20%, dirty >= 80%.
#include <catch2/catch.hpp>

#include <algorithm>
#include <set>
#include <vector>

#include "tidemark/probe.h"

namespace tidemark {
namespace {

OverlapResult MakeOverlap(uint32_t tokens, uint32_t n, const std::set<uint32_t>& starts) {
  OverlapResult r;
  r.tokens = tokens;
  r.ngrams = tokens >= n ? tokens - n + 1 : 0;
  r.hits = static_cast<uint32_t>(starts.size());
  r.hit_fraction = r.ngrams == 0 ? 0.0 : double(r.hits) / r.ngrams;
  std::vector<bool> covered(tokens, false);
  for (const uint32_t s : starts) {
    for (uint32_t t = s; t < s + n; ++t) covered[t] = true;
  }
  uint32_t in_hit = 0;
  for (uint32_t t = 0; t < tokens;) {
    if (!covered[t]) { ++t; continue; }
    uint32_t e = t;
    while (e < tokens && covered[e]) ++e;
    r.spans.push_back({t, e, t * 5, e * 5});
    r.longest_run = std::max(r.longest_run, e - t);
    in_hit += e - t;
    t = e;
  }
  r.coverage = tokens == 0 ? 0.0 : double(in_hit) / tokens;
  return r;
}

Rule Preset(const char* name) {
  auto r = PresetRule(name);
  REQUIRE(r.ok());
  return *r;
}

TEST_CASE("presets carry their published parameters", "[rules]") {
  const Rule gpt3 = Preset("gpt3");
  CHECK(gpt3.kind == Rule::Kind::kAnyHit);
  CHECK(gpt3.required_n == 13);
  const Rule palm = Preset("palm");
  CHECK(palm.kind == Rule::Kind::kHitFraction);
  CHECK(palm.threshold == 0.7);
  CHECK(palm.required_n == 8);
  const Rule llama2 = Preset("llama2");
  CHECK(llama2.kind == Rule::Kind::kCoverage);
  CHECK(llama2.threshold == 0.8);
  CHECK(llama2.min_span == 10);
  CHECK(llama2.required_n == 0);
  CHECK(PresetRule("gpt4").status().code() == StatusCode::kNotFound);
  CHECK(VerdictName(Verdict::kTooShort) == "too_short");
  CHECK(VerdictName(Verdict::kContaminated) == "contaminated");
  CHECK(Llama2BinName(Llama2Bin::kMixed) == "mixed");
}

TEST_CASE("items shorter than n and empty items are too short, never clean", "[rules]") {
  // 12 tokens cannot hold a 13-gram; 7 tokens cannot hold an 8-gram.
  const OverlapResult short13 = MakeOverlap(12, 13, {});
  const OverlapResult short8 = MakeOverlap(7, 8, {});
  const OverlapResult empty = MakeOverlap(0, 13, {});
  for (const OverlapResult* o : {&short13, &short8, &empty}) {
    CHECK(o->ngrams == 0);
    for (const char* name : {"gpt3", "palm", "llama2"}) {
      CHECK(EvaluateRule(Preset(name), *o) == Verdict::kTooShort);
    }
    CHECK(EvaluateRule(*ParseRule("run>=1"), *o) == Verdict::kTooShort);
    CHECK(ClassifyLlama2(*o) == Llama2Bin::kTooShort);
  }
  // Exactly n tokens: one n-gram, judged.
  CHECK(EvaluateRule(Preset("gpt3"), MakeOverlap(13, 13, {})) == Verdict::kClean);
  CHECK(EvaluateRule(Preset("gpt3"), MakeOverlap(13, 13, {0})) == Verdict::kContaminated);
}

TEST_CASE("GPT-3 rule: one 13-gram hit is enough", "[rules]") {
  const Rule gpt3 = Preset("gpt3");
  // 40 tokens, 28 13-grams, one of them (at token 20) matched.
  OverlapResult o = MakeOverlap(40, 13, {20});
  CHECK(o.ngrams == 28);
  CHECK(EvaluateRule(gpt3, o) == Verdict::kContaminated);
  CHECK(EvaluateRule(gpt3, MakeOverlap(40, 13, {})) == Verdict::kClean);
}

TEST_CASE("hits removed by the noise filters do not count", "[rules]") {
  // Every n-gram matched the corpus, but all were boilerplate (corpus count above
  // the cap) or benchmark templates: hits 0, so clean under every rule.
  OverlapResult o = MakeOverlap(30, 13, {});
  o.ignored_boilerplate = 12;
  o.ignored_template = 6;
  for (const char* name : {"gpt3", "palm", "llama2"}) {
    CHECK(EvaluateRule(Preset(name), o) == Verdict::kClean);
  }
  CHECK(ClassifyLlama2(o) == Llama2Bin::kClean);
}

TEST_CASE("PaLM rule: hit fraction at and around 0.7", "[rules]") {
  const Rule palm = Preset("palm");
  // 17 tokens, 10 8-grams; 7 matched is exactly 70%: contaminated.
  OverlapResult o = MakeOverlap(17, 8, {0, 1, 2, 3, 4, 5, 6});
  CHECK(o.ngrams == 10);
  CHECK(EvaluateRule(palm, o) == Verdict::kContaminated);
  // 6 of 10 (60%): clean.
  CHECK(EvaluateRule(palm, MakeOverlap(17, 8, {0, 1, 2, 3, 4, 5})) == Verdict::kClean);
  // 14 of 20 and 21 of 30 are also exactly 70%.
  std::set<uint32_t> s;
  for (uint32_t i = 0; i < 14; ++i) s.insert(i);
  CHECK(EvaluateRule(palm, MakeOverlap(27, 8, s)) == Verdict::kContaminated);
  for (uint32_t i = 14; i < 21; ++i) s.insert(i);
  CHECK(EvaluateRule(palm, MakeOverlap(37, 8, s)) == Verdict::kContaminated);
  // 2 of 3 (66.7%) is below.
  CHECK(EvaluateRule(palm, MakeOverlap(10, 8, {0, 2})) == Verdict::kClean);
}

TEST_CASE("Llama 2 bins: coverage over spans of >= 10 tokens", "[rules]") {
  const Rule llama2 = Preset("llama2");
  // 50 tokens; 8-gram hits at 0..32 cover tokens 0..39: 40/50 = 80%: dirty.
  std::set<uint32_t> s;
  for (uint32_t i = 0; i <= 32; ++i) s.insert(i);
  OverlapResult o = MakeOverlap(50, 8, s);
  CHECK(SpanCoverage(o, 10) == 0.8);
  CHECK(EvaluateRule(llama2, o) == Verdict::kContaminated);
  CHECK(ClassifyLlama2(o) == Llama2Bin::kDirty);
  // One token less (39/50 = 78%): not dirty, and not clean.
  s.erase(32);
  o = MakeOverlap(50, 8, s);
  CHECK(EvaluateRule(llama2, o) == Verdict::kClean);
  CHECK(ClassifyLlama2(o) == Llama2Bin::kMixed);
  // A single span of exactly 10 tokens in 50 (20%): not clean.
  o = MakeOverlap(50, 8, {5, 7});
  CHECK(o.longest_run == 10);
  CHECK(SpanCoverage(o, 10) == 0.2);
  CHECK(ClassifyLlama2(o) == Llama2Bin::kMixed);
  // 9 tokens in 50 (18%): clean.
  o = MakeOverlap(50, 8, {5, 6});
  CHECK(ClassifyLlama2(o) == Llama2Bin::kClean);
  // Many 8- and 9-token spans cover 85% of the tokens, but none reaches 10 tokens:
  // they are filtered out, so the item is clean under Llama 2 (raw coverage is high).
  o = MakeOverlap(20, 8, {0, 1, 10});  // spans [0,9) and [10,18): 17/20 tokens
  CHECK(o.coverage == 0.85);
  CHECK(SpanCoverage(o, 10) == 0.0);
  CHECK(ClassifyLlama2(o) == Llama2Bin::kClean);
  CHECK(EvaluateRule(llama2, o) == Verdict::kClean);
  CHECK(EvaluateRule(*ParseRule("coverage>=0.8"), o) == Verdict::kContaminated);
}

TEST_CASE("span coverage counts overlapping spans once", "[rules]") {
  OverlapResult o;
  o.tokens = 40;
  o.ngrams = 28;
  o.hits = 3;
  o.spans = {{20, 35, 0, 0}, {0, 12, 0, 0}, {10, 22, 0, 0}};  // union [0,35)
  CHECK(SpanCoverage(o, 10) == 35.0 / 40);
  CHECK(SpanCoverage(o, 13) == 15.0 / 40);
  o.tokens = 0;
  CHECK(SpanCoverage(o, 10) == 0.0);
}

TEST_CASE("user rules parse and apply their thresholds", "[rules]") {
  auto r = ParseRule("strict=coverage>=0.5,span=10");
  REQUIRE(r.ok());
  CHECK(r->name == "strict");
  CHECK(r->kind == Rule::Kind::kCoverage);
  CHECK(r->threshold == 0.5);
  CHECK(r->min_span == 10);
  CHECK(r->required_n == 0);
  r = ParseRule("fraction>=0.25");
  REQUIRE(r.ok());
  CHECK(r->name == "fraction>=0.25");
  CHECK(r->kind == Rule::Kind::kHitFraction);
  // 1 of 4 n-grams: exactly 25%.
  CHECK(EvaluateRule(*r, MakeOverlap(16, 13, {3})) == Verdict::kContaminated);
  CHECK(EvaluateRule(*r, MakeOverlap(17, 13, {3})) == Verdict::kClean);  // 1 of 5
  r = ParseRule("long=run>=20");
  REQUIRE(r.ok());
  CHECK(r->kind == Rule::Kind::kLongestRun);
  // Hits at 0..7 with n = 13: one run of 20 tokens, exactly the threshold.
  OverlapResult o = MakeOverlap(60, 13, {0, 1, 2, 3, 4, 5, 6, 7});
  CHECK(o.longest_run == 20);
  CHECK(EvaluateRule(*r, o) == Verdict::kContaminated);
  o = MakeOverlap(60, 13, {0, 1, 2, 3, 4, 5, 6});
  CHECK(EvaluateRule(*r, o) == Verdict::kClean);
  CHECK(ParseRule("palm")->required_n == 8);
  for (const char* bad : {"gpt4", "coverage>=1.5", "fraction>=0", "run>=2.5", "run>=0",
                          "hits>=3", "=coverage>=0.5", "coverage>=", "coverage>=0.5,span=0",
                          "fraction>=0.5,span=10", "coverage>=0.5,width=3", "run>=nan"}) {
    INFO(bad);
    const auto p = ParseRule(bad);
    CHECK(p.status().code() == StatusCode::kInvalidArgument);
  }
}

TEST_CASE("CheckRuleN names the n to rebuild with", "[rules]") {
  CHECK(CheckRuleN(Preset("palm"), 8).ok());
  CHECK(CheckRuleN(Preset("gpt3"), 13).ok());
  CHECK(CheckRuleN(Preset("llama2"), 13).ok());
  CHECK(CheckRuleN(Preset("llama2"), 8).ok());
  CHECK(CheckRuleN(*ParseRule("run>=20"), 5).ok());
  const Status s = CheckRuleN(Preset("palm"), 13);
  CHECK(s.code() == StatusCode::kInvalidArgument);
  CHECK(s.message() ==
        "rule 'palm' needs 8-grams; this index was built with n=13; rebuild with "
        "`tidemark index build -n 8`");
  CHECK(CheckRuleN(Preset("gpt3"), 8).message() ==
        "rule 'gpt3' needs 13-grams; this index was built with n=8; rebuild with "
        "`tidemark index build -n 13`");
}

}  // namespace
}  // namespace tidemark
