// ProbeBenchmark: benchmark items -> tokens -> n-gram fingerprints -> batched index
// lookups -> per-item overlap (hits, hit fraction, coverage, longest run, spans) ->
// rule verdicts.
//
// Method. Items are read serially (benchmarks are small), then tokenized in
// parallel with one Tokenizer per worker. All fingerprints of the benchmark are
// de-duplicated into one table, so each distinct n-gram is looked up once, in
// parallel batches through Index::Lookup (Bloom filter first, exact second). The
// template filter counts, per fingerprint, how many items contain it. Memory is
// proportional to the benchmark; the index stays mmap'd.
#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_for.h>

#include <algorithm>
#include <atomic>
#include <random>

#include "common/env.h"
#include "common/fingerprint_map.h"
#include "common/text_util.h"
#include "tidemark/probe.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

/// One benchmark item as read, with its tokens and fingerprints.
struct LoadedItem {
  std::string id;
  uint64_t line = 0;
  std::string whole;                  // fields joined
  std::vector<std::string> fields;    // one per spec field
  std::vector<Token> whole_tokens;
  std::vector<uint64_t> whole_fps;
  std::vector<std::vector<Token>> field_tokens;
  std::vector<std::vector<uint64_t>> field_fps;
};

/// Per distinct fingerprint: what the index said and how many items hold it.
struct FpEntry {
  NgramInfo info;
  uint32_t items = 0;  // distinct items whose text contains it
};

// Knuth's selection sampling (TAOCP vol. 2, 3.4.2, Algorithm S): a uniform random
// subset of `k` out of `n`, in increasing order, from a seeded std::mt19937_64 (its
// output sequence is fixed by the C++ standard, so the subset is reproducible
// across platforms; the uniform draw is computed by hand for the same reason).
std::vector<uint64_t> SampleIndices(uint64_t n, uint64_t k, uint64_t seed) {
  std::mt19937_64 rng(seed);
  std::vector<uint64_t> out;
  out.reserve(k);
  for (uint64_t t = 0; t < n && out.size() < k; ++t) {
    const double u = static_cast<double>(rng() >> 11) * 0x1.0p-53;
    if (static_cast<double>(n - t) * u < static_cast<double>(k - out.size())) out.push_back(t);
  }
  return out;
}

void ComputeOverlap(const std::vector<Token>& tokens, const std::vector<uint64_t>& fps, int n,
                    const FingerprintMap<FpEntry>& table, const ProbeOptions& options,
                    uint32_t template_min_items, OverlapResult* out) {
  *out = OverlapResult{};
  out->tokens = static_cast<uint32_t>(tokens.size());
  out->ngrams = static_cast<uint32_t>(fps.size());
  if (fps.empty()) return;
  // Mark covered tokens with a sweep: each hit at i covers [i, i+n).
  std::vector<uint8_t> covered(tokens.size(), 0);
  uint32_t run_end = 0;  // one past the last token covered so far
  for (size_t i = 0; i < fps.size(); ++i) {
    const FpEntry* e = table.Find(fps[i]);
    if (e == nullptr || !e->info.present()) continue;
    if (options.boilerplate_cap > 0 && e->info.count > options.boilerplate_cap) {
      ++out->ignored_boilerplate;
      continue;
    }
    if (template_min_items > 0 && e->items >= template_min_items) {
      ++out->ignored_template;
      continue;
    }
    ++out->hits;
    out->max_corpus_count = std::max<uint64_t>(out->max_corpus_count, e->info.count);
    if (out->hit_fingerprints.size() < options.max_hit_fingerprints) {
      out->hit_fingerprints.push_back(fps[i]);
    }
    const uint32_t begin = std::max<uint32_t>(static_cast<uint32_t>(i), run_end);
    const uint32_t end = static_cast<uint32_t>(i + n);
    for (uint32_t t = begin; t < end; ++t) covered[t] = 1;
    run_end = std::max(run_end, end);
  }
  uint32_t covered_tokens = 0;
  for (uint32_t t = 0; t < covered.size();) {
    if (!covered[t]) {
      ++t;
      continue;
    }
    uint32_t u = t;
    while (u < covered.size() && covered[u]) ++u;
    MatchedSpan span;
    span.token_begin = t;
    span.token_end = u;
    span.byte_begin = tokens[t].begin;
    span.byte_end = tokens[u - 1].end;
    out->spans.push_back(span);
    covered_tokens += u - t;
    out->longest_run = std::max(out->longest_run, u - t);
    t = u;
  }
  std::sort(out->hit_fingerprints.begin(), out->hit_fingerprints.end());
  out->hit_fingerprints.erase(
      std::unique(out->hit_fingerprints.begin(), out->hit_fingerprints.end()),
      out->hit_fingerprints.end());
  out->hit_fraction = static_cast<double>(out->hits) / static_cast<double>(out->ngrams);
  out->coverage = static_cast<double>(covered_tokens) / static_cast<double>(out->tokens);
}

}  // namespace

