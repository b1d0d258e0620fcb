// CleanCorpus: stream corpus files, find records that share n-grams with the
// benchmarks, write a cleaned copy and a log. docs/cleaning.md.
#include <sys/stat.h>

#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_pipeline.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <atomic>
#include <cstdio>
#include <cstring>
#include <filesystem>
#include <memory>
#include <thread>

#include "clean/clean_internal.h"
#include "clean/codec.h"
#include "clean/json_locate.h"
#include "common/env.h"
#include "common/text_util.h"
#include "tidemark/clean.h"
#include "tidemark/tokenizer.h"

namespace tidemark {

std::vector<TokenRun> MergeMatchedRuns(const std::vector<uint32_t>& positions, int n) {
  std::vector<TokenRun> runs;
  for (uint32_t p : positions) {
    const uint32_t e = p + static_cast<uint32_t>(n);
    if (!runs.empty() && p <= runs.back().end) {
      runs.back().end = std::max(runs.back().end, e);
    } else {
      runs.push_back(TokenRun{p, e});
    }
  }
  return runs;
}

Result<std::vector<std::string>> MapOutputPaths(const std::vector<std::string>& inputs,
                                                const std::string& output_dir) {
  namespace fs = std::filesystem;
  std::error_code ec;
  std::vector<fs::path> abs;
  for (const std::string& in : inputs) {
    fs::path p = fs::weakly_canonical(fs::absolute(in, ec), ec);
    if (ec) return Status::IOError(in + ": " + ec.message());
    abs.push_back(p);
  }
  // Common directory of all inputs, component by component.
  fs::path common = abs.empty() ? fs::path() : abs[0].parent_path();
  for (const fs::path& p : abs) {
    fs::path dir = p.parent_path(), prefix;
    auto a = common.begin(), b = dir.begin();
    while (a != common.end() && b != dir.end() && *a == *b) {
      prefix /= *a;
      ++a;
      ++b;
    }
    common = prefix;
  }
  const fs::path out_abs = fs::weakly_canonical(fs::absolute(output_dir, ec), ec);
  std::vector<std::string> outs;
  for (size_t i = 0; i < abs.size(); ++i) {
    const fs::path out = out_abs / abs[i].lexically_relative(common);
    for (const fs::path& in : abs) {
      if (out == in) {
        return Status::InvalidArgument("output " + out.string() + " would overwrite input " +
                                       inputs[i] + "; pick another output directory");
      }
    }
    outs.push_back(out.string());
  }
  for (size_t i = 0; i < outs.size(); ++i) {
    for (size_t j = i + 1; j < outs.size(); ++j) {
      if (outs[i] == outs[j]) {
        return Status::InvalidArgument("inputs " + inputs[i] + " and " + inputs[j] +
                                       " map to the same output " + outs[i]);
      }
    }
  }
  return outs;
}

namespace {

// The text of one record split into the JSON string pieces it came from (or one
// piece for plain text) and the bytes between them (field/array joiners).
struct PieceText {
  std::vector<std::string> gaps;    // gaps[i] comes before pieces[i]; gaps.back() after all
  std::vector<std::string> pieces;
  std::vector<uint32_t> raw_begin;  // JSON: token range of piece i in the line
  std::vector<uint32_t> raw_end;

  std::string Join(std::vector<size_t>* piece_begin) const {
    std::string t;
    piece_begin->clear();
    for (size_t i = 0; i < pieces.size(); ++i) {
      t += gaps[i];
      piece_begin->push_back(t.size());
      t += pieces[i];
    }
    t += gaps.back();
    return t;
  }
};

struct MatchScan {
  uint32_t tokens = 0;
  uint32_t hits = 0;
  std::vector<uint32_t> positions;   // n-gram positions with a hit
  std::vector<TokenRun> runs;
  uint32_t covered = 0;
  double coverage() const { return tokens == 0 ? 0.0 : static_cast<double>(covered) / tokens; }
};

class Worker {
 public:
  Worker(const BenchmarkTable& table, const CleanOptions& options,
         std::atomic<uint8_t>* seen)
      : table_(table), options_(options), seen_(seen), tokenizer_(options.text),
        locator_(options.corpus_read) {}

