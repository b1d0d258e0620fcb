// The evidence pass (include/tidemark/evidence.h, docs/evidence.md).
#include "tidemark/evidence.h"

#include <simdjson.h>
#include <sys/stat.h>
#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_pipeline.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <bit>
#include <map>
#include <memory>
#include <unordered_map>

#include "clean/clean_internal.h"
#include "clean/json_locate.h"
#include "common/env.h"
#include "common/fingerprint_map.h"
#include "common/text_util.h"
#include "index/manifest.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

struct TargetRange {
  uint32_t begin = 0;
  uint32_t count = 0;
};

// Presence bits on the fingerprint's top bits (the map uses the low bits), ~16 per
// target: most corpus n-grams are rejected with one load.
struct PresenceBits {
  std::vector<uint64_t> words;
  int shift = 64;
  void Build(const FingerprintMap<TargetRange>& map) {
    const size_t bits = std::max<size_t>(4096, std::bit_ceil(map.size() * 16));
    shift = 64 - std::countr_zero(bits);
    words.assign(bits / 64, 0);
    map.ForEach([&](uint64_t fp, const TargetRange&) {
      const uint64_t b = fp >> shift;
      words[b >> 6] |= uint64_t{1} << (b & 63);
    });
  }
  bool MayContain(uint64_t fp) const {
    const uint64_t b = fp >> shift;
    return (words[b >> 6] >> (b & 63)) & 1;
  }
};

bool IsFlagged(const ItemResult& item) {
  for (Verdict v : item.verdicts) {
    if (v == Verdict::kContaminated) return true;
  }
  return false;
}

uint64_t FileSize(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0 ? static_cast<uint64_t>(st.st_size) : 0;
}

// Per-block (or per-record-stream) results, merged in input order.
struct ScanOut {
  std::vector<std::pair<uint32_t, EvidenceOccurrence>> occurrences;  // (item slot, occurrence)
  std::vector<uint64_t> totals;      // per item slot
  std::vector<uint64_t> collisions;  // per item slot
  std::vector<uint32_t> kept;        // per item slot, occurrences kept in this block
  uint64_t records = 0, bytes = 0, candidates = 0, verified = 0, collided = 0;
  SkipStats skips;
  Status status;
  void Init(size_t items) {
    totals.assign(items, 0);
    collisions.assign(items, 0);
    kept.assign(items, 0);
  }
};

class Scanner {
 public:
  Scanner(const std::vector<EvidenceTarget>& targets, const std::vector<uint32_t>& order,
          const FingerprintMap<TargetRange>& map, const PresenceBits& bits,
          const std::vector<uint32_t>& target_slot,
          size_t items, const TextOptions& text, const ReadOptions& read,
          const EvidenceOptions& options)
      : targets_(targets), order_(order), map_(map), bits_(bits), target_slot_(target_slot), items_(items),
        text_(text), options_(options), tokenizer_(text), locator_(read) {}

