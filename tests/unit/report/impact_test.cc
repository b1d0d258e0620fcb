// Impact analysis: model results joined with verdicts. The intervals are the ones
// checked in stats_test.cc / tests/reference/stats (Newcombe 1998 method 10;
// percentile bootstrap); here the join, the grouping and the file readers are
// checked on small hand-countable fixtures.
#include <catch2/catch.hpp>

#include <cmath>
#include <string>
#include <vector>

#include "test_util.h"
#include "tidemark/impact.h"

namespace tidemark {
namespace {

// Items i0..i9: verdicts under "gpt3" contaminated for i0..i3, too short for i9,
// clean otherwise. A second rule "other" flags only i0.
BenchmarkResult Bench() {
  BenchmarkResult b;
  b.spec.name = "quiz";
  b.rules = {*PresetRule("gpt3"), *ParseRule("other=run>=50")};
  for (int i = 0; i < 10; ++i) {
    ItemResult it;
    it.id = "i" + std::to_string(i);
    it.whole.tokens = i == 9 ? 5 : 30;
    it.whole.ngrams = i == 9 ? 0 : 18;
    it.whole.hits = i < 4 ? 2 : 0;
    it.verdicts = {i == 9 ? Verdict::kTooShort : (i < 4 ? Verdict::kContaminated : Verdict::kClean),
                   i == 9 ? Verdict::kTooShort : (i == 0 ? Verdict::kContaminated : Verdict::kClean)};
    b.items.push_back(it);
  }
  b.population = 10;
  return b;
}

TEST_CASE("binary results: clean vs dirty with Newcombe's interval", "[impact]") {
  const std::string dir = testing::ScratchDir("impact_bin");
  // Dirty i0..i3: 4 of 4 correct; clean i4..i8: i4, i5 correct (2 of 5); i9 (too
  // short) correct; i7 has no result; "zz" is not an item.
  testing::WriteFile(dir + "/r.jsonl",
                     "{\"id\": \"i0\", \"correct\": true}\n"
                     "{\"id\": \"i1\", \"correct\": 1}\n"
                     "\n"
                     "{\"id\": \"i2\", \"correct\": 1, \"extra\": [1,2]}\n"
                     "{\"id\": \"i3\", \"correct\": 1.0}\n"
                     "{\"id\": \"i4\", \"correct\": 1}\n"
                     "{\"id\": \"i5\", \"correct\": 1}\n"
                     "{\"id\": \"i6\", \"correct\": false}\n"
                     "{\"id\": \"i8\", \"correct\": 0}\n"
                     "{\"id\": \"i9\", \"correct\": 1}\n"
                     "{\"id\": \"zz\", \"correct\": 0}\n");
  const auto r = ReadModelResults(dir + "/r.jsonl");
  REQUIRE(r.ok());
  CHECK(r->binary);
  CHECK(r->entries.size() == 10);
  CHECK(r->entries[2].line == 4);  // blank line 3 skipped, numbering kept
  const auto m = ComputeImpact(Bench(), *r);
  REQUIRE(m.ok());
  CHECK(m->rule == "gpt3");
  CHECK(m->dirty.items == 4);
  CHECK(m->dirty.mean == 1.0);
  CHECK(m->clean.items == 4);  // i4, i5, i6, i8
  CHECK(m->clean.mean == 0.5);
  CHECK(m->too_short.items == 1);
  CHECK(m->overall.items == 9);
  CHECK(m->overall.mean == 7.0 / 9);
  CHECK(m->missing == 1);
  REQUIRE(m->missing_examples.size() == 1);
  CHECK(m->missing_examples[0] == "i7");
  CHECK(m->unmatched == 1);
  REQUIRE(m->has_difference);
  CHECK(m->difference == -0.5);
  CHECK(m->difference_method == "newcombe");
  const Interval d = *NewcombeDifferenceInterval(2, 4, 4, 4, 0.95);
  CHECK(m->difference_interval.lower == d.lower);
  CHECK(m->difference_interval.upper == d.upper);
  CHECK(std::abs(m->clean_minus_overall - (0.5 - 7.0 / 9)) < 1e-15);
  CHECK(m->clean.has_interval);
  CHECK(m->clean.interval.lower == WilsonInterval(2, 4, 0.95)->lower);

  // Another rule splits differently: only i0 dirty.
  ImpactOptions opt;
  opt.rule = "other";
  const auto m2 = ComputeImpact(Bench(), *r, opt);
  REQUIRE(m2.ok());
  CHECK(m2->dirty.items == 1);
  CHECK(m2->clean.items == 7);
  opt.rule = "nope";
  CHECK(ComputeImpact(Bench(), *r, opt).status().code() == StatusCode::kInvalidArgument);

  const std::string json = RenderImpactJson({*m}, 0.95);
  CHECK(json.find("\"method\": \"newcombe\"") != std::string::npos);
  CHECK(json.find("\"missing_examples\": [\"i7\"]") != std::string::npos);
  CHECK(json.find("not proof of a clean model") != std::string::npos);
  const std::string md = RenderImpactMarkdown({*m}, 0.95);
  CHECK(md.find("| quiz | gpt3 | 77.8% (9) | 50.0% (4) | 100.0% (4) | 100.0% (1) | -50.0 pts |") !=
        std::string::npos);
  REQUIRE(WriteImpactJson({*m}, 0.95, dir + "/impact.json").ok());
  CHECK(testing::ReadFile(dir + "/impact.json") == json);
}

TEST_CASE("numeric CSV results: bootstrap on the difference", "[impact]") {
  const std::string dir = testing::ScratchDir("impact_num");
  testing::WriteFile(dir + "/r.csv",
                     "\xEF\xBB\xBFmodel,id,score\r\n"
                     "m,i0,0.9\r\nm,i1,0.8\r\nm,i2,0.95\r\nm,i3,0.7\r\n"
                     "m,\"i4\",0.2\r\nm,i5,0.4\r\nm,i6,0.3\r\nm,i7,0.5\r\nm,i8,0.1\r\n"
                     "\"m, with comma\",i9,0.6\r\n");
  const auto r = ReadModelResults(dir + "/r.csv");
  REQUIRE(r.ok());
  CHECK_FALSE(r->binary);
  REQUIRE(r->entries.size() == 10);
  CHECK(r->entries[4].id == "i4");
  ImpactOptions opt;
  opt.bootstrap.seed = 11;
  opt.bootstrap.replicates = 5000;
  const auto m = ComputeImpact(Bench(), *r, opt);
  REQUIRE(m.ok());
  CHECK_FALSE(m->binary);
  CHECK(m->missing == 0);
  REQUIRE(m->has_difference);
  CHECK(m->difference_method == "bootstrap_percentile");
  const std::vector<double> clean = {0.2, 0.4, 0.3, 0.5, 0.1};
  const std::vector<double> dirty = {0.9, 0.8, 0.95, 0.7};
  BootstrapOptions b = opt.bootstrap;
  const auto direct = *BootstrapMeanDifference(clean, dirty, b);
  CHECK(m->difference_interval.lower == direct.interval.lower);
  CHECK(m->difference_interval.upper == direct.interval.upper);
  CHECK(std::abs(m->difference - (0.3 - 0.8375)) < 1e-12);
  CHECK(m->difference_interval.upper < 0);
  CHECK_FALSE(m->clean.has_interval);
}

TEST_CASE("model results: bad input names file and line", "[impact]") {
  const std::string dir = testing::ScratchDir("impact_bad");
  struct Case { const char* name; const char* body; const char* expect; };
  const Case cases[] = {
      {"a.jsonl", "{\"id\": \"x\", \"correct\": 1}\n{\"id\": \"x\", \"correct\": 0}\n",
       "a.jsonl:2: duplicate id 'x' (first at line 1)"},
      {"b.jsonl", "{\"id\": \"x\", \"correct\": 1}\n{\"id\": \"y\", \"correct\": \n",
       "b.jsonl:2: not a JSON object"},
      {"c.jsonl", "{\"id\": \"x\", \"score\": \"high\"}\n", "c.jsonl:1: score field 'score'"},
      {"d.jsonl", "{\"name\": \"x\", \"correct\": 1}\n", "d.jsonl:1: no id field 'id'"},
      {"e.csv", "id,score\na,0.5\nb,lots\n", "e.csv:3: score 'lots' is not a number"},
      {"f.csv", "id,score\na,0.5,9\n", "f.csv:2: 3 columns, header has 2"},
      {"g.csv", "id,points\na,1\n", "g.csv:1: header lacks column 'score'"},
      {"h.csv", "id,score\n\"a,1\n", "h.csv:2: unterminated quoted CSV field"},
  };
  for (const Case& c : cases) {
    INFO(c.name);
    testing::WriteFile(dir + "/" + c.name, c.body);
    const auto r = ReadModelResults(dir + "/" + c.name);
    REQUIRE_FALSE(r.ok());
    CHECK(r.status().code() == StatusCode::kBadInput);
    CHECK(r.status().message().find(dir + "/" + c.expect) != std::string::npos);
  }
  CHECK(ReadModelResults(dir + "/absent.jsonl").status().code() != StatusCode::kOk);
  // Integer ids are read as their decimal text.
  testing::WriteFile(dir + "/int.jsonl", "{\"id\": 17, \"correct\": 1}\n");
  CHECK(ReadModelResults(dir + "/int.jsonl")->entries[0].id == "17");
}

TEST_CASE("impact: empty groups and ambiguous ids", "[impact]") {
  ModelResults r;
  r.entries = {{"i4", 1.0, 1}};
  const auto m = ComputeImpact(Bench(), r);
  REQUIRE(m.ok());
  CHECK_FALSE(m->has_difference);
  CHECK(m->dirty.items == 0);
  CHECK(std::isnan(m->dirty.mean));
  CHECK(m->missing == 9);
  CHECK(RenderImpactJson({*m}, 0.95).find("\"difference\": null") != std::string::npos);
  BenchmarkResult b = Bench();
  b.items[3].id = "i2";
  CHECK(ComputeImpact(b, r).status().code() == StatusCode::kInvalidArgument);
}

}  // namespace
}  // namespace tidemark
