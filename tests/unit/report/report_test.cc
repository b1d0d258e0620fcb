// Report summary and writers. The probe results are hand-built fixtures whose
// figures follow from the listed matched n-gram positions (as in rules_test.cc);
// the files written are read back by outside readers: Python's json and csv
// modules and pandas (python3-pandas, a dependency of python3-statsmodels), in one
// /usr/bin/python3 run, and the JSON field list is checked against the table in
// docs/report_schema.md so the document and the writer cannot drift apart.
#include <catch2/catch.hpp>

#include <algorithm>
#include <charconv>
#include <cmath>
#include <map>
#include <set>
#include <sstream>
#include <string>
#include <vector>

#include "test_util.h"
#include "tidemark/report.h"

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
    r.spans.push_back({t, e, t * 6, e * 6 - 1});
    r.longest_run = std::max(r.longest_run, e - t);
    in_hit += e - t;
    t = e;
  }
  r.coverage = tokens == 0 ? 0.0 : double(in_hit) / tokens;
  if (r.hits > 0) r.max_corpus_count = 3;
  return r;
}

std::set<uint32_t> Range(uint32_t from, uint32_t to) {
  std::set<uint32_t> s;
  for (uint32_t i = from; i <= to; ++i) s.insert(i);
  return s;
}

std::vector<Rule> TestRules() {
  return {*PresetRule("gpt3"), *PresetRule("llama2"), *ParseRule("long=run>=20")};
}

ItemResult MakeItem(const std::string& id, uint64_t line, OverlapResult whole,
                    std::vector<OverlapResult> fields, const std::vector<Rule>& rules) {
  ItemResult item;
  item.id = id;
  item.line = line;
  item.whole = std::move(whole);
  item.fields = std::move(fields);
  for (const Rule& r : rules) item.verdicts.push_back(EvaluateRule(r, item.whole));
  return item;
}

// "quiz": 6 items, fields question + answer, full mode.
BenchmarkResult Quiz() {
  BenchmarkResult b;
  b.spec.name = "quiz";
  b.spec.path = "bench/quiz.jsonl";
  b.spec.read.fields = {"question", "answer"};
  b.rules = TestRules();
  b.input_checksum = "00112233445566ff";
  b.population = 6;
  b.skips.counts[static_cast<size_t>(SkipReason::kMalformedJson)] = 1;
  b.skips.examples = {"bench/quiz.jsonl:9: malformed_json: '{\"question\": '"};
  const auto& rules = b.rules;
  // q1: hits at 0..4 -> one 17-token span in 34 tokens; the answer is 3 tokens.
  b.items.push_back(MakeItem("q1", 1, MakeOverlap(34, 13, Range(0, 4)),
                             {MakeOverlap(30, 13, Range(0, 4)), MakeOverlap(3, 13, {})}, rules));
  // q2: clean.
  b.items.push_back(MakeItem("q2", 2, MakeOverlap(27, 13, {}),
                             {MakeOverlap(25, 13, {}), MakeOverlap(2, 13, {})}, rules));
  // q3: 10 tokens: too short everywhere.
  b.items.push_back(MakeItem("q3", 3, MakeOverlap(10, 13, {}),
                             {MakeOverlap(8, 13, {}), MakeOverlap(2, 13, {})}, rules));
  // q4: all matches were boilerplate; the id needs CSV quoting.
  OverlapResult q4 = MakeOverlap(20, 13, {});
  q4.ignored_boilerplate = 5;
  OverlapResult q4q = q4;
  q4q.tokens = 18;
  q4q.ngrams = 6;
  b.items.push_back(MakeItem("q4,\"quoted\"", 4, q4, {q4q, MakeOverlap(2, 13, {})}, rules));
  // q5: hits 0..27 cover tokens 0..39 of 50: 80%, Llama 2 dirty, run 40.
  b.items.push_back(MakeItem("q5", 5, MakeOverlap(50, 13, Range(0, 27)),
                             {MakeOverlap(45, 13, Range(0, 27)), MakeOverlap(5, 13, {})},
                             rules));
  // q6: one hit, 13 of 40 tokens (32.5%): Llama 2 mixed. Id with a line break.
  OverlapResult q6 = MakeOverlap(40, 13, {10});
  q6.ignored_template = 2;
  b.items.push_back(MakeItem("q6\nsecond line", 6, q6,
                             {MakeOverlap(36, 13, {10}), MakeOverlap(4, 13, {})}, rules));
  return b;
}

