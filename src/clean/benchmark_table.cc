// BenchmarkTable: the n-grams of the benchmarks in a flat open-addressing map
// (common/fingerprint_map.h), fingerprint -> run of ItemRefs.
#include <algorithm>
#include <bit>
#include <tuple>

#include "common/fingerprint_map.h"
#include "common/text_util.h"
#include "common/env.h"
#include "tidemark/clean.h"
#include "tidemark/tokenizer.h"

namespace tidemark {

struct TableEntry {
  uint32_t begin = 0;  // into Impl::refs
  uint32_t count = 0;
  uint32_t slot = 0;   // index among distinct fingerprints
};

struct BenchmarkTable::Impl {
  FingerprintMap<TableEntry> map;
  std::vector<ItemRef> refs;
  // Presence bits indexed by the fingerprint's top bits (the map uses the low bits),
  // about 16 bits per key: most corpus n-grams are rejected by one load from a small
  // array, without a probe sequence in the map.
  std::vector<uint64_t> filter;
  int filter_shift = 64;
  bool MayContain(uint64_t fp) const {
    const uint64_t bit = fp >> filter_shift;
    return (filter[bit >> 6] >> (bit & 63)) & 1;
  }
};

BenchmarkTable::BenchmarkTable() : impl_(std::make_unique<Impl>()) {}
BenchmarkTable::~BenchmarkTable() = default;

std::span<const ItemRef> BenchmarkTable::Find(uint64_t fp) const {
  const TableEntry* e = impl_->map.Find(fp);
  if (e == nullptr) return {};
  return std::span<const ItemRef>(impl_->refs.data() + e->begin, e->count);
}

void BenchmarkTable::MatchPositions(std::span<const uint64_t> fps,
                                    std::vector<uint32_t>* positions) const {
  positions->clear();
  const FingerprintMap<TableEntry>& map = impl_->map;
  const Impl& m = *impl_;
  for (size_t i = 0; i < fps.size(); ++i) {
    if (m.MayContain(fps[i]) && map.Find(fps[i]) != nullptr) {
      positions->push_back(static_cast<uint32_t>(i));
    }
  }
}

int64_t BenchmarkTable::Slot(uint64_t fp) const {
  const TableEntry* e = impl_->map.Find(fp);
  return e == nullptr ? -1 : static_cast<int64_t>(e->slot);
}

size_t BenchmarkTable::distinct_ngrams() const { return impl_->map.size(); }

Result<std::unique_ptr<BenchmarkTable>> BenchmarkTable::Build(
    const std::vector<CleanBenchmark>& benchmarks, const TextOptions& text, double template_share,
    uint32_t min_template_items) {
  TM_RETURN_IF_ERROR(text.Validate());
  if (template_share < 0.0 || template_share > 1.0) {
    return Status::InvalidArgument("template share must be in [0, 1], got " +
                                   std::to_string(template_share));
  }
  if (benchmarks.empty()) return Status::InvalidArgument("no benchmark given");
  if (benchmarks.size() > UINT32_MAX) return Status::InvalidArgument("too many benchmarks");
  std::unique_ptr<BenchmarkTable> table(new BenchmarkTable());
  table->text_ = text;
  Tokenizer tokenizer(text);
  std::vector<Token> tokens;
  // (fingerprint, benchmark, item), every n-gram occurrence.
  std::vector<std::tuple<uint64_t, uint32_t, uint32_t>> all;
  for (size_t b = 0; b < benchmarks.size(); ++b) {
    BenchmarkInfo info;
    info.spec = benchmarks[b];
    if (info.spec.name.empty()) info.spec.name = BaseName(info.spec.path);
    TM_ASSIGN_OR_RETURN(std::unique_ptr<RecordReader> reader,
                        RecordReader::Open(info.spec.path, info.spec.read));
    Record rec;
    while (true) {
      TM_ASSIGN_OR_RETURN(const bool more, reader->Next(&rec));
      if (!more) break;
      Item item;
      item.id = rec.id;
      item.line = rec.line;
      tokenizer.Tokenize(rec.text, &tokens);
      item.tokens = static_cast<uint32_t>(tokens.size());
      ComputeFingerprints(tokens, text, &item.fingerprints);
      if (item.fingerprints.empty()) ++info.too_short;
      if (info.items.size() >= UINT32_MAX) {
        return Status::InvalidArgument(info.spec.path + ": too many items");
      }
      const uint32_t idx = static_cast<uint32_t>(info.items.size());
      for (uint64_t fp : item.fingerprints) all.emplace_back(fp, static_cast<uint32_t>(b), idx);
      info.items.push_back(std::move(item));
    }
    info.skips = reader->skips();
    TM_ASSIGN_OR_RETURN(const std::string bytes, ReadFileToString(info.spec.path));
    info.input_checksum = Hex64(Checksum64(bytes));
    table->benchmarks_.push_back(std::move(info));
  }

  // Distinct (benchmark, fingerprint, item) triples, grouped by benchmark and
  // fingerprint, for the template filter.
  std::sort(all.begin(), all.end(), [](const auto& x, const auto& y) {
    return std::tie(std::get<1>(x), std::get<0>(x), std::get<2>(x)) <
           std::tie(std::get<1>(y), std::get<0>(y), std::get<2>(y));
  });
  all.erase(std::unique(all.begin(), all.end()), all.end());
  if (template_share > 0.0) {
    std::vector<std::tuple<uint64_t, uint32_t, uint32_t>> kept;
    kept.reserve(all.size());
    size_t i = 0;
    while (i < all.size()) {
      size_t j = i;
      while (j < all.size() && std::get<0>(all[j]) == std::get<0>(all[i]) &&
             std::get<1>(all[j]) == std::get<1>(all[i])) {
        ++j;
      }
      const uint32_t b = std::get<1>(all[i]);
      const double share_limit =
          template_share * static_cast<double>(table->benchmarks_[b].items.size());
      const size_t items_with = j - i;
      if (items_with >= min_template_items && static_cast<double>(items_with) > share_limit) {
        ++table->benchmarks_[b].ignored_template;
      } else {
        kept.insert(kept.end(), all.begin() + static_cast<std::ptrdiff_t>(i),
                    all.begin() + static_cast<std::ptrdiff_t>(j));
      }
      i = j;
    }
    all.swap(kept);
  }
  std::sort(all.begin(), all.end());  // by fingerprint, then benchmark, then item
  if (all.size() > UINT32_MAX) return Status::InvalidArgument("benchmarks have too many n-grams");
  Impl& m = *table->impl_;
  m.refs.reserve(all.size());
  m.map = FingerprintMap<TableEntry>(all.size());
  uint32_t slot = 0;
  size_t i = 0;
  while (i < all.size()) {
    const uint64_t fp = std::get<0>(all[i]);
    TableEntry e;
    e.begin = static_cast<uint32_t>(m.refs.size());
    e.slot = slot++;
    while (i < all.size() && std::get<0>(all[i]) == fp) {
      m.refs.push_back(ItemRef{std::get<1>(all[i]), std::get<2>(all[i])});
      ++i;
    }
    e.count = static_cast<uint32_t>(m.refs.size()) - e.begin;
    m.map[fp] = e;
  }
  // A one-bit-per-slot prefilter in front of the map: at 64 bits per benchmark n-gram
  // about 1.5% of the corpus n-grams that are not in any benchmark reach the map
  // (16 bits per n-gram let 6% through, each a likely branch miss and a map probe);
  // capped at 2^30 bits (128 MiB) for very large benchmark sets.
  const size_t bits = std::clamp<size_t>(std::bit_ceil(m.map.size() * 64), 4096, size_t{1} << 30);
  m.filter_shift = 64 - std::countr_zero(bits);
  m.filter.assign(bits / 64, 0);
  m.map.ForEach([&](uint64_t fp, const TableEntry&) {
    const uint64_t bit = fp >> m.filter_shift;
    m.filter[bit >> 6] |= uint64_t{1} << (bit & 63);
  });
  return table;
}

}  // namespace tidemark