  // kind: 0 JSONL (raw_line is the JSON line), 1 text (raw_line starts with the
  // text), 2 no raw bytes known.
  void Process(const Record& rec, std::string_view raw_line, int kind, ScanOut* out) {
    ++out->records;
    tokenizer_.Tokenize(rec.text, &tokens_);
    ComputeFingerprints(tokens_, text_, &fps_);
    const size_t n = static_cast<size_t>(text_.ngram);
    bool have_text = false;
    touched_.clear();
    for (size_t i = 0; i < fps_.size(); ++i) {
      if (!bits_.MayContain(fps_[i])) continue;
      const TargetRange* r = map_.Find(fps_[i]);
      if (r == nullptr) continue;
      for (uint32_t k = r->begin; k < r->begin + r->count; ++k) {
        const uint32_t ti = order_[k];
        const EvidenceTarget& t = targets_[ti];
        const uint32_t slot = target_slot_[ti];
        ++out->candidates;
        bool same = t.token_hashes.size() == n;
        for (size_t j = 0; same && j < n; ++j) same = tokens_[i + j].hash == t.token_hashes[j];
        if (same) {
          if (!have_text) {
            tokenizer_.TokenizeWithText(rec.text, &text_tokens_, &normalized_);
            have_text = true;
          }
          same = t.tokens.size() == n;
          for (size_t j = 0; same && j < n; ++j) same = normalized_[i + j] == t.tokens[j];
        }
        if (!same) {
          ++out->collided;
          ++out->collisions[slot];
          continue;
        }
        ++out->verified;
        auto& pos = positions_[slot];
        if (pos.empty()) touched_.push_back(slot);
        if (pos.empty() || pos.back() != i) pos.push_back(static_cast<uint32_t>(i));
      }
    }
    if (touched_.empty()) return;
    std::sort(touched_.begin(), touched_.end());
    bool located_ok = false;
    if (kind == 0) {
      const Status s = locator_.Locate(raw_line, &located_);
      located_ok = s.ok() && located_.text == rec.text;
    }
    for (uint32_t slot : touched_) {
      std::vector<uint32_t>& pos = positions_[slot];
      for (const TokenRun& run : MergeMatchedRuns(pos, text_.ngram)) {
        ++out->totals[slot];
        if (out->kept[slot] >= options_.max_occurrences_per_item) continue;
        ++out->kept[slot];
        EvidenceOccurrence o;
        o.file = *rec.path;
        o.line = rec.line;
        o.record_id = rec.id;
        o.line_offset = rec.byte_offset;
        o.text_begin = tokens_[run.begin].begin;
        o.text_end = tokens_[run.end - 1].end;
        o.tokens = run.end - run.begin;
        for (uint32_t p : pos) {
          if (p >= run.begin && p + n <= run.end) {
            if (o.ngrams == 0) o.first_fingerprint = fps_[p];
            ++o.ngrams;
          }
        }
        if (kind == 1) {
          o.raw_begin = static_cast<int64_t>(rec.byte_offset + o.text_begin);
          o.raw_end = static_cast<int64_t>(rec.byte_offset + o.text_end);
        } else if (kind == 0 && located_ok) {
          SetRawOffsets(rec.byte_offset, raw_line, &o);
        }
        MakeSnippet(rec.text, &o);
        out->occurrences.emplace_back(slot, std::move(o));
      }
      pos.clear();
    }
  }

  void EnsureSlots() { positions_.resize(items_); }

 private:
  void SetRawOffsets(uint64_t line_offset, std::string_view line, EvidenceOccurrence* o) {
    const JsonStringPiece* first = nullptr;
    const JsonStringPiece* last = nullptr;
    for (const JsonStringPiece& p : located_.pieces) {
      const size_t pb = p.text_begin, pe = p.text_begin + p.decoded.size();
      if (first == nullptr && o->text_begin >= pb && o->text_begin < pe) first = &p;
      if (o->text_end > pb && o->text_end <= pe) last = &p;
    }
    if (first == nullptr || last == nullptr) return;
    const std::string_view ft = line.substr(first->raw_begin, first->raw_end - first->raw_begin);
    const std::string_view lt = line.substr(last->raw_begin, last->raw_end - last->raw_begin);
    o->raw_begin = static_cast<int64_t>(line_offset + first->raw_begin +
                                        RawOffsetInJsonString(ft, o->text_begin - first->text_begin));
    o->raw_end = static_cast<int64_t>(line_offset + last->raw_begin +
                                      RawOffsetInJsonString(lt, o->text_end - last->text_begin));
  }

  void MakeSnippet(std::string_view text, EvidenceOccurrence* o) const {
    const size_t b = o->text_begin, e = o->text_end;
    const size_t ctx = options_.snippet_context;
    size_t shown_end = e;
    bool clipped = false;
    if (e - b > options_.max_snippet_span) {
      shown_end = Utf8CharStart(text, b + options_.max_snippet_span);
      clipped = true;
    }
    const size_t s0 = Utf8CharStart(text, b > ctx ? b - ctx : 0);
    std::string snip(text.substr(s0, b - s0));
    o->snippet_match_begin = static_cast<uint32_t>(snip.size());
    snip.append(text.substr(b, shown_end - b));
    o->snippet_match_end = static_cast<uint32_t>(snip.size());
    if (!clipped) {
      size_t s1 = std::min(text.size(), e + ctx);
      if (s1 < text.size()) s1 = Utf8CharStart(text, s1);
      const std::string_view after = text.substr(e, s1 - e);
      snip.append(after.substr(0, ValidUtf8Prefix(after)));
    }
    o->snippet = std::move(snip);
  }