// "big": a sample of 40 of 1000 items, one field; items 0..3 contaminated,
// items 38 and 39 too short.
BenchmarkResult Big() {
  BenchmarkResult b;
  b.spec.name = "big";
  b.spec.path = "bench/big.jsonl";
  b.spec.read.fields = {"text"};
  b.rules = TestRules();
  b.input_checksum = "ffeeddccbbaa9988";
  b.population = 1000;
  for (uint32_t i = 0; i < 40; ++i) {
    OverlapResult o = i >= 38 ? MakeOverlap(5, 13, {}) : MakeOverlap(30, 13, i < 4 ? std::set<uint32_t>{0} : std::set<uint32_t>{});
    b.items.push_back(MakeItem("b" + std::to_string(i), 10 + i, o, {o}, b.rules));
  }
  return b;
}

ReportContext Context() {
  ReportContext c;
  c.tool_version = "0.1.0";
  c.index_dir = "out/index";
  c.index_identity = "0123456789abcdef";
  c.text_options = "rules=2 n=13 seed=0 accents=keep";
  c.rules = TestRules();
  c.probe.rules = c.rules;
  c.probe.boilerplate_cap = 1000;
  c.probe.template_share = 0.1;
  c.probe.sample_size = 40;
  c.probe.sample_seed = 7;
  c.level = 0.95;
  return c;
}

TEST_CASE("summary counts, rates and intervals", "[report]") {
  const auto s = Summarize({Quiz(), Big()}, Context());
  REQUIRE(s.ok());
  REQUIRE(s->benchmarks.size() == 2);
  const BenchmarkSummary& quiz = s->benchmarks[0];
  CHECK_FALSE(quiz.sample_mode);
  CHECK(quiz.audited == 6);
  REQUIRE(quiz.scopes.size() == 3);
  const ScopeSummary& item = quiz.scopes[0];
  CHECK(item.scope == "item");
  CHECK(item.items == 6);
  CHECK(item.too_short == 1);
  CHECK(item.judged == 5);
  REQUIRE(item.rules.size() == 3);
  // gpt3: q1, q5, q6 have a hit.
  CHECK(item.rules[0].contaminated == 3);
  CHECK(item.rules[0].rate == 3.0 / 5);
  REQUIRE(item.rules[0].intervals.size() == 2);
  CHECK(item.rules[0].intervals[0].method == "wilson");
  const Interval w = *WilsonInterval(3, 5, 0.95);
  const Interval cp = *ClopperPearsonInterval(3, 5, 0.95);
  CHECK(item.rules[0].intervals[0].ci.lower == w.lower);
  CHECK(item.rules[0].intervals[0].ci.upper == w.upper);
  CHECK(item.rules[0].intervals[1].method == "clopper_pearson");
  CHECK(item.rules[0].intervals[1].ci.lower == cp.lower);
  // llama2: only q5 reaches 80%; long run >= 20: only q5 (q1's run is 17).
  CHECK(item.rules[1].contaminated == 1);
  CHECK(item.rules[2].contaminated == 1);
  CHECK(item.llama2.dirty == 1);
  CHECK(item.llama2.clean + item.llama2.not_clean == item.judged);
  CHECK(item.llama2.not_dirty + item.llama2.dirty == item.judged);
  CHECK(item.filters.items_with_boilerplate == 1);
  CHECK(item.filters.ignored_boilerplate == 5);
  CHECK(item.filters.items_with_template == 1);
  CHECK(item.filters.ignored_template == 2);
  CHECK(item.filters.items_only_filtered == 1);
  CHECK(item.judged_population == 0);
  // Fields: every answer is shorter than 13 tokens, so nothing is judged.
  const ScopeSummary& answer = quiz.scopes[2];
  CHECK(answer.scope == "answer");
  CHECK(answer.is_field);
  CHECK(answer.judged == 0);
  CHECK(answer.too_short == 6);
  CHECK(std::isnan(answer.rules[0].rate));
  CHECK(answer.rules[0].intervals.empty());
  const ScopeSummary& question = quiz.scopes[1];
  CHECK(question.judged == 5);
  CHECK(question.rules[0].contaminated == 3);

  const BenchmarkSummary& big = s->benchmarks[1];
  CHECK(big.sample_mode);
  CHECK(big.sample_seed == 7);
  CHECK(big.population == 1000);
  const ScopeSummary& bi = big.scopes[0];
  CHECK(bi.judged == 38);
  CHECK(bi.judged_population == 950);  // round(1000 * 38 / 40)
  REQUIRE(bi.rules[0].intervals.size() == 2);
  CHECK(bi.rules[0].intervals[0].method == "hypergeometric");
  const Interval h = *HypergeometricInterval(4, 38, 950, 0.95);
  CHECK(bi.rules[0].intervals[0].ci.lower == h.lower);
  CHECK(bi.rules[0].intervals[0].ci.upper == h.upper);
  CHECK(bi.rules[0].intervals[1].method == "wilson_fpc");
  CHECK(bi.rules[0].intervals[1].ci.upper == WilsonFpcInterval(4, 38, 950, 0.95)->upper);

  // Beyond the exact method's range, Wilson-FPC alone.
  BenchmarkResult huge = Big();
  huge.population = 2000000000;
  const auto hs = Summarize({huge}, Context());
  REQUIRE(hs.ok());
  REQUIRE(hs->benchmarks[0].scopes[0].rules[0].intervals.size() == 1);
  CHECK(hs->benchmarks[0].scopes[0].rules[0].intervals[0].method == "wilson_fpc");

  ReportContext c = Context();
  c.sample_interval = SampleIntervalMethod::kWilsonFpc;
  CHECK(Summarize({Big()}, c)->benchmarks[0].scopes[0].rules[0].intervals[0].method ==
        "wilson_fpc");
}