  // Tokenizes `text` and looks up every n-gram. With `refs`, collects the matched
  // items and marks matched n-grams as seen.
  void Scan(std::string_view text, MatchScan* scan, std::vector<ItemRef>* refs) {
    tokenizer_.Tokenize(text, &tokens_);
    ComputeFingerprints(tokens_, options_.text, &fps_);
    scan->tokens = static_cast<uint32_t>(tokens_.size());
    table_.MatchPositions(fps_, &scan->positions);
    scan->hits = static_cast<uint32_t>(scan->positions.size());
    if (refs != nullptr) {
      for (uint32_t i : scan->positions) {
        const std::span<const ItemRef> r = table_.Find(fps_[i]);
        refs->insert(refs->end(), r.begin(), r.end());
        seen_[table_.Slot(fps_[i])].store(1, std::memory_order_relaxed);
      }
    }
    scan->runs = MergeMatchedRuns(scan->positions, options_.text.ngram);
    scan->covered = 0;
    for (const TokenRun& r : scan->runs) scan->covered += r.end - r.begin;
  }

  const std::vector<Token>& tokens() const { return tokens_; }
  JsonFieldLocator& locator() { return locator_; }

 private:
  const BenchmarkTable& table_;
  const CleanOptions& options_;
  std::atomic<uint8_t>* seen_;
  Tokenizer tokenizer_;
  JsonFieldLocator locator_;
  std::vector<Token> tokens_;
  std::vector<uint64_t> fps_;
};

struct ByteSpan {
  size_t begin, end;
};

std::vector<ByteSpan> RunsToBytes(const std::vector<TokenRun>& runs, const std::vector<Token>& tokens) {
  std::vector<ByteSpan> out;
  for (const TokenRun& r : runs) out.push_back(ByteSpan{tokens[r.begin].begin, tokens[r.end - 1].end});
  return out;
}

// Replaces the parts of `spans` (joined-text offsets) that fall inside pieces.
void RedactPieces(PieceText* pt, const std::vector<ByteSpan>& spans, const std::string& replacement,
                  uint64_t* replaced) {
  std::vector<size_t> begins;
  (void)pt->Join(&begins);
  for (size_t i = 0; i < pt->pieces.size(); ++i) {
    const size_t pb = begins[i], pe = pb + pt->pieces[i].size();
    std::string out;
    size_t cursor = 0;
    bool changed = false;
    for (const ByteSpan& s : spans) {
      const size_t b = std::max(s.begin, pb), e = std::min(s.end, pe);
      if (b >= e) continue;
      out.append(pt->pieces[i], cursor, b - pb - cursor);
      out += replacement;
      cursor = e - pb;
      changed = true;
      ++*replaced;
    }
    if (changed) {
      out.append(pt->pieces[i], cursor, std::string::npos);
      pt->pieces[i] = std::move(out);
    }
  }
}

constexpr int kMaxRedactRounds = 4;

struct RecordOutcome {
  enum Action { kKeep, kDrop, kRedact } action = kKeep;
  std::string new_line;  // kRedact: the rewritten record (without its newline)
  std::string reason;    // fallback drops
  int rounds = 0;
  uint64_t spans = 0;
};

void AppendLog(std::string* log, const std::string& file, const Record& rec, const MatchScan& scan,
               const std::vector<ByteSpan>& spans, const std::vector<ItemRef>& refs_sorted,
               const RecordOutcome& outcome, const BenchmarkTable& table, size_t max_matches,
               uint32_t ngrams) {
  std::string& o = *log;
  o += "{\"file\":";
  AppendJsonString(&o, file);
  o += ",\"line\":" + std::to_string(rec.line);
  o += ",\"byte_offset\":" + std::to_string(rec.byte_offset);
  o += ",\"id\":";
  AppendJsonString(&o, rec.id);
  o += ",\"action\":";
  AppendJsonString(&o, outcome.action == RecordOutcome::kRedact ? "redact" : "drop");
  if (!outcome.reason.empty()) {
    o += ",\"reason\":";
    AppendJsonString(&o, outcome.reason);
  }
  o += ",\"hits\":" + std::to_string(scan.hits);
  o += ",\"ngrams\":" + std::to_string(ngrams);
  char buf[32];
  std::snprintf(buf, sizeof(buf), "%.6f", scan.coverage());
  o += ",\"coverage\":";
  o += buf;
  o += ",\"spans\":[";
  for (size_t i = 0; i < spans.size(); ++i) {
    if (i > 0) o += ',';
    o += "[" + std::to_string(spans[i].begin) + "," + std::to_string(spans[i].end) + "]";
  }
  o += "]";
  if (outcome.action == RecordOutcome::kRedact) o += ",\"rounds\":" + std::to_string(outcome.rounds);
  o += ",\"matches\":[";
  for (size_t i = 0; i < refs_sorted.size() && i < max_matches; ++i) {
    if (i > 0) o += ',';
    const auto& b = table.benchmarks()[refs_sorted[i].benchmark];
    o += "{\"benchmark\":";
    AppendJsonString(&o, b.spec.name);
    o += ",\"id\":";
    AppendJsonString(&o, b.items[refs_sorted[i].item].id);
    o += "}";
  }
  o += "],\"matches_total\":" + std::to_string(refs_sorted.size()) + "}\n";
}

// A changed record: bytes [begin, end) of its block are replaced by `text`.
struct Edit {
  size_t begin, end;
  std::string text;
};

struct BlockWork {
  LineBlock block;
  uint64_t disk_bytes = 0;
  // The output is block.data with these (ascending, disjoint) edits applied; the
  // writer stage appends the untouched stretches straight from block.data.
  std::vector<Edit> edits;
  std::string log;
  uint64_t log_entries = 0;
  CleanFileStats stats;
  Status status;
};

class FileCleaner {
 public:
  FileCleaner(const BenchmarkTable& table, const CleanOptions& options)
      : table_(table), options_(options) {}