  const std::vector<EvidenceTarget>& targets_;
  const std::vector<uint32_t>& order_;
  const FingerprintMap<TargetRange>& map_;
  const PresenceBits& bits_;
  const std::vector<uint32_t>& target_slot_;
  size_t items_;
  const TextOptions& text_;
  const EvidenceOptions& options_;
  Tokenizer tokenizer_;
  JsonFieldLocator locator_;
  LocatedText located_;
  std::vector<Token> tokens_, text_tokens_;
  std::vector<std::string> normalized_;
  std::vector<uint64_t> fps_;
  std::vector<std::vector<uint32_t>> positions_;
  std::vector<uint32_t> touched_;
};

void Merge(ScanOut& block, EvidenceReport* report, size_t cap) {
  for (auto& [slot, occ] : block.occurrences) {
    ItemEvidence& it = report->items[slot];
    if (it.occurrences.size() < cap) it.occurrences.push_back(std::move(occ));
  }
  for (size_t s = 0; s < block.totals.size(); ++s) {
    report->items[s].occurrences_total += block.totals[s];
    report->items[s].collisions += block.collisions[s];
  }
  EvidenceStats& st = report->stats;
  st.records += block.records;
  st.bytes += block.bytes;
  st.candidates += block.candidates;
  st.verified += block.verified;
  st.collisions += block.collided;
  st.skips.Add(block.skips);
}

}  // namespace

std::string RemapCorpusPath(const std::string& path, const EvidenceOptions& options) {
  for (const auto& [from, to] : options.root_remaps) {
    if (from.empty()) continue;
    if (path.compare(0, from.size(), from) == 0 &&
        (path.size() == from.size() || from.back() == '/' || path[from.size()] == '/')) {
      return to + path.substr(from.size());
    }
  }
  return path;
}

Result<std::vector<EvidenceTarget>> CollectEvidenceTargets(const std::vector<BenchmarkResult>& results,
                                                           const TextOptions& text,
                                                           const EvidenceOptions& options,
                                                           uint64_t* unresolved) {
  TM_RETURN_IF_ERROR(text.Validate());
  *unresolved = 0;
  std::vector<EvidenceTarget> targets;
  Tokenizer tokenizer(text);
  std::vector<Token> tokens;
  std::vector<std::string> normalized;
  std::vector<uint64_t> fps;
  const size_t n = static_cast<size_t>(text.ngram);
  for (size_t b = 0; b < results.size(); ++b) {
    const BenchmarkResult& r = results[b];
    // Items wanted, by line (the probe reads the same file in the same order).
    std::unordered_map<uint64_t, uint32_t> by_line;
    for (size_t i = 0; i < r.items.size(); ++i) {
      const ItemResult& it = r.items[i];
      if (it.whole.hit_fingerprints.empty()) continue;
      if (options.only_contaminated && !IsFlagged(it)) continue;
      by_line[it.line] = static_cast<uint32_t>(i);
    }
    if (by_line.empty()) continue;
    if (!r.input_checksum.empty()) {
      TM_ASSIGN_OR_RETURN(const std::string bytes, ReadFileToString(r.spec.path));
      if (Hex64(Checksum64(bytes)) != r.input_checksum) {
        return Status::Mismatch(r.spec.path + ": benchmark file changed since it was probed (checksum " +
                                Hex64(Checksum64(bytes)) + ", probe saw " + r.input_checksum + ")");
      }
    }
    TM_ASSIGN_OR_RETURN(std::unique_ptr<RecordReader> reader, RecordReader::Open(r.spec.path, r.spec.read));
    Record rec;
    size_t found = 0;
    while (found < by_line.size()) {
      TM_ASSIGN_OR_RETURN(const bool more, reader->Next(&rec));
      if (!more) break;
      const auto hit = by_line.find(rec.line);
      if (hit == by_line.end()) continue;
      const ItemResult& it = r.items[hit->second];
      if (rec.id != it.id) {
        return Status::Mismatch(r.spec.path + ":" + std::to_string(rec.line) + ": item id is " + rec.id +
                                ", the probe result says " + it.id);
      }
      ++found;
      tokenizer.TokenizeWithText(rec.text, &tokens, &normalized);
      ComputeFingerprints(tokens, text, &fps);
      for (uint64_t fp : it.whole.hit_fingerprints) {
        const auto at = std::find(fps.begin(), fps.end(), fp);
        if (at == fps.end()) {
          ++*unresolved;
          continue;
        }
        const size_t p = static_cast<size_t>(at - fps.begin());
        EvidenceTarget t;
        t.fingerprint = fp;
        t.benchmark = static_cast<uint32_t>(b);
        t.item = hit->second;
        for (size_t j = 0; j < n; ++j) {
          t.token_hashes.push_back(tokens[p + j].hash);
          t.tokens.push_back(normalized[p + j]);
        }
        targets.push_back(std::move(t));
      }
    }
    if (found < by_line.size()) {
      return Status::NotFound(r.spec.path + ": " + std::to_string(by_line.size() - found) +
                              " probed item(s) not found at their lines");
    }
  }
  return targets;
}