TEST_CASE("Llama 2 bins of the fixture", "[report]") {
  // q1: 17/34 = 50% (mixed), q2: 0 (clean), q4: 0 (clean), q5: 80% (dirty),
  // q6: 32.5% (mixed).
  const auto s = Summarize({Quiz()}, Context());
  REQUIRE(s.ok());
  const Llama2Counts& l = s->benchmarks[0].scopes[0].llama2;
  CHECK(l.clean == 2);
  CHECK(l.not_clean == 3);
  CHECK(l.not_dirty == 4);
  CHECK(l.dirty == 1);
}

TEST_CASE("summary rejects bad input", "[report]") {
  ReportContext c = Context();
  c.level = 1.0;
  CHECK(Summarize({Quiz()}, c).status().code() == StatusCode::kInvalidArgument);
  BenchmarkResult b = Quiz();
  b.items[2].fields.pop_back();
  const auto r = Summarize({b}, Context());
  CHECK(r.status().code() == StatusCode::kInvalidArgument);
  CHECK(r.status().message().find("'q3'") != std::string::npos);
}

TEST_CASE("AnyRateAbove (--fail-above) compares whole-item rates strictly", "[report]") {
  const auto s = Summarize({Quiz()}, Context());
  REQUIRE(s.ok());
  // Highest whole-item rate: gpt3, 3/5 = 0.6. Field "answer" has no judged item.
  CHECK(AnyRateAbove(*s, 0.5999));
  CHECK_FALSE(AnyRateAbove(*s, 0.6));
  CHECK_FALSE(AnyRateAbove(*s, 1.0));
  BenchmarkResult all_short = Quiz();
  for (ItemResult& it : all_short.items) {
    it.whole = MakeOverlap(4, 13, {});
    for (Verdict& v : it.verdicts) v = Verdict::kTooShort;
  }
  CHECK_FALSE(AnyRateAbove(*Summarize({all_short}, Context()), 0.0));
}

TEST_CASE("terminal table is aligned plain text with the caution", "[report]") {
  ReportContext c = Context();
  c.rules = {*PresetRule("gpt3")};
  BenchmarkResult b = Quiz();
  b.rules = c.rules;
  for (ItemResult& it : b.items) it.verdicts.resize(1);
  const std::string t = RenderTerminalTable(*Summarize({b}, c));
  const std::string expected =
      "benchmark  rule  judged  too short  contaminated    rate     95% interval  method\n"
      "quiz       gpt3       5          1             3  60.00%  23.07% - 88.24%  wilson\n"
      "caution: " + std::string(kReportCaution) + "\n";
  CHECK(t == expected);
  // 3/5 at 95%: Wilson 0.2307 - 0.8824 (statsmodels proportion_confint, 'wilson').
  CHECK(std::abs(WilsonInterval(3, 5, 0.95)->lower - 0.2307) < 0.5e-4);
}

