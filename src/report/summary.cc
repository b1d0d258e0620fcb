// Summarize: probe results -> counts, rates and intervals per benchmark, scope and
// rule; AnyRateAbove for --fail-above. Methods: docs/statistics.md.
#include <algorithm>
#include <cmath>
#include <limits>
#include <string>
#include <vector>

#include "tidemark/report.h"

namespace tidemark {
namespace {

bool SameRules(const std::vector<Rule>& a, const std::vector<Rule>& b) {
  if (a.size() != b.size()) return false;
  for (size_t i = 0; i < a.size(); ++i) {
    if (a[i].name != b[i].name || a[i].kind != b[i].kind || a[i].threshold != b[i].threshold ||
        a[i].min_span != b[i].min_span) {
      return false;
    }
  }
  return true;
}

// Running counts for one scope.
struct ScopeTally {
  ScopeSummary summary;
  std::vector<uint64_t> contaminated;
};

void AddOverlap(const OverlapResult& o, ScopeTally* t) {
  ScopeSummary& s = t->summary;
  ++s.items;
  s.ngrams += o.ngrams;
  s.hits += o.hits;
  if (o.too_short()) {
    ++s.too_short;
  } else {
    ++s.judged;
    switch (ClassifyLlama2(o)) {
      case Llama2Bin::kClean: ++s.llama2.clean; ++s.llama2.not_dirty; break;
      case Llama2Bin::kMixed: ++s.llama2.not_clean; ++s.llama2.not_dirty; break;
      case Llama2Bin::kDirty: ++s.llama2.not_clean; ++s.llama2.dirty; break;
      case Llama2Bin::kTooShort: break;
    }
  }
  FilterCounts& f = s.filters;
  if (o.ignored_boilerplate > 0) ++f.items_with_boilerplate;
  if (o.ignored_template > 0) ++f.items_with_template;
  f.ignored_boilerplate += o.ignored_boilerplate;
  f.ignored_template += o.ignored_template;
  if (o.hits == 0 && o.ignored_boilerplate + o.ignored_template > 0) ++f.items_only_filtered;
}

Status FinishScope(const ReportContext& ctx, const std::vector<Rule>& rules, bool sample_mode,
                   uint64_t population, ScopeTally* t) {
  ScopeSummary& s = t->summary;
  if (sample_mode && s.items > 0) {
    // Judged items in the population are unknown (too-short items were only seen
    // in the sample): scale by the judged share (docs/statistics.md).
    const double scaled = std::round(static_cast<double>(population) *
                                     static_cast<double>(s.judged) /
                                     static_cast<double>(s.items));
    uint64_t n_prime = static_cast<uint64_t>(scaled);
    n_prime = std::min(n_prime, population - s.too_short);
    n_prime = std::max(n_prime, s.judged);
    s.judged_population = n_prime;
  }
  for (size_t r = 0; r < rules.size(); ++r) {
    RuleRate rate;
    rate.rule = rules[r].name;
    rate.contaminated = t->contaminated[r];
    rate.rate = std::numeric_limits<double>::quiet_NaN();
    if (s.judged > 0) {
      const uint64_t x = rate.contaminated, n = s.judged;
      rate.rate = static_cast<double>(x) / static_cast<double>(n);
      if (sample_mode) {
        TM_ASSIGN_OR_RETURN(const Interval fpc,
                            WilsonFpcInterval(x, n, s.judged_population, ctx.level));
        const NamedInterval w{"wilson_fpc", fpc};
        if (s.judged_population > kMaxExactPopulation) {
          rate.intervals = {w};  // beyond the exact method's range (stats.h)
        } else {
          TM_ASSIGN_OR_RETURN(const Interval exact,
                              HypergeometricInterval(x, n, s.judged_population, ctx.level));
          const NamedInterval e{"hypergeometric", exact};
          if (ctx.sample_interval == SampleIntervalMethod::kHypergeometric) {
            rate.intervals = {e, w};
          } else {
            rate.intervals = {w, e};
          }
        }
      } else {
        TM_ASSIGN_OR_RETURN(const Interval wilson, WilsonInterval(x, n, ctx.level));
        TM_ASSIGN_OR_RETURN(const Interval cp, ClopperPearsonInterval(x, n, ctx.level));
        rate.intervals = {{"wilson", wilson}, {"clopper_pearson", cp}};
      }
    }
    s.rules.push_back(std::move(rate));
  }
  return Status::Ok();
}

}  // namespace

Result<Summary> Summarize(const std::vector<BenchmarkResult>& results,
                          const ReportContext& context) {
  if (!(context.level > 0.0 && context.level < 1.0)) {
    return Status::InvalidArgument("confidence level must be between 0 and 1 (exclusive)");
  }
  Summary summary;
  summary.context = context;
  for (const BenchmarkResult& b : results) {
    const std::vector<Rule>& rules = context.rules.empty() ? b.rules : context.rules;
    const bool use_probe_verdicts = SameRules(rules, b.rules);
    BenchmarkSummary bs;
    bs.name = b.spec.name;
    bs.path = b.spec.path;
    bs.input_checksum = b.input_checksum;
    bs.audited = b.items.size();
    bs.population = std::max<uint64_t>(b.population, b.items.size());
    bs.sample_mode = bs.population > bs.audited;
    bs.sample_seed = bs.sample_mode ? context.probe.sample_seed : 0;
    bs.skips = b.skips;

    const std::vector<std::string>& fields = b.spec.read.fields;
    std::vector<ScopeTally> tallies(1 + fields.size());
    tallies[0].summary.scope = "item";
    for (size_t f = 0; f < fields.size(); ++f) {
      tallies[1 + f].summary.scope = fields[f];
      tallies[1 + f].summary.is_field = true;
    }
    for (ScopeTally& t : tallies) t.contaminated.assign(rules.size(), 0);

    for (const ItemResult& item : b.items) {
      if (item.fields.size() != fields.size()) {
        return Status::InvalidArgument("benchmark '" + b.spec.name + "', item '" + item.id +
                                       "': " + std::to_string(item.fields.size()) +
                                       " field results for " + std::to_string(fields.size()) +
                                       " fields");
      }
      AddOverlap(item.whole, &tallies[0]);
      const bool probe_verdicts = use_probe_verdicts && item.verdicts.size() == rules.size();
      for (size_t r = 0; r < rules.size(); ++r) {
        const Verdict v = probe_verdicts ? item.verdicts[r] : EvaluateRule(rules[r], item.whole);
        if (v == Verdict::kContaminated) ++tallies[0].contaminated[r];
      }
      for (size_t f = 0; f < fields.size(); ++f) {
        AddOverlap(item.fields[f], &tallies[1 + f]);
        for (size_t r = 0; r < rules.size(); ++r) {
          if (EvaluateRule(rules[r], item.fields[f]) == Verdict::kContaminated) {
            ++tallies[1 + f].contaminated[r];
          }
        }
      }
    }
    for (ScopeTally& t : tallies) {
      const Status s = FinishScope(context, rules, bs.sample_mode, bs.population, &t);
      if (!s.ok()) return s.WithContext("benchmark '" + b.spec.name + "'");
      bs.scopes.push_back(std::move(t.summary));
    }
    summary.benchmarks.push_back(std::move(bs));
  }
  return summary;
}

bool AnyRateAbove(const Summary& summary, double rate) {
  for (const BenchmarkSummary& b : summary.benchmarks) {
    if (b.scopes.empty()) continue;
    for (const RuleRate& r : b.scopes[0].rules) {
      if (std::isfinite(r.rate) && r.rate > rate) return true;
    }
  }
  return false;
}

}  // namespace tidemark
