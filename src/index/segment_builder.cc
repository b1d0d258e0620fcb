#include "index/segment_builder.h"

#include <sys/mman.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif
#include <tbb/enumerable_thread_specific.h>
#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <chrono>
#include <condition_variable>
#include <cstdio>
#include <cstring>
#include <deque>
#include <new>
#include <span>
#include <thread>

#include "index/format.h"
#include "index/radix_sort.h"

namespace tidemark {

namespace fmt = index_format;

namespace {
constexpr size_t kMinCapacitySlots = 4096;
constexpr size_t kRunReadBuffer = 64 << 10;
// In-memory finish, per key of the shard being written: sorted keys 8 + sort scratch
// 8 + counts 2 + Bloom ~1.25 + packed remainders ~5 + directory.
constexpr uint64_t kInMemoryBytesPerKey = 26;
// Merging runs, per record of the shard being written: its key as read 8 + sorted 8 +
// sort scratch / distinct keys 8 + counts 2 + Bloom ~1.25 + remainders ~5 + directory.
constexpr uint64_t kRunMergeBytesPerRecord = 34;
// Shard images queued for (or in) the background write, and their bytes per key.
constexpr uint64_t kPendingImages = 4;
constexpr uint64_t kImageBytesPerKey = 9;

// Keys per staging line (one 64-byte cache line).
constexpr uint32_t kLineSlots = 8;

// Copies a full line, src[0..7) then `last`, to the 64-byte aligned dst with
// non-temporal stores. `last` comes in a register: reading it back from the line just
// after storing it would stall on store-to-load forwarding (an 8-byte store cannot
// forward to a 16-byte load).
inline void StreamLine(uint64_t* dst, const uint64_t* src, uint64_t last) {
#ifdef __SSE2__
  auto* d = reinterpret_cast<__m128i*>(dst);
  const auto* s = reinterpret_cast<const __m128i*>(src);
  _mm_stream_si128(d, _mm_load_si128(s));
  _mm_stream_si128(d + 1, _mm_load_si128(s + 1));
  _mm_stream_si128(d + 2, _mm_load_si128(s + 2));
  _mm_stream_si128(d + 3, _mm_set_epi64x(static_cast<long long>(last), static_cast<long long>(src[6])));
#else
  std::memcpy(dst, src, (kLineSlots - 1) * sizeof(uint64_t));
  dst[kLineSlots - 1] = last;
#endif
}

// Orders this thread's non-temporal stores before its later stores.
inline void StoreFence() {
#ifdef __SSE2__
  _mm_sfence();
#endif
}

// [begin, end) of each shard in a sorted extras list.
std::vector<size_t> ExtraCuts(const std::vector<ExtraCount>& extras, uint32_t shard_bits) {
  const uint32_t num_shards = 1u << shard_bits;
  std::vector<size_t> cuts(num_shards + 1, extras.size());
  size_t i = 0;
  for (uint32_t s = 0; s < num_shards; ++s) {
    cuts[s] = i;
    while (i < extras.size() && fmt::ShardOf(extras[i].fp, shard_bits) == s) ++i;
  }
  return cuts;
}
}  // namespace

void ProgressReporter::Report(std::string_view phase, bool force) {
  if (sink_ == nullptr) return;
  const int64_t now = std::chrono::duration_cast<std::chrono::nanoseconds>(
                          std::chrono::steady_clock::now().time_since_epoch())
                          .count();
  int64_t last = last_ns_.load(std::memory_order_relaxed);
  if (!force && now - last < 100'000'000) return;
  if (!last_ns_.compare_exchange_strong(last, now) && !force) return;
  std::lock_guard<std::mutex> lock(mu_);
  ProgressEvent e;
  e.phase = phase;
  e.done_bytes = done_.load(std::memory_order_relaxed);
  e.total_bytes = total_;
  e.records = records_.load(std::memory_order_relaxed);
  if (phase == units_phase_) {
    e.done_units = done_units_;
    e.total_units = total_units_;
    e.unit = unit_;
  }
  sink_->Update(e);
}

void ProgressReporter::SetUnits(std::string_view phase, uint64_t done, uint64_t total,
                                std::string_view unit) {
  std::lock_guard<std::mutex> lock(mu_);
  // Threads may set their counts out of order; within a phase the count never goes back.
  const bool same = phase == units_phase_ && total == total_units_;
  done_units_ = same ? std::max(done_units_, done) : done;
  units_phase_ = phase;
  total_units_ = total;
  unit_ = unit;
}

SegmentBuilder::SegmentBuilder(const ShardParams& params, int workers, uint64_t buffer_bytes,
                               uint64_t merge_budget, std::string run_dir, Env* env,
                               ProgressReporter* progress, bool direct_writes)
    : params_(params),
      num_shards_(1u << params.shard_bits),
      capacity_slots_(std::max<size_t>(
          kMinCapacitySlots, buffer_bytes / 8 / static_cast<uint64_t>(std::max(1, workers)))),
      merge_budget_(merge_budget),
      run_dir_(std::move(run_dir)),
      env_(env),
      progress_(progress),
      direct_writes_(direct_writes),
      workers_(static_cast<size_t>(std::max(1, workers))) {
  // Chunks small enough that the open (partly filled) chunk of every shard wastes at
  // most 1/16 of the buffer, large enough that a shard's keys are few long spans.
  // Whole staging lines.
  chunk_slots_ = std::clamp<size_t>(capacity_slots_ / (size_t{num_shards_} * 16), kLineSlots, 16384) /
                 kLineSlots * kLineSlots;
  // Reserve address space once: pages are committed only when written, and the
  // buffer never reallocates.
  for (Worker& w : workers_) {
    void* p = ::mmap(nullptr, capacity_slots_ * sizeof(uint64_t), PROT_READ | PROT_WRITE,
                     MAP_PRIVATE | MAP_ANONYMOUS | MAP_NORESERVE, -1, 0);
    if (p == MAP_FAILED) throw std::bad_alloc();
    w.arena = static_cast<uint64_t*>(p);
    w.shard_chunks.resize(num_shards_);
    w.fill.assign(num_shards_, static_cast<uint32_t>(chunk_slots_));
    w.base.assign(num_shards_, nullptr);
    w.stage.resize(num_shards_);
  }
}

SegmentBuilder::~SegmentBuilder() {
  for (Worker& w : workers_) FreeArena(&w);
  if (run_dir_made_) (void)env_->RemoveTree(run_dir_);
}

void SegmentBuilder::FreeArena(Worker* w) {
  if (w->arena != nullptr) ::munmap(w->arena, capacity_slots_ * sizeof(uint64_t));
  w->arena = nullptr;
}

void SegmentBuilder::FlushStaging(Worker* w) {
  const uint32_t chunk = static_cast<uint32_t>(chunk_slots_);
  for (uint32_t s = 0; s < num_shards_; ++s) {
    const uint32_t f = w->fill[s];
    if (f == chunk || f % kLineSlots == 0) continue;
    std::memcpy(w->base[s] + (f - f % kLineSlots), w->stage[s].keys,
                (f % kLineSlots) * sizeof(uint64_t));
  }
  StoreFence();
}

uint64_t SegmentBuilder::ngrams_total() const {
  uint64_t t = 0;
  for (const Worker& w : workers_) t += w.ngrams;
  return t;
}

Status SegmentBuilder::AddDocument(int worker, std::span<const uint64_t> v) {
  Worker& w = workers_[static_cast<size_t>(worker)];
  w.ngrams += v.size();
  DocSet& d = w.doc;
  size_t cap = 64;
  while (cap < 4 * v.size()) cap *= 2;  // load <= 1/4
  if (d.keys.size() < cap) d.keys.resize(cap);
  d.occupied.assign(cap / 64, 0);
  const size_t mask = cap - 1;  // a power of two <= the table size
  uint64_t* const keys = d.keys.data();
  uint64_t* const occupied = d.occupied.data();
  d.distinct.clear();
  d.repeats.clear();
  for (const uint64_t fp : v) {
    size_t i = static_cast<size_t>(fp ^ (fp >> 29)) & mask;  // fingerprints are uniform
    bool repeat = false;
    while ((occupied[i / 64] >> (i % 64)) & 1) {
      if (keys[i] == fp) {
        repeat = true;
        break;
      }
      i = (i + 1) & mask;
    }
    if (repeat) {
      d.repeats.push_back(fp);
    } else {
      occupied[i / 64] |= uint64_t{1} << (i % 64);
      keys[i] = fp;
      d.distinct.push_back(fp);
    }
  }
  // Repeats inside a document are rare: their keys take the slow path with their
  // number of occurrences.
  std::sort(d.repeats.begin(), d.repeats.end());
  auto occurrences = [&](uint64_t fp) -> uint32_t {
    const auto r = std::equal_range(d.repeats.begin(), d.repeats.end(), fp);
    return static_cast<uint32_t>(1 + (r.second - r.first));
  };
  const bool any_repeats = !d.repeats.empty();
  const uint32_t bits = params_.shard_bits;
  const uint32_t chunk = static_cast<uint32_t>(chunk_slots_);
  Status st;
  uint64_t appended = 0;  // fast-path keys not yet counted in w.keys
  for (const uint64_t fp : d.distinct) {
    const uint32_t s = fmt::ShardOf(fp, bits);
    const uint32_t f = w.fill[s];
    const uint32_t count = any_repeats ? occurrences(fp) : 1;
    // The common case: room in the shard's open chunk and no repeat. (The buffer
    // had room for this chunk when it was opened, so nothing else needs checking.)
    if (f < chunk && count == 1) [[likely]] {
      w.fill[s] = f + 1;
      Append(&w, s, f, fp);
      ++appended;
      continue;
    }
    w.keys += appended;  // (a spill must see them)
    appended = 0;
    st = AddSlow(&w, fp, count);
    if (!st.ok()) break;
  }
  w.keys += appended;
  // The lines streamed for this document reach memory before anything this thread
  // does next (a spill, or the hand-over to the finishing threads).
  StoreFence();
  return st;
}

inline void SegmentBuilder::Append(Worker* w, uint32_t s, uint32_t f, uint64_t fp) {
  uint64_t* const line = w->stage[s].keys;
  if (f % kLineSlots == kLineSlots - 1) {
    StreamLine(w->base[s] + (f - (kLineSlots - 1)), line, fp);
  } else {
    line[f % kLineSlots] = fp;
  }
}

Status SegmentBuilder::AddSlow(Worker* w, uint64_t fp, uint32_t count) {
  const uint32_t s = fmt::ShardOf(fp, params_.shard_bits);
  const bool repeated = count > 1;
  const bool new_chunk = w->fill[s] == chunk_slots_;
  // A key and its extra go into the same run: make room for both first.
  if (!Fits(*w, new_chunk ? 1 : 0, repeated ? 1 : 0)) {
    TM_RETURN_IF_ERROR(Spill(w));
  }
  if (w->fill[s] == chunk_slots_) {
    const size_t c = w->chunks_used++;
    w->shard_chunks[s].push_back(static_cast<uint32_t>(c));
    w->fill[s] = 0;
    w->base[s] = w->arena + c * chunk_slots_;
    if (w->chunks_used * chunk_slots_ > w->populated) PrefaultArena(w);
  }
  const uint32_t f = w->fill[s]++;
  Append(w, s, f, fp);
  ++w->keys;
  if (repeated) w->extras.push_back({fp, static_cast<uint64_t>(count - 1)});
  return Status::Ok();
}

void SegmentBuilder::ShardSpans(const Worker& w, uint32_t s,
                                std::vector<std::span<const uint64_t>>* out) const {
  const std::vector<uint32_t>& chunks = w.shard_chunks[s];
  for (size_t c = 0; c < chunks.size(); ++c) {
    const size_t n = c + 1 == chunks.size() ? w.fill[s] : chunk_slots_;
    if (n > 0) out->emplace_back(w.arena + size_t{chunks[c]} * chunk_slots_, n);
  }
}

void SegmentBuilder::PrefaultArena(Worker* w) {
  // One madvise per 32 MiB instead of a page fault per 4 KiB page (Linux 5.14+;
  // elsewhere the pages fault in as they are written, as before).
  constexpr size_t kStretch = (size_t{32} << 20) / sizeof(uint64_t);
  constexpr uintptr_t kPage = 4096;
  const size_t end = std::min(capacity_slots_, w->populated + kStretch);
  const uintptr_t b =
      (reinterpret_cast<uintptr_t>(w->arena + w->populated) + kPage - 1) & ~(kPage - 1);
  const uintptr_t e = reinterpret_cast<uintptr_t>(w->arena + end) & ~(kPage - 1);
#ifdef MADV_POPULATE_WRITE
  if (e > b) (void)::madvise(reinterpret_cast<void*>(b), e - b, MADV_POPULATE_WRITE);
#else
  (void)b;
  (void)e;
#endif
  w->populated = end;
}

void SegmentBuilder::ResetBuffer(Worker* w) {
  for (auto& c : w->shard_chunks) c.clear();
  std::fill(w->fill.begin(), w->fill.end(), static_cast<uint32_t>(chunk_slots_));
  w->chunks_used = 0;
  w->keys = 0;
  w->extras.clear();
}

Status SegmentBuilder::Spill(Worker* w) {
  if (w->keys == 0) return Status::Ok();
  FlushStaging(w);
  if (progress_ != nullptr) progress_->Report("spilling", true);
  const uint32_t bits = params_.shard_bits;
  std::sort(w->extras.begin(), w->extras.end());
  const std::vector<size_t> ecuts = ExtraCuts(w->extras, bits);
  size_t largest = 0;
  for (uint32_t s = 0; s < num_shards_; ++s) {
    largest = std::max(largest, w->shard_chunks[s].size() * chunk_slots_);
  }
  std::string path;
  {
    std::lock_guard<std::mutex> lock(runs_mu_);
    if (!run_dir_made_) {
      TM_RETURN_IF_ERROR(env_->CreateDirs(run_dir_));
      run_dir_made_ = true;
    }
    char name[32];
    std::snprintf(name, sizeof(name), "run-%06zu", run_paths_.size());
    path = JoinPath(run_dir_, name);
    run_paths_.push_back(path);
  }
  RunWriter writer(path, bits, env_);
  TM_RETURN_IF_ERROR(writer.Open());
  std::vector<uint64_t> sorted(largest), scratch(largest);
  std::vector<std::span<const uint64_t>> inputs;
  for (uint32_t s = 0; s < num_shards_; ++s) {
    inputs.clear();
    ShardSpans(*w, s, &inputs);
    size_t n = 0;
    for (const auto& in : inputs) n += in.size();
    if (n == 0) continue;
    SortShard(inputs, bits, sorted.data(), scratch.data());
    BufferSource src(
        std::span<const uint64_t>(sorted.data(), n),
        std::span<const ExtraCount>(w->extras.data() + ecuts[s], ecuts[s + 1] - ecuts[s]));
    MergeRecord rec;
    while (src.Next(&rec)) TM_RETURN_IF_ERROR(writer.Add(s, rec));
  }
  TM_RETURN_IF_ERROR(writer.Finish().WithContext("spilling a sorted run"));
  spills_.fetch_add(1);
  spilled_bytes_.fetch_add(writer.bytes());
  ResetBuffer(w);
  return Status::Ok();
}

void SegmentBuilder::ReportShardDone(std::atomic<uint32_t>* done) {
  const uint32_t d = done->fetch_add(1) + 1;
  if (progress_ != nullptr) {
    progress_->SetUnits("merging", d, num_shards_, "shards");
    progress_->Report("merging");
  }
}

Status SegmentBuilder::Finish(const std::string& staging_dir, int threads, ManifestSegment* seg) {
  tbb::task_arena arena(threads > 0 ? threads : tbb::task_arena::automatic);
  const int conc_max = arena.max_concurrency();
  seg->shards.assign(num_shards_, ManifestShard{});
  Status st;
  if (run_paths_.empty()) {
    for (Worker& w : workers_) FlushStaging(&w);
    arena.execute([&] { st = FinishInMemory(staging_dir, conc_max, seg); });
  } else {
    // Everything goes through runs; the buffers are freed before the merge.
    std::vector<Status> worker_status(workers_.size());
    arena.execute([&] {
      tbb::parallel_for(size_t{0}, workers_.size(),
                        [&](size_t i) { worker_status[i] = Spill(&workers_[i]); });
    });
    for (const Status& s : worker_status) TM_RETURN_IF_ERROR(s);
    for (Worker& w : workers_) {
      FreeArena(&w);
      std::vector<ExtraCount>().swap(w.extras);
    }
    if (CancelRequested()) return Status::Cancelled("index build interrupted");
    st = FinishFromRuns(staging_dir, conc_max, seg);
  }
  TM_RETURN_IF_ERROR(st);
  if (CancelRequested()) return Status::Cancelled("index build interrupted");
  seg->ngrams_distinct = 0;
  seg->bytes = 0;
  for (const ManifestShard& sh : seg->shards) {
    seg->ngrams_distinct += sh.keys;
    seg->bytes += sh.bytes;
  }
  seg->ngrams_total = ngrams_total();
  if (run_dir_made_) {
    (void)env_->RemoveTree(run_dir_);
    run_dir_made_ = false;
  }
  return SyncNewShards(env_, staging_dir, progress_);
}

Status SyncNewShards(Env* env, const std::string& dir, ProgressReporter* progress) {
  if (progress != nullptr) progress->Report("syncing", true);
  TM_RETURN_IF_ERROR(env->SyncFilesystem(dir));
  return env->SyncDir(dir);
}

Status SegmentBuilder::FinishInMemory(const std::string& staging_dir, int conc_max,
                                      ManifestSegment* seg) {
  const uint32_t bits = params_.shard_bits;
  const size_t nw = workers_.size();
  // Extras sorted; a worker's keys are already grouped by shard (in chunks).
  std::vector<std::vector<size_t>> ecuts(nw);
  tbb::parallel_for(size_t{0}, nw, [&](size_t i) {
    Worker& w = workers_[i];
    std::sort(w.extras.begin(), w.extras.end());
    ecuts[i] = ExtraCuts(w.extras, bits);
  });
  if (CancelRequested()) return Status::Cancelled("index build interrupted");
  size_t largest = 1;
  for (uint32_t s = 0; s < num_shards_; ++s) {
    size_t n = 0;
    for (size_t i = 0; i < nw; ++i) n += workers_[i].shard_chunks[s].size() * chunk_slots_;
    largest = std::max(largest, n);
  }
  // Concurrency bounded by memory: the buffers stay resident while shards are
  // written (their filled part: the rest of the reserved capacity was never touched),
  // and each concurrent shard needs its sort and writer memory.
  uint64_t in_memory = 0;
  for (const Worker& w : workers_) in_memory += w.keys * 8 + w.extras.capacity() * 16;
  in_memory += kPendingImages * kImageBytesPerKey * largest;
  const uint64_t avail = merge_budget_ > in_memory ? merge_budget_ - in_memory : 0;
  const int conc = static_cast<int>(
      std::clamp<uint64_t>(avail / std::max<uint64_t>(largest * kInMemoryBytesPerKey, 1), 1,
                           static_cast<uint64_t>(conc_max)));

  struct Scratch {
    std::vector<uint64_t> sorted;
    SortUniqueScratch sort;
    std::vector<ExtraCount> extras;
  };
  tbb::enumerable_thread_specific<Scratch> scratch;
  return ForEachShard(conc, [&](uint32_t s, BackgroundShardWriter* io) -> Status {
    Scratch& sc = scratch.local();
    std::vector<std::span<const uint64_t>> inputs;
    sc.extras.clear();
    for (size_t i = 0; i < nw; ++i) {
      const Worker& w = workers_[i];
      ShardSpans(w, s, &inputs);
      sc.extras.insert(sc.extras.end(), w.extras.begin() + static_cast<ptrdiff_t>(ecuts[i][s]),
                       w.extras.begin() + static_cast<ptrdiff_t>(ecuts[i][s + 1]));
    }
    size_t n = 0;
    for (const auto& in : inputs) n += in.size();
    if (nw > 1) std::sort(sc.extras.begin(), sc.extras.end());
    if (sc.sorted.size() < n) {
      // Sized once for the largest shard, so the pages are faulted in once.
      sc.sorted.resize(largest);
      sc.sort.partitioned.resize(largest);
    }
    uint64_t* keys = sc.sorted.data();
    ShardParams p = params_;
    p.shard_id = s;
    ShardWriter writer(p);
    ShardImage image = io->TakeWritten();
    writer.UseKeys(keys, n, &image);
    // A key's repeats are its documents; extras add occurrences. Most buckets hold
    // neither: their keys all count once, in one document.
    size_t e = 0;
    const std::vector<ExtraCount>& ex = sc.extras;
    SortUnique(inputs, bits, keys, &sc.sort, [&](uint64_t* k, size_t m) -> size_t {
      if ((e == ex.size() || ex[e].fp > k[m - 1]) && AllDistinct(k, m)) {
        writer.AddSingles(m);
        return m;
      }
      return CollapseRuns(k, m, [&](uint64_t fp, uint64_t docs) {
        uint64_t count = docs;
        while (e < ex.size() && ex[e].fp <= fp) {
          if (ex[e].fp == fp) count += ex[e].extra;
          ++e;
        }
        writer.AddCounts(count, docs);
      });
    });
    return SubmitShard(&writer, s, staging_dir, std::move(image), io, &seg->shards[s]);
  });
}

Status SegmentBuilder::FinishFromRuns(const std::string& staging_dir, int conc_max,
                                      ManifestSegment* seg) {
  std::vector<std::unique_ptr<RunFile>> runs;
  for (const std::string& p : run_paths_) {
    TM_ASSIGN_OR_RETURN(auto rf, RunFile::Open(p, params_.shard_bits));
    runs.push_back(std::move(rf));
  }
  // Concurrency bounded by memory: the largest shard's merge memory times
  // concurrency (plus run read buffers and queued images) must fit in merge_budget_.
  uint64_t max_shard_records = 1;
  for (uint32_t s = 0; s < num_shards_; ++s) {
    uint64_t r = 0;
    for (const auto& rf : runs) r += rf->RecordsIn(s);
    max_shard_records = std::max(max_shard_records, r);
  }
  const uint64_t per_shard =
      max_shard_records * kRunMergeBytesPerRecord + runs.size() * kRunReadBuffer;
  const uint64_t queued = kPendingImages * kImageBytesPerKey * max_shard_records;
  const uint64_t avail = merge_budget_ > queued ? merge_budget_ - queued : 0;
  const int conc = static_cast<int>(std::clamp<uint64_t>(avail / std::max<uint64_t>(per_shard, 1),
                                                         1, static_cast<uint64_t>(conc_max)));

  tbb::enumerable_thread_specific<RadixMergeScratch> scratch;
  return ForEachShard(conc, [&](uint32_t s, BackgroundShardWriter* io) -> Status {
    std::vector<std::unique_ptr<SortedSource>> sources;
    for (const auto& rf : runs) {
      if (rf->RecordsIn(s) > 0) sources.push_back(rf->ShardRange(s, kRunReadBuffer));
    }
    ShardParams p = params_;
    p.shard_id = s;
    ShardWriter writer(p);
    ShardImage image = io->TakeWritten();
    TM_RETURN_IF_ERROR(RadixMergeSources(sources, p.shard_bits, &scratch.local(), &writer, &image)
                           .WithContext("merging the runs of shard " + std::to_string(s)));
    return SubmitShard(&writer, s, staging_dir, std::move(image), io, &seg->shards[s]);
  });
}

Status SegmentBuilder::ForEachShard(
    int conc, const std::function<Status(uint32_t, BackgroundShardWriter*)>& fn) {
  std::vector<Status> shard_status(num_shards_);
  std::atomic<bool> failed{false};
  std::atomic<uint32_t> shards_done{0};
  BackgroundShardWriter io(env_, direct_writes_,
                           kPendingImages - BackgroundShardWriter::kDefaultWriters);
  tbb::task_arena arena(conc);
  arena.execute([&] {
    tbb::parallel_for(
        uint32_t{0}, num_shards_,
        [&](uint32_t s) {
          if (failed.load() || io.failed() || CancelRequested()) return;
          Status st = fn(s, &io);
          if (!st.ok()) {
            shard_status[s] = std::move(st);
            failed = true;
            return;
          }
          ReportShardDone(&shards_done);
        },
        tbb::simple_partitioner());
  });
  TM_RETURN_IF_ERROR(io.Finish());
  for (const Status& st : shard_status) TM_RETURN_IF_ERROR(st);
  return Status::Ok();
}

}  // namespace tidemark