Result<EvidenceReport> ScanForEvidence(const std::vector<BenchmarkResult>& results,
                                       const std::vector<EvidenceTarget>& targets,
                                       const std::vector<std::string>& corpus_files,
                                       const ReadOptions& read, const TextOptions& text,
                                       const EvidenceOptions& options) {
  TM_RETURN_IF_ERROR(text.Validate());
  if (options.block_bytes == 0) return Status::InvalidArgument("block size must be > 0");
  EvidenceReport report;
  // Items: distinct (benchmark, item) of the targets, in order.
  std::map<std::pair<uint32_t, uint32_t>, uint32_t> slots;
  for (const EvidenceTarget& t : targets) slots.emplace(std::make_pair(t.benchmark, t.item), 0);
  for (auto& [key, slot] : slots) {
    slot = static_cast<uint32_t>(report.items.size());
    ItemEvidence ie;
    ie.benchmark = key.first;
    ie.item = key.second;
    if (key.first < results.size() && key.second < results[key.first].items.size()) {
      ie.benchmark_name = results[key.first].spec.name;
      ie.id = results[key.first].items[key.second].id;
    }
    report.items.push_back(std::move(ie));
  }
  std::vector<uint32_t> target_slot(targets.size());
  std::vector<uint32_t> order(targets.size());
  for (size_t i = 0; i < targets.size(); ++i) {
    target_slot[i] = slots.at({targets[i].benchmark, targets[i].item});
    ++report.items[target_slot[i]].targets;
    order[i] = static_cast<uint32_t>(i);
  }
  std::stable_sort(order.begin(), order.end(), [&](uint32_t a, uint32_t b) {
    return targets[a].fingerprint < targets[b].fingerprint;
  });
  FingerprintMap<TargetRange> map(targets.size());
  for (size_t k = 0; k < order.size();) {
    const uint64_t fp = targets[order[k]].fingerprint;
    TargetRange r;
    r.begin = static_cast<uint32_t>(k);
    while (k < order.size() && targets[order[k]].fingerprint == fp) ++k;
    r.count = static_cast<uint32_t>(k) - r.begin;
    map[fp] = r;
  }
  PresenceBits bits;
  bits.Build(map);
  report.stats.targets = targets.size();
  const size_t nitems = report.items.size();
  tbb::enumerable_thread_specific<std::unique_ptr<Scanner>> scanners([&] {
    auto s = std::make_unique<Scanner>(targets, order, map, bits, target_slot, nitems, text, read, options);
    s->EnsureSlots();
    return s;
  });
  uint64_t total_bytes = 0;
  for (const std::string& f : corpus_files) total_bytes += FileSize(f);
  uint64_t done_before = 0;
  for (const std::string& path : corpus_files) {
    if (CancelRequested()) return Status::Cancelled("evidence pass interrupted");
    TM_ASSIGN_OR_RETURN(const DetectedFormat det, DetectFormat(path, read));
    ++report.stats.files;
    if (IsLineOriented(det, read)) {
      const int kind = det.format == InputFormat::kJsonl ? 0 : 1;
      TM_ASSIGN_OR_RETURN(std::unique_ptr<BlockReader> reader, BlockReader::Open(path, read, options.block_bytes));
      Status st;
      const size_t tokens = 2 * static_cast<size_t>(tbb::this_task_arena::max_concurrency());
      tbb::parallel_pipeline(
          tokens,
          tbb::make_filter<void, std::shared_ptr<std::pair<LineBlock, ScanOut>>>(
              tbb::filter_mode::serial_in_order,
              [&](tbb::flow_control& fc) -> std::shared_ptr<std::pair<LineBlock, ScanOut>> {
                if (!st.ok() || CancelRequested()) {
                  fc.stop();
                  return nullptr;
                }
                auto w = std::make_shared<std::pair<LineBlock, ScanOut>>();
                Result<bool> more = reader->Next(&w->first);
                if (!more.ok()) st = more.status();
                if (!more.ok() || !*more) {
                  fc.stop();
                  return nullptr;
                }
                return w;
              }) &
              tbb::make_filter<std::shared_ptr<std::pair<LineBlock, ScanOut>>,
                               std::shared_ptr<std::pair<LineBlock, ScanOut>>>(
                  tbb::filter_mode::parallel,
                  [&](std::shared_ptr<std::pair<LineBlock, ScanOut>> w) {
                    Scanner& sc = *scanners.local();
                    ScanOut& out = w->second;
                    out.Init(nitems);
                    const LineBlock& block = w->first;
                    BlockParser parser(read);
                    parser.Reset(&block);
                    Record rec;
                    while (true) {
                      Result<bool> more = parser.Next(&rec);
                      if (!more.ok()) {
                        out.status = more.status();
                        break;
                      }
                      if (!*more) break;
                      const size_t rel = static_cast<size_t>(rec.byte_offset - block.byte_offset);
                      size_t eol = block.data.find('\n', rel);
                      if (eol == std::string::npos) eol = block.data.size();
                      sc.Process(rec, std::string_view(block.data).substr(rel, eol - rel), kind, &out);
                    }
                    out.bytes = block.data.size();
                    out.skips = parser.skips();
                    return w;
                  }) &
              tbb::make_filter<std::shared_ptr<std::pair<LineBlock, ScanOut>>, void>(
                  tbb::filter_mode::serial_in_order,
                  [&](std::shared_ptr<std::pair<LineBlock, ScanOut>> w) {
                    if (w == nullptr || !st.ok()) return;
                    if (!w->second.status.ok()) {
                      st = w->second.status;
                      return;
                    }
                    Merge(w->second, &report, options.max_occurrences_per_item);
                    if (options.progress != nullptr) {
                      ProgressEvent ev;
                      ev.phase = "evidence";
                      ev.done_bytes = done_before + reader->disk_bytes_read();
                      ev.total_bytes = total_bytes;
                      ev.records = report.stats.records;
                      options.progress->Update(ev);
                    }
                  }));
      if (st.ok() && CancelRequested()) st = Status::Cancelled("evidence pass interrupted");
      TM_RETURN_IF_ERROR(st);
      report.stats.skips.Add(reader->skips());
    } else {
      TM_ASSIGN_OR_RETURN(std::unique_ptr<RecordReader> reader, RecordReader::Open(path, read));
      Scanner& sc = *scanners.local();
      ScanOut out;
      out.Init(nitems);
      Record rec;
      // A whole-file text record is the file's bytes; other formats have no
      // simple raw mapping.
      const int kind = det.format == InputFormat::kText ? 1 : 2;
      while (true) {
        TM_ASSIGN_OR_RETURN(const bool more, reader->Next(&rec));
        if (!more) break;
        out.bytes += rec.text.size();
        sc.Process(rec, rec.text, kind, &out);
      }
      out.skips = reader->skips();
      Merge(out, &report, options.max_occurrences_per_item);
    }
    done_before += FileSize(path);
  }
  return report;
}