  // Decides one record. `raw_line`: JSON object line (JSONL) or the text line (text
  // lines / whole file), without its newline. kRedact: *new_line gets the rewritten
  // record.
  RecordOutcome::Action Process(Worker& w, const Record& rec, std::string_view raw_line, bool is_json,
                                const std::string& display_path, BlockWork* work,
                                std::string* new_line) {
    MatchScan scan;
    std::vector<ItemRef> refs;
    w.Scan(rec.text, &scan, &refs);
    ++work->stats.records;
    if (scan.hits == 0 || scan.hits < options_.min_hits || scan.coverage() < options_.min_coverage) {
      return RecordOutcome::kKeep;
    }
    ++work->stats.contaminated;
    const uint32_t ngrams = static_cast<uint32_t>(scan.tokens >= static_cast<uint32_t>(options_.text.ngram)
                                                      ? scan.tokens - options_.text.ngram + 1
                                                      : 0);
    std::sort(refs.begin(), refs.end(), [](const ItemRef& a, const ItemRef& b) {
      return a.benchmark != b.benchmark ? a.benchmark < b.benchmark : a.item < b.item;
    });
    refs.erase(std::unique(refs.begin(), refs.end(),
                           [](const ItemRef& a, const ItemRef& b) {
                             return a.benchmark == b.benchmark && a.item == b.item;
                           }),
               refs.end());
    const std::vector<ByteSpan> spans = RunsToBytes(scan.runs, w.tokens());
    RecordOutcome outcome;
    if (options_.mode == CleanMode::kDrop) {
      outcome.action = RecordOutcome::kDrop;
    } else {
      Redact(w, rec, raw_line, is_json, spans, &outcome);
    }
    if (outcome.action == RecordOutcome::kDrop) {
      ++work->stats.dropped;
      if (!outcome.reason.empty()) ++work->stats.redact_fallback_drops;
    } else {
      ++work->stats.redacted;
      work->stats.spans_redacted += outcome.spans;
      *new_line = std::move(outcome.new_line);
    }
    AppendLog(&work->log, display_path, rec, scan, spans, refs, outcome, table_,
              options_.max_logged_matches, ngrams);
    ++work->log_entries;
    return outcome.action;
  }