TEST_CASE("markdown summary holds the caution and the tables", "[report]") {
  const std::string md = RenderMarkdownReport(*Summarize({Quiz(), Big()}, Context()));
  CHECK(md.find(std::string(kReportCaution)) != std::string::npos);
  CHECK(md.find("| item | gpt3 | 6 | 5 | 1 | 3 | 60.00% |") != std::string::npos);
  CHECK(md.find("95% CI (Wilson)") != std::string::npos);
  CHECK(md.find("95% CI (exact hypergeometric)") != std::string::npos);
  CHECK(md.find("a seeded simple random sample of 40 of 1000 items (seed 7)") !=
        std::string::npos);
  CHECK(md.find("| answer | gpt3 | 6 | 0 | 6 | 0 | n/a | n/a | n/a |") != std::string::npos);
}

TEST_CASE("writers fail cleanly and leave nothing behind", "[report]") {
  const std::string dir = testing::ScratchDir("report_fail");
  const auto s = Summarize({Quiz()}, Context());
  REQUIRE(s.ok());
  const std::string bad = dir + "/missing/dir/report.json";
  CHECK(WriteJsonReport(*s, bad).code() == StatusCode::kIOError);
  CHECK(WriteItemsCsv({Quiz()}, dir + "/missing/items.csv").code() == StatusCode::kIOError);
  CHECK_FALSE(testing::PathExists(dir + "/missing"));
}

// Python reads back every file; prints key=value lines (values as JSON).
constexpr const char* kReadBack = R"PY(
import csv, json, re, sys
d = sys.argv[1]
out = {}
rep = json.load(open(d + "/report.json", encoding="utf-8"))
paths = set()
def walk(v, p):
    if isinstance(v, dict):
        for k, x in v.items():
            key = k
            if p.endswith(".intervals"): key = "<method>"
            if p.endswith(".by_reason"): key = "<reason>"
            walk(x, (p + "." if p else "") + key)
    elif isinstance(v, list):
        paths.add(p + "[]")
        for x in v: walk(x, p + "[]")
    else:
        paths.add(p)
walk(rep, "")
doc = open(sys.argv[2], encoding="utf-8").read()
sec = doc.split("## JSON report")[1].split("## Per-item JSON Lines")[0]
documented = set(re.findall(r"^\| `([^`]+)` \|", sec, re.M))
out["missing"] = sorted(documented - paths)
out["extra"] = sorted(paths - documented)
out["schema_version"] = rep["schema_version"]
out["caution"] = rep["caution"]
r0 = rep["benchmarks"][0]["scopes"][0]["rules"][0]
out["rate"] = r0["rate"]
out["wilson_lower"] = r0["intervals"]["wilson"]["lower"]
out["answer_rate"] = rep["benchmarks"][0]["scopes"][2]["rules"][0]["rate"]
out["big_primary"] = rep["benchmarks"][1]["scopes"][0]["rules"][0]["primary_interval"]
lines = open(d + "/items.jsonl", encoding="utf-8").read().splitlines()
objs = [json.loads(l) for l in lines]
out["jsonl_rows"] = len(objs)
out["jsonl_ids"] = [o["id"] for o in objs[:6]]
out["jsonl_q5"] = [objs[4]["item"]["coverage_llama2"], objs[4]["item"]["llama2_bin"],
                   objs[4]["item"]["verdicts"]["llama2"], objs[4]["item"]["spans"]]
out["jsonl_q1_answer"] = objs[0]["fields"]["answer"]["verdicts"]["gpt3"]
with open(d + "/items.csv", newline="", encoding="utf-8") as f:
    rows = list(csv.reader(f))
out["csv_rows"] = len(rows) - 1
out["csv_widths"] = sorted(set(len(r) for r in rows))
out["csv_header"] = rows[0]
out["csv_ids"] = [r[1] for r in rows[1:7]]
h = rows[0]
out["csv_q5"] = [rows[5][h.index("coverage_llama2")], rows[5][h.index("rule.gpt3")],
                 rows[5][h.index("field.question.tokens")], rows[5][h.index("field.text.tokens")]]