Result<BenchmarkResult> ProbeBenchmark(const Index& index, const BenchmarkSpec& spec,
                                       const ProbeOptions& options) {
  const TextOptions& text = index.text_options();
  const int n = text.ngram;
  std::vector<Rule> rules = options.rules;
  if (rules.empty()) {
    // Default: any single hit at the index's n (the rule of Brown et al. 2020, App. C,
    // without its n = 13 requirement).
    Rule any;
    any.name = "any-hit";
    any.kind = Rule::Kind::kAnyHit;
    rules.push_back(any);
  }
  for (const Rule& r : rules) TM_RETURN_IF_ERROR(CheckRuleN(r, n));
  if (options.template_share < 0.0 || options.template_share > 1.0) {
    return Status::InvalidArgument("template share must be within 0..1");
  }

  BenchmarkResult result;
  result.spec = spec;
  result.rules = rules;
  {
    TM_ASSIGN_OR_RETURN(const std::string bytes, ReadFileToString(spec.path));
    result.input_checksum = Hex64(Checksum64(bytes));
  }

  // 1. Read every item (serial; a benchmark is at most a few hundred thousand items).
  std::vector<LoadedItem> items;
  {
    TM_ASSIGN_OR_RETURN(auto reader, RecordReader::Open(spec.path, spec.read));
    Record rec;
    while (true) {
      TM_ASSIGN_OR_RETURN(const bool more, reader->Next(&rec));
      if (!more) break;
      LoadedItem item;
      item.id = rec.id;
      item.line = rec.line;
      item.whole.assign(rec.text);
      for (std::string_view f : rec.fields) item.fields.emplace_back(f);
      items.push_back(std::move(item));
    }
    result.skips = reader->skips();
  }
  result.population = items.size();
  if (options.sample_size > 0 && options.sample_size < items.size()) {
    const std::vector<uint64_t> keep =
        SampleIndices(items.size(), options.sample_size, options.sample_seed);
    std::vector<LoadedItem> sampled;
    sampled.reserve(keep.size());
    for (uint64_t k : keep) sampled.push_back(std::move(items[k]));
    items = std::move(sampled);
  }

  // 2. Tokenize and fingerprint in parallel.
  tbb::enumerable_thread_specific<Tokenizer> tokenizers([&text] { return Tokenizer(text); });
  tbb::parallel_for(tbb::blocked_range<size_t>(0, items.size(), 64),
                    [&](const tbb::blocked_range<size_t>& range) {
                      Tokenizer& tok = tokenizers.local();
                      for (size_t i = range.begin(); i != range.end(); ++i) {
                        LoadedItem& it = items[i];
                        tok.Tokenize(it.whole, &it.whole_tokens);
                        ComputeFingerprints(it.whole_tokens, text, &it.whole_fps);
                        // One field: its text is the whole item's; its tokens too.
                        if (it.fields.size() == 1 && it.fields[0] == it.whole) continue;
                        it.field_tokens.resize(it.fields.size());
                        it.field_fps.resize(it.fields.size());
                        for (size_t f = 0; f < it.fields.size(); ++f) {
                          tok.Tokenize(it.fields[f], &it.field_tokens[f]);
                          ComputeFingerprints(it.field_tokens[f], text, &it.field_fps[f]);
                        }
                      }
                    });

  // 3. Distinct fingerprints, with the number of items holding each (template filter).
  size_t total_fps = 0;
  for (const LoadedItem& it : items) total_fps += it.whole_fps.size();
  FingerprintMap<FpEntry> table(total_fps);
  std::vector<uint64_t> batch;
  std::vector<uint64_t> distinct;
  for (const LoadedItem& it : items) {
    distinct = it.whole_fps;
    for (const auto& f : it.field_fps) distinct.insert(distinct.end(), f.begin(), f.end());
    std::sort(distinct.begin(), distinct.end());
    distinct.erase(std::unique(distinct.begin(), distinct.end()), distinct.end());
    for (uint64_t fp : distinct) {
      if (table[fp].items++ == 0) batch.push_back(fp);
    }
  }

  // 4. Batched lookups, in parallel chunks.
  std::vector<NgramInfo> infos(batch.size());
  constexpr size_t kChunk = 1 << 14;
  tbb::parallel_for(size_t{0}, (batch.size() + kChunk - 1) / kChunk, [&](size_t c) {
    const size_t b = c * kChunk;
    const size_t e = std::min(batch.size(), b + kChunk);
    index.Lookup(std::span<const uint64_t>(batch.data() + b, e - b),
                 std::span<NgramInfo>(infos.data() + b, e - b));
  });
  if (CancelRequested()) return Status::Cancelled("probe interrupted");
  // Template threshold: an n-gram in more than template_share of the items (and in
  // at least min_template_items of them) is a template, not a leak.
  uint32_t template_min_items = 0;
  if (options.template_share > 0.0) {
    const double limit = options.template_share * static_cast<double>(items.size());
    template_min_items =
        std::max<uint32_t>(options.min_template_items, static_cast<uint32_t>(limit) + 1);
  }
  for (size_t i = 0; i < batch.size(); ++i) table.Find(batch[i])->info = infos[i];

  // 5. Per-item overlap and verdicts, in parallel.
  result.items.resize(items.size());
  tbb::parallel_for(tbb::blocked_range<size_t>(0, items.size(), 64),
                    [&](const tbb::blocked_range<size_t>& range) {
                      for (size_t i = range.begin(); i != range.end(); ++i) {
                        LoadedItem& it = items[i];
                        ItemResult& r = result.items[i];
                        r.id = std::move(it.id);
                        r.line = it.line;
                        ComputeOverlap(it.whole_tokens, it.whole_fps, n, table, options,
                                       template_min_items, &r.whole);
                        r.fields.resize(it.fields.size());
                        if (it.field_fps.empty() && it.fields.size() == 1) {
                          r.fields[0] = r.whole;
                        } else {
                          for (size_t f = 0; f < it.fields.size(); ++f) {
                            ComputeOverlap(it.field_tokens[f], it.field_fps[f], n, table,
                                           options, template_min_items, &r.fields[f]);
                          }
                        }
                        r.text = std::move(it.whole);
                        r.verdicts.reserve(rules.size());
                        for (const Rule& rule : rules) {
                          r.verdicts.push_back(EvaluateRule(rule, r.whole));
                        }
                      }
                    });
  return result;
}

}  // namespace tidemark