 private:
  void Redact(Worker& w, const Record& rec, std::string_view raw_line, bool is_json,
              const std::vector<ByteSpan>& first_spans, RecordOutcome* outcome) {
    PieceText pt;
    if (is_json) {
      LocatedText located;
      const Status s = w.locator().Locate(raw_line, &located);
      if (!s.ok() || located.text != rec.text) {
        outcome->action = RecordOutcome::kDrop;
        outcome->reason = s.ok() ? "text field differs from the reader's text; cannot redact"
                                 : "cannot locate text field: " + s.message();
        return;
      }
      size_t cursor = 0;
      for (const JsonStringPiece& p : located.pieces) {
        pt.gaps.push_back(located.text.substr(cursor, p.text_begin - cursor));
        pt.pieces.push_back(p.decoded);
        pt.raw_begin.push_back(p.raw_begin);
        pt.raw_end.push_back(p.raw_end);
        cursor = p.text_begin + p.decoded.size();
      }
      pt.gaps.push_back(located.text.substr(cursor));
    } else {
      if (raw_line.substr(0, rec.text.size()) != rec.text) {
        outcome->action = RecordOutcome::kDrop;
        outcome->reason = "record text is not the raw line; cannot redact";
        return;
      }
      pt.gaps = {"", std::string(raw_line.substr(rec.text.size()))};
      pt.pieces = {std::string(rec.text)};
    }
    std::vector<ByteSpan> spans = first_spans;
    std::vector<size_t> begins;
    MatchScan scan;
    for (int round = 1; round <= kMaxRedactRounds; ++round) {
      RedactPieces(&pt, spans, options_.replacement, &outcome->spans);
      outcome->rounds = round;
      const std::string text = pt.Join(&begins);
      w.Scan(text, &scan, nullptr);
      if (scan.hits == 0) break;
      spans = RunsToBytes(scan.runs, w.tokens());
      if (round == kMaxRedactRounds) {
        outcome->action = RecordOutcome::kDrop;
        outcome->reason = "matches remain after redaction";
        return;
      }
    }
    outcome->action = RecordOutcome::kRedact;
    if (!is_json) {
      outcome->new_line = pt.pieces[0] + pt.gaps.back();
      return;
    }
    std::string line;
    size_t cursor = 0;
    for (size_t i = 0; i < pt.pieces.size(); ++i) {
      line.append(raw_line.substr(cursor, pt.raw_begin[i] - cursor));
      AppendJsonString(&line, pt.pieces[i]);
      cursor = pt.raw_end[i];
    }
    line.append(raw_line.substr(cursor));
    outcome->new_line = std::move(line);
  }

  const BenchmarkTable& table_;
  const CleanOptions& options_;
};

// Commits one finished output on a helper thread. Destroying it without Wait waits
// for the commit in flight (and a writer never committed abandons its temp file).
class BackgroundCommit {
 public:
  ~BackgroundCommit() { (void)Wait(); }
  void Start(std::unique_ptr<CompressedFileWriter> w) {
    writer_ = std::move(w);
    thread_ = std::thread([this] { status_ = writer_->Commit(); });
  }
  Status Wait() {
    if (thread_.joinable()) thread_.join();
    writer_.reset();
    Status s = status_;
    status_ = Status::Ok();
    return s;
  }