out["csv_big"] = [rows[7][h.index("field.text.tokens")], rows[7][h.index("field.question.tokens")]]
try:
    import pandas
    df = pandas.read_csv(d + "/items.csv")
    out["pandas"] = [len(df), len(df.columns), float(df["hit_fraction"][4]),
                     int(df["field.question.tokens"][0]), str(df["id"][3])]
except ImportError:
    out["pandas"] = None
for k, v in out.items():
    print(k + "=" + json.dumps(v))
)PY";

TEST_CASE("written files read back with python json, csv and pandas", "[report]") {
  if (!testing::PathExists("/usr/bin/python3")) {
    WARN("/usr/bin/python3 missing (scripts/setup.sh installs it)");
    return;
  }
  const std::string dir = testing::ScratchDir("report_files");
  ReportContext c = Context();
  c.created = "2024-05-01T12:00:00Z";
  const std::vector<BenchmarkResult> results = {Quiz(), Big()};
  const auto s = Summarize(results, c);
  REQUIRE(s.ok());
  REQUIRE(WriteJsonReport(*s, dir + "/report.json").ok());
  REQUIRE(WriteMarkdownReport(*s, dir + "/report.md").ok());
  REQUIRE(WriteItemsJsonl(results, dir + "/items.jsonl").ok());
  REQUIRE(WriteItemsCsv(results, dir + "/items.csv").ok());
  CHECK(testing::ReadFile(dir + "/report.md").find(std::string(kReportCaution)) !=
        std::string::npos);
  int rc = -1;
  const std::string out = testing::RunCommand(
      "/usr/bin/python3 -c '" + std::string(kReadBack) + "' " + dir + " " +
          testing::SourceDir() + "/docs/report_schema.md 2>&1",
      &rc);
  INFO(out);
  REQUIRE(rc == 0);
  std::map<std::string, std::string> kv;
  std::istringstream lines(out);
  std::string line;
  while (std::getline(lines, line)) {
    const size_t eq = line.find('=');
    if (eq != std::string::npos) kv[line.substr(0, eq)] = line.substr(eq + 1);
  }
  CHECK(kv["missing"] == "[]");
  CHECK(kv["extra"] == "[]");
  CHECK(kv["schema_version"] == "1");
  CHECK(kv["caution"].find("not proof of a clean model") != std::string::npos);
  CHECK(kv["rate"] == "0.6");
  // Full precision: Python's repr of the double must read back the same value.
  CHECK(std::strtod(kv["wilson_lower"].c_str(), nullptr) == WilsonInterval(3, 5, 0.95)->lower);
  CHECK(kv["answer_rate"] == "null");
  CHECK(kv["big_primary"] == "\"hypergeometric\"");
  CHECK(kv["jsonl_rows"] == "46");
  CHECK(kv["jsonl_ids"] ==
        "[\"q1\", \"q2\", \"q3\", \"q4,\\\"quoted\\\"\", \"q5\", \"q6\\nsecond line\"]");
  CHECK(kv["jsonl_q5"] == "[0.8, \"dirty\", \"contaminated\", [[0, 40, 0, 239]]]");
  CHECK(kv["jsonl_q1_answer"] == "\"too_short\"");
  CHECK(kv["csv_rows"] == "46");
  // 3 + 11 + 3 rules, then (11 + 3) for each of question, answer, text.
  CHECK(kv["csv_widths"] == "[59]");
  CHECK(kv["csv_ids"] == kv["jsonl_ids"]);
  CHECK(kv["csv_q5"] == "[\"0.8\", \"contaminated\", \"45\", \"\"]");
  CHECK(kv["csv_big"] == "[\"30\", \"\"]");
  if (kv["pandas"] != "null") {
    // q5: 28 hits of 38 13-grams.
    char frac[32];
    *std::to_chars(frac, frac + sizeof frac, 28.0 / 38).ptr = '\0';
    CHECK(kv["pandas"] == "[46, 59, " + std::string(frac) + ", 30, \"q4,\\\"quoted\\\"\"]");
  }
}

}  // namespace
}  // namespace tidemark