Result<EvidenceReport> RunEvidencePass(const std::vector<BenchmarkResult>& results,
                                       const std::string& index_dir, const EvidenceOptions& options) {
  TM_ASSIGN_OR_RETURN(const IndexManifest manifest, ReadManifest(index_dir));
  std::vector<std::string> files;
  for (const ManifestFile& f : manifest.AllFiles()) {
    const std::string p = RemapCorpusPath(f.path, options);
    if (FileSize(p) != f.size) {
      return Status::Mismatch(p + ": corpus file size " + std::to_string(FileSize(p)) +
                              " differs from the indexed size " + std::to_string(f.size) +
                              " (moved? use --corpus-root OLD=NEW)");
    }
    files.push_back(p);
  }
  uint64_t unresolved = 0;
  TM_ASSIGN_OR_RETURN(const std::vector<EvidenceTarget> targets,
                      CollectEvidenceTargets(results, manifest.text, options, &unresolved));
  TM_ASSIGN_OR_RETURN(EvidenceReport report,
                      ScanForEvidence(results, targets, files, manifest.read, manifest.text, options));
  report.stats.unresolved = unresolved;
  return report;
}

Status WriteEvidenceJsonl(const EvidenceReport& report, const std::string& path, Env* env) {
  AtomicFileWriter w(path, env != nullptr ? env : Env::Default());
  TM_RETURN_IF_ERROR(w.Open());
  std::string o;
  for (const ItemEvidence& it : report.items) {
    o += "{\"type\":\"item\",\"benchmark\":";
    AppendJsonString(&o, it.benchmark_name);
    o += ",\"id\":";
    AppendJsonString(&o, it.id);
    o += ",\"targets\":" + std::to_string(it.targets) +
         ",\"occurrences_total\":" + std::to_string(it.occurrences_total) +
         ",\"occurrences_shown\":" + std::to_string(it.occurrences.size()) +
         ",\"collisions\":" + std::to_string(it.collisions) + "}\n";
    for (const EvidenceOccurrence& e : it.occurrences) {
      o += "{\"type\":\"occurrence\",\"benchmark\":";
      AppendJsonString(&o, it.benchmark_name);
      o += ",\"id\":";
      AppendJsonString(&o, it.id);
      o += ",\"file\":";
      AppendJsonString(&o, e.file);
      o += ",\"line\":" + std::to_string(e.line) + ",\"record_id\":";
      AppendJsonString(&o, e.record_id);
      o += ",\"line_offset\":" + std::to_string(e.line_offset) +
           ",\"text_begin\":" + std::to_string(e.text_begin) +
           ",\"text_end\":" + std::to_string(e.text_end) +
           ",\"raw_begin\":" + std::to_string(e.raw_begin) +
           ",\"raw_end\":" + std::to_string(e.raw_end) + ",\"ngrams\":" + std::to_string(e.ngrams) +
           ",\"tokens\":" + std::to_string(e.tokens) + ",\"fingerprint\":\"" +
           Hex64(e.first_fingerprint) + "\",\"snippet\":";
      AppendJsonString(&o, e.snippet);
      o += ",\"snippet_match\":[" + std::to_string(e.snippet_match_begin) + "," +
           std::to_string(e.snippet_match_end) + "]}\n";
    }
    if (o.size() > (1 << 20)) {
      TM_RETURN_IF_ERROR(w.Append(o));
      o.clear();
    }
  }
  TM_RETURN_IF_ERROR(w.Append(o));
  return w.Commit();
}