 private:
  std::unique_ptr<CompressedFileWriter> writer_;
  std::thread thread_;
  Status status_;
};

uint64_t LinesIn(std::string_view s) {
  if (s.empty()) return 0;
  uint64_t n = static_cast<uint64_t>(std::count(s.begin(), s.end(), '\n'));
  if (s.back() != '\n') ++n;
  return n;
}

uint64_t FileSize(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0 ? static_cast<uint64_t>(st.st_size) : 0;
}

std::string SubsetFileName(const std::string& name, const std::string& path) {
  std::string base = BaseName(path);
  for (const char* ext : {".zst", ".zstd", ".gz"}) {
    const std::string e = ext;
    if (base.size() > e.size() && base.compare(base.size() - e.size(), e.size(), e) == 0) {
      base.resize(base.size() - e.size());
      break;
    }
  }
  const size_t dot = base.rfind('.');
  const std::string ext = dot == std::string::npos ? ".jsonl" : base.substr(dot);
  std::string stem = name;
  if (stem.size() > ext.size() && stem.compare(stem.size() - ext.size(), ext.size(), ext) == 0) {
    stem.resize(stem.size() - ext.size());
  }
  for (char& c : stem) {
    if (c == '/' || c == '\\') c = '_';
  }
  return stem + ".clean" + ext;
}

}  // namespace

Result<CleanSummary> CleanCorpus(const BenchmarkTable& table,
                                 const std::vector<std::string>& corpus_files,
                                 const std::string& output_dir, const CleanOptions& options) {
  TM_RETURN_IF_ERROR(options.text.Validate());
  if (!(table.text() == options.text)) {
    return Status::Mismatch("benchmark table built with " + table.text().ToString() +
                            ", cleaning asked for " + options.text.ToString());
  }
  if (options.min_coverage < 0.0 || options.min_coverage > 1.0) {
    return Status::InvalidArgument("min coverage must be in [0, 1]");
  }
  if (options.block_bytes == 0) return Status::InvalidArgument("block size must be > 0");
  if (corpus_files.empty()) return Status::InvalidArgument("no corpus file given");
  Env* env = options.env != nullptr ? options.env : Env::Default();
  TM_ASSIGN_OR_RETURN(const std::vector<std::string> outputs, MapOutputPaths(corpus_files, output_dir));
  CleanSummary summary;
  summary.log_path = options.log_path.empty() ? JoinPath(output_dir, "tidemark-clean-log.jsonl")
                                              : options.log_path;
  {
    std::error_code ec;
    const std::string log_abs =
        std::filesystem::weakly_canonical(std::filesystem::absolute(summary.log_path, ec), ec).string();
    for (size_t i = 0; i < outputs.size(); ++i) {
      if (outputs[i] == log_abs) {
        return Status::InvalidArgument("log path " + summary.log_path + " is also the output of " +
                                       corpus_files[i]);
      }
    }
  }
  summary.distinct_ngrams = table.distinct_ngrams();
  TM_RETURN_IF_ERROR(env->CreateDirs(output_dir));
  TM_RETURN_IF_ERROR(env->CreateDirs(DirName(summary.log_path)));

  std::unique_ptr<std::atomic<uint8_t>[]> seen(new std::atomic<uint8_t>[table.distinct_ngrams() + 1]);
  for (size_t i = 0; i <= table.distinct_ngrams(); ++i) seen[i].store(0, std::memory_order_relaxed);

  AtomicFileWriter log(summary.log_path, env);
  TM_RETURN_IF_ERROR(log.Open());

  uint64_t total_bytes = 0;
  for (const std::string& f : corpus_files) total_bytes += FileSize(f);
  uint64_t done_before = 0, records_before = 0;
  FileCleaner cleaner(table, options);
  BackgroundCommit committer;
  tbb::enumerable_thread_specific<std::unique_ptr<Worker>> workers(
      [&] { return std::make_unique<Worker>(table, options, seen.get()); });

  for (size_t fi = 0; fi < corpus_files.size(); ++fi) {
    if (CancelRequested()) return Status::Cancelled("cleaning interrupted");
    const std::string& path = corpus_files[fi];
    TM_ASSIGN_OR_RETURN(const DetectedFormat det, DetectFormat(path, options.corpus_read));
    TM_RETURN_IF_ERROR(env->CreateDirs(DirName(outputs[fi])));
    auto out_ptr = std::make_unique<CompressedFileWriter>(outputs[fi], det.compression,
                                                          options.compression_level, env,
                                                          FileOptions{options.direct_writes});
    CompressedFileWriter& out = *out_ptr;
    TM_RETURN_IF_ERROR(out.Open());
    CleanFileStats fstats;
    fstats.input = path;
    fstats.output = outputs[fi];

    if (det.format == InputFormat::kText && !options.corpus_read.text_lines) {
      // One document per file: the whole decompressed file is the record text.
      TM_ASSIGN_OR_RETURN(const std::string text, ReadDecompressedFile(path, det.compression));
      if (text.size() > options.corpus_read.max_record_bytes || text.size() >= (1ull << 32)) {
        return Status::BadInput(path + ": document of " + std::to_string(text.size()) +
                                " bytes exceeds the record limit; use text lines");
      }
      Record rec;
      rec.text = text;
      rec.id = "1";
      rec.path = &path;
      rec.line = 1;
      rec.record_number = 1;
      BlockWork work;
      std::string new_line;
      const RecordOutcome::Action a =
          cleaner.Process(*workers.local(), rec, text, false, path, &work, &new_line);
      TM_RETURN_IF_ERROR(out.Append(a == RecordOutcome::kKeep     ? std::string_view(text)
                                    : a == RecordOutcome::kRedact ? std::string_view(new_line)
                                                                  : std::string_view()));
      TM_RETURN_IF_ERROR(log.Append(work.log));
      summary.log_entries += work.log_entries;
      fstats = work.stats;
      fstats.input = path;
      fstats.output = outputs[fi];
      fstats.bytes_in = text.size();
    } else if (det.format == InputFormat::kJsonl || det.format == InputFormat::kText) {
      const bool is_json = det.format == InputFormat::kJsonl;
      TM_ASSIGN_OR_RETURN(std::unique_ptr<BlockReader> reader,
                          BlockReader::Open(path, options.corpus_read, options.block_bytes));
      Status st;
      uint64_t expect_offset = 0;
      bool stop = false;
      const size_t tokens = 2 * static_cast<size_t>(tbb::this_task_arena::max_concurrency());
      tbb::parallel_pipeline(
          tokens,
          tbb::make_filter<void, std::shared_ptr<BlockWork>>(
              tbb::filter_mode::serial_in_order,
              [&](tbb::flow_control& fc) -> std::shared_ptr<BlockWork> {
                if (stop || !st.ok() || CancelRequested()) {
                  fc.stop();
                  return nullptr;
                }
                auto work = std::make_shared<BlockWork>();
                Result<bool> more = reader->Next(&work->block);
                if (!more.ok()) {
                  st = more.status();
                  fc.stop();
                  return nullptr;
                }
                if (!*more) {
                  fc.stop();
                  return nullptr;
                }
                if (work->block.byte_offset != expect_offset) {
                  st = Status::BadInput(path + "@" + std::to_string(expect_offset) +
                                        ": a record longer than the record limit (" +
                                        std::to_string(options.corpus_read.max_record_bytes) +
                                        " bytes) cannot be copied into the cleaned file; raise the limit");
                  fc.stop();
                  return nullptr;
                }
                expect_offset = work->block.byte_offset + work->block.data.size();
                work->disk_bytes = reader->disk_bytes_read();
                return work;
              }) &
              tbb::make_filter<std::shared_ptr<BlockWork>, std::shared_ptr<BlockWork>>(
                  tbb::filter_mode::parallel,
                  [&](std::shared_ptr<BlockWork> work) {
                    Worker& w = *workers.local();
                    // A fresh parser per block keeps the skip examples in file order.
                    BlockParser parser(options.corpus_read);
                    parser.Reset(&work->block);
                    const std::string& data = work->block.data;
                    size_t cursor = 0;
                    Record rec;
                    std::vector<Edit>& edits = work->edits;
                    std::string new_line;
                    while (true) {
                      Result<bool> more = parser.Next(&rec);
                      if (!more.ok()) {
                        work->status = more.status();
                        return work;
                      }
                      if (!*more) break;
                      const size_t rel = static_cast<size_t>(rec.byte_offset - work->block.byte_offset);
                      size_t eol = data.find('\n', rel);
                      if (eol == std::string::npos) eol = data.size();
                      const size_t next = eol < data.size() ? eol + 1 : eol;
                      if (rel > cursor) {
                        work->stats.passed_unchecked += LinesIn(std::string_view(data).substr(cursor, rel - cursor));
                      }
                      // The record's own line end stays unless the record is dropped.
                      const RecordOutcome::Action a =
                          cleaner.Process(w, rec, std::string_view(data).substr(rel, eol - rel), is_json,
                                          path, work.get(), &new_line);
                      if (a == RecordOutcome::kDrop) {
                        edits.push_back(Edit{rel, next, std::string()});
                      } else if (a == RecordOutcome::kRedact) {
                        edits.push_back(Edit{rel, eol, std::move(new_line)});
                      }
                      cursor = next;
                    }
                    work->stats.passed_unchecked += LinesIn(std::string_view(data).substr(cursor));
                    work->stats.skips = parser.skips();
                    work->stats.bytes_in = data.size();
                    return work;
                  }) &
              tbb::make_filter<std::shared_ptr<BlockWork>, void>(
                  tbb::filter_mode::serial_in_order, [&](std::shared_ptr<BlockWork> work) {
                    if (!st.ok() || work == nullptr) return;
                    if (!work->status.ok()) {
                      st = work->status;
                      stop = true;
                      return;
                    }
                    const std::string_view data(work->block.data);
                    Status s;
                    size_t at = 0;
                    for (const Edit& e : work->edits) {
                      if (s.ok() && e.begin > at) s = out.Append(data.substr(at, e.begin - at));
                      if (s.ok() && !e.text.empty()) s = out.Append(e.text);
                      at = e.end;
                    }
                    if (s.ok() && at < data.size()) s = out.Append(data.substr(at));
                    if (s.ok()) s = log.Append(work->log);
                    if (!s.ok()) {
                      st = s;
                      stop = true;
                      return;
                    }
                    summary.log_entries += work->log_entries;
                    fstats.records += work->stats.records;
                    fstats.contaminated += work->stats.contaminated;
                    fstats.dropped += work->stats.dropped;
                    fstats.redacted += work->stats.redacted;
                    fstats.redact_fallback_drops += work->stats.redact_fallback_drops;
                    fstats.spans_redacted += work->stats.spans_redacted;
                    fstats.passed_unchecked += work->stats.passed_unchecked;
                    fstats.bytes_in += work->stats.bytes_in;
                    fstats.skips.Add(work->stats.skips);
                    if (options.progress != nullptr) {
                      ProgressEvent ev;
                      ev.phase = "cleaning";
                      ev.done_bytes = done_before + work->disk_bytes;
                      ev.total_bytes = total_bytes;
                      ev.records = records_before + fstats.records;
                      options.progress->Update(ev);
                    }
                  }));
      if (st.ok() && CancelRequested()) st = Status::Cancelled("cleaning interrupted");
      TM_RETURN_IF_ERROR(st);
      fstats.skips.Add(reader->skips());
    } else {
      return Status::Unsupported(path + ": cleaning supports JSON Lines and text files only");
    }
    fstats.bytes_out = out.bytes_in();
    // Commit (finish the stream, fsync, rename) on another thread while the next
    // file is cleaned; one commit at a time, every one waited for below.
    TM_RETURN_IF_ERROR(committer.Wait());
    committer.Start(std::move(out_ptr));
    done_before += FileSize(path);
    records_before += fstats.records;
    summary.files.push_back(std::move(fstats));
  }
  TM_RETURN_IF_ERROR(committer.Wait());
  TM_RETURN_IF_ERROR(log.Commit());

  // Benchmark items judged against this corpus.
  const TextOptions& text = table.text();
  Rule any;
  any.name = "any";
  any.kind = Rule::Kind::kAnyHit;
  for (const BenchmarkTable::BenchmarkInfo& b : table.benchmarks()) {
    BenchmarkResult r;
    r.spec.name = b.spec.name;
    r.spec.path = b.spec.path;
    r.spec.read = b.spec.read;
    r.rules = {any};
    r.population = b.items.size();
    r.skips = b.skips;
    r.input_checksum = b.input_checksum;
    for (const BenchmarkTable::Item& item : b.items) {
      ItemResult ir;
      ir.id = item.id;
      ir.line = item.line;
      ir.whole.tokens = item.tokens;
      ir.whole.ngrams = static_cast<uint32_t>(item.fingerprints.size());
      std::vector<uint32_t> positions;
      for (size_t i = 0; i < item.fingerprints.size(); ++i) {
        const int64_t slot = table.Slot(item.fingerprints[i]);
        if (slot >= 0 && seen[static_cast<size_t>(slot)].load(std::memory_order_relaxed) != 0) {
          positions.push_back(static_cast<uint32_t>(i));
          ir.whole.hit_fingerprints.push_back(item.fingerprints[i]);
        }
      }
      ir.whole.hits = static_cast<uint32_t>(positions.size());
      ir.whole.hit_fraction =
          ir.whole.ngrams == 0 ? 0.0 : static_cast<double>(ir.whole.hits) / ir.whole.ngrams;
      uint32_t covered = 0;
      for (const TokenRun& run : MergeMatchedRuns(positions, text.ngram)) {
        covered += run.end - run.begin;
        MatchedSpan ms;
        ms.token_begin = run.begin;
        ms.token_end = run.end;
        ir.whole.spans.push_back(ms);
        ir.whole.longest_run = std::max(ir.whole.longest_run, run.end - run.begin);
      }
      ir.whole.coverage = item.tokens == 0 ? 0.0 : static_cast<double>(covered) / item.tokens;
      ir.verdicts = {ir.whole.too_short() ? Verdict::kTooShort
                     : ir.whole.hits > 0  ? Verdict::kContaminated
                                          : Verdict::kClean};
      r.items.push_back(std::move(ir));
    }
    summary.ignored_template.push_back(b.ignored_template);
    summary.benchmarks.push_back(std::move(r));
  }
  if (!options.benchmark_subset_dir.empty()) {
    const std::string dir = JoinPath(output_dir, options.benchmark_subset_dir);
    TM_RETURN_IF_ERROR(env->CreateDirs(dir));
    for (const BenchmarkResult& r : summary.benchmarks) {
      const std::string p = JoinPath(dir, SubsetFileName(r.spec.name, r.spec.path));
      TM_ASSIGN_OR_RETURN(const uint64_t written, WriteCleanBenchmarkSubset(r, p, 0, env));
      (void)written;
      summary.benchmark_subsets.push_back(p);
    }
  }
  return summary;
}

}  // namespace tidemark
