// The probe against an independent exact reference on real text.
//
// Source: tests/reference/probe/exact_overlap.py (run at test time with the Debian
// /usr/bin/python3) builds a corpus from GCIDE 0.48 (package dict-gcide) and items
// from King James Bible verses (package bible-kjv) and the US Declaration of
// Independence (package miscfiles), and computes per-item n-gram counts, hits, hit
// fractions, token coverage and longest runs with Python sets of token tuples. The
// index is built with tidemark's own builder and probed with ProbeBenchmark; every
// item must agree exactly (64-bit fingerprints could in principle collide; with
// ~10^7 corpus n-grams and ~10^5 probes the expected number of false matches is
// ~10^-7, so any disagreement is a bug).
#include <catch2/catch.hpp>

#include <fstream>
#include <map>
#include <sstream>

#include "test_util.h"
#include "tidemark/index_builder.h"
#include "tidemark/probe.h"

namespace tidemark {
namespace {

struct Expected {
  uint32_t tokens = 0, ngrams = 0, hits = 0, longest = 0;
  double hit_fraction = 0, coverage = 0;
};

std::map<std::string, Expected> LoadExpected(const std::string& path) {
  std::map<std::string, Expected> out;
  std::ifstream f(path);
  std::string line;
  while (std::getline(f, line)) {
    std::istringstream ss(line);
    std::string id;
    Expected e;
    std::getline(ss, id, '\t');
    ss >> e.tokens >> e.ngrams >> e.hits >> e.hit_fraction >> e.coverage >> e.longest;
    out[id] = e;
  }
  return out;
}

TEST_CASE("probe overlap equals an exact Python reference on GCIDE vs KJV", "[probe][reference]") {
  if (!testing::PathExists("/usr/share/dictd/gcide.dict.dz") ||
      !testing::PathExists("/usr/bin/bible")) {
    FAIL("reference texts missing: run scripts/setup.sh (dict-gcide, bible-kjv, miscfiles)");
  }
  const std::string dir = testing::ScratchDir("probe_ref");
  const std::string script = testing::SourceDir() + "/tests/reference/probe/exact_overlap.py";
  int rc = 0;
  testing::RunCommand("/usr/bin/python3 " + script + " inputs " + dir, &rc);
  REQUIRE(rc == 0);

  for (const int n : {8, 13}) {
    DYNAMIC_SECTION("n = " << n) {
      testing::RunCommand("/usr/bin/python3 " + script + " expect " + dir + " " +
                              std::to_string(n),
                          &rc);
      REQUIRE(rc == 0);
      const auto expected = LoadExpected(dir + "/expected-" + std::to_string(n) + ".tsv");
      REQUIRE(expected.size() > 6000);

      IndexBuildOptions opts;
      opts.text.ngram = n;
      opts.read.id_field = "id";
      opts.memory_budget = 256ull << 20;
      IndexBuildStats stats;
      const std::string index_dir = dir + "/index-" + std::to_string(n);
      REQUIRE(BuildIndex(index_dir, {dir + "/corpus.jsonl"}, opts, &stats).ok());
      auto index = Index::Open(index_dir);
      REQUIRE(index.ok());

      BenchmarkSpec spec;
      spec.name = "kjv+declaration";
      spec.path = dir + "/items.jsonl";
      spec.read.id_field = "id";
      ProbeOptions popts;
      auto result = ProbeBenchmark(**index, spec, popts);
      REQUIRE(result.ok());
      REQUIRE(result->items.size() == expected.size());

      size_t mismatches = 0, with_hits = 0;
      for (const ItemResult& item : result->items) {
        const auto it = expected.find(item.id);
        REQUIRE(it != expected.end());
        const Expected& e = it->second;
        const OverlapResult& o = item.whole;
        const bool same = o.tokens == e.tokens && o.ngrams == e.ngrams && o.hits == e.hits &&
                          o.longest_run == e.longest &&
                          std::abs(o.hit_fraction - e.hit_fraction) < 1e-12 &&
                          std::abs(o.coverage - e.coverage) < 1e-12;
        if (!same && ++mismatches <= 5) {
          UNSCOPED_INFO(item.id << ": tidemark tokens/ngrams/hits/longest " << o.tokens << "/"
                                << o.ngrams << "/" << o.hits << "/" << o.longest_run
                                << " vs reference " << e.tokens << "/" << e.ngrams << "/"
                                << e.hits << "/" << e.longest);
        }
        with_hits += o.hits > 0;
      }
      CHECK(mismatches == 0);
      // The texts really overlap: GCIDE quotes the Bible (hundreds of verses at n=8).
      CHECK(with_hits > (n == 8 ? 500u : 50u));
    }
  }
}

}  // namespace
}  // namespace tidemark