Result<std::vector<BenchmarkResult>> LoadProbeItems(const std::string& path,
                                                    const std::vector<BenchmarkSpec>& benchmarks) {
  std::vector<BenchmarkResult> results;
  std::map<std::string, size_t> by_name;
  std::vector<std::unordered_map<std::string, uint32_t>> by_id(benchmarks.size());
  Rule listed;
  listed.name = "listed";
  for (size_t b = 0; b < benchmarks.size(); ++b) {
    BenchmarkResult r;
    r.spec = benchmarks[b];
    if (r.spec.name.empty()) r.spec.name = BaseName(r.spec.path);
    r.rules = {listed};
    TM_ASSIGN_OR_RETURN(std::unique_ptr<RecordReader> reader, RecordReader::Open(r.spec.path, r.spec.read));
    Record rec;
    while (true) {
      TM_ASSIGN_OR_RETURN(const bool more, reader->Next(&rec));
      if (!more) break;
      ItemResult it;
      it.id = rec.id;
      it.line = rec.line;
      it.verdicts = {Verdict::kClean};
      by_id[b].emplace(it.id, static_cast<uint32_t>(r.items.size()));
      r.items.push_back(std::move(it));
    }
    r.population = r.items.size();
    by_name[r.spec.name] = b;
    results.push_back(std::move(r));
  }
  TM_ASSIGN_OR_RETURN(const std::string data, ReadFileToString(path));
  simdjson::dom::parser parser;
  size_t pos = 0;
  uint64_t line_no = 0;
  while (pos < data.size()) {
    size_t eol = data.find('\n', pos);
    if (eol == std::string::npos) eol = data.size();
    const std::string_view line(data.data() + pos, eol - pos);
    pos = eol + 1;
    ++line_no;
    if (line.find_first_not_of(" \t\r") == std::string_view::npos) continue;
    const std::string where = path + ":" + std::to_string(line_no);
    simdjson::dom::element doc;
    if (parser.parse(line.data(), line.size()).get(doc) != simdjson::SUCCESS) {
      return Status::BadInput(where + ": malformed JSON: " + ClipExcerpt(line));
    }
    std::string_view bench, id;
    if (doc["benchmark"].get(bench) != simdjson::SUCCESS || doc["id"].get(id) != simdjson::SUCCESS) {
      return Status::BadInput(where + ": needs string fields benchmark and id");
    }
    simdjson::dom::array fps;
    if (doc["hit_fingerprints"].get(fps) != simdjson::SUCCESS &&
        doc.at_pointer("/item/hit_fingerprints").get(fps) != simdjson::SUCCESS) {
      continue;  // a line without fingerprints contributes nothing
    }
    const auto b = by_name.find(std::string(bench));
    // A probe's items.jsonl holds every benchmark of the audit; only the ones given
    // (--benchmark NAME=FILE) are wanted.
    if (b == by_name.end()) continue;
    const auto it = by_id[b->second].find(std::string(id));
    if (it == by_id[b->second].end()) {
      return Status::NotFound(where + ": benchmark " + std::string(bench) + " has no item " + std::string(id));
    }
    ItemResult& item = results[b->second].items[it->second];
    for (auto v : fps) {
      std::string_view hex;
      if (v.get(hex) != simdjson::SUCCESS || hex.size() != 16) {
        return Status::BadInput(where + ": hit_fingerprints must be 16-digit hex strings");
      }
      uint64_t fp = 0;
      for (char c : hex) {
        int d = c >= '0' && c <= '9' ? c - '0' : c >= 'a' && c <= 'f' ? c - 'a' + 10 : c >= 'A' && c <= 'F' ? c - 'A' + 10 : -1;
        if (d < 0) return Status::BadInput(where + ": bad hex fingerprint " + std::string(hex));
        fp = fp * 16 + static_cast<uint64_t>(d);
      }
      item.whole.hit_fingerprints.push_back(fp);
    }
    if (!item.whole.hit_fingerprints.empty()) item.verdicts = {Verdict::kContaminated};
    item.whole.hits = static_cast<uint32_t>(item.whole.hit_fingerprints.size());
  }
  return results;
}

}  // namespace tidemark
