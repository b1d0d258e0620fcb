#include "index/segment_builder.h"

#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>

#include <algorithm>
#include <chrono>
#include <cstdio>

#include "index/format.h"
#include "index/radix_sort.h"

namespace tidemark {

namespace fmt = index_format;

namespace {
constexpr size_t kMinCapacitySlots = 4096;
constexpr size_t kRunReadBuffer = 64 << 10;
// Peak bytes of a shard writer per key: key 8 + counts 2 + Bloom ~1.25 + packed
// remainders ~5 (written after the key array is freed) + directory.
constexpr uint64_t kWriterBytesPerKey = 16;
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
  sink_->Update(e);
}

SegmentBuilder::SegmentBuilder(const ShardParams& params, int workers, uint64_t buffer_bytes,
                               uint64_t merge_budget, std::string run_dir, Env* env,
                               ProgressReporter* progress)
    : params_(params),
      num_shards_(1u << params.shard_bits),
      capacity_slots_(std::max<size_t>(kMinCapacitySlots,
                                       buffer_bytes / 8 / static_cast<uint64_t>(std::max(1, workers)))),
      merge_budget_(merge_budget),
      run_dir_(std::move(run_dir)),
      env_(env),
      progress_(progress),
      workers_(static_cast<size_t>(std::max(1, workers))) {
  // Reserve address space once: pages are committed only when written, and the
  // buffer never reallocates (which would double its footprint for a moment).
  for (Worker& w : workers_) w.main.reserve(capacity_slots_);
}

SegmentBuilder::~SegmentBuilder() {
  if (run_dir_made_) (void)env_->RemoveTree(run_dir_);
}

uint64_t SegmentBuilder::ngrams_total() const {
  uint64_t t = 0;
  for (const Worker& w : workers_) t += w.ngrams;
  return t;
}

Status SegmentBuilder::AddDocument(int worker, std::vector<uint64_t>* fps) {
  Worker& w = workers_[static_cast<size_t>(worker)];
  const std::vector<uint64_t>& v = *fps;
  w.ngrams += v.size();
  DocSet& d = w.doc;
  size_t cap = 64;
  while (cap < 2 * v.size()) cap *= 2;
  if (d.keys.size() < cap) {
    d.keys.assign(cap, 0);
    d.stamp.assign(cap, 0);
    d.count.assign(cap, 0);
  }
  if (++d.gen == 0) {  // stamps wrapped: forget them all
    std::fill(d.stamp.begin(), d.stamp.end(), 0);
    d.gen = 1;
  }
  const size_t mask = cap - 1;  // a power of two <= the table size
  d.used.clear();
  for (const uint64_t fp : v) {
    size_t i = static_cast<size_t>(fp ^ (fp >> 29)) & mask;  // fingerprints are uniform
    while (d.stamp[i] == d.gen && d.keys[i] != fp) i = (i + 1) & mask;
    if (d.stamp[i] == d.gen) {
      ++d.count[i];
    } else {
      d.stamp[i] = d.gen;
      d.keys[i] = fp;
      d.count[i] = 1;
      d.used.push_back(static_cast<uint32_t>(i));
    }
  }
  for (const uint32_t i : d.used) {
    const bool repeated = d.count[i] > 1;
    if (Full(w, repeated ? 3 : 1)) TM_RETURN_IF_ERROR(Spill(&w));
    w.main.push_back(d.keys[i]);
    if (repeated) w.extras.push_back({d.keys[i], static_cast<uint64_t>(d.count[i] - 1)});
  }
  return Status::Ok();
}

Status SegmentBuilder::Spill(Worker* w) {
  if (w->main.empty()) return Status::Ok();
  if (progress_ != nullptr) progress_->Report("spilling", true);
  RadixSort64(w->main.data(), w->main.size());
  std::sort(w->extras.begin(), w->extras.end());
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
  RunWriter writer(path, params_.shard_bits, env_);
  TM_RETURN_IF_ERROR(writer.Open());
  BufferSource src(w->main, w->extras);
  MergeRecord rec;
  while (src.Next(&rec)) {
    TM_RETURN_IF_ERROR(writer.Add(fmt::ShardOf(rec.fp, params_.shard_bits), rec));
  }
  TM_RETURN_IF_ERROR(writer.Finish().WithContext("spilling a sorted run"));
  spills_.fetch_add(1);
  spilled_bytes_.fetch_add(writer.bytes());
  w->main.clear();
  w->extras.clear();
  return Status::Ok();
}

Status SegmentBuilder::Finish(const std::string& staging_dir, int threads, ManifestSegment* seg) {
  const bool spilled = !run_paths_.empty();
  tbb::task_arena arena(threads > 0 ? threads : tbb::task_arena::automatic);
  const int conc_max = arena.max_concurrency();
  std::vector<Status> worker_status(workers_.size());
  if (spilled) {
    // Everything goes through runs; the buffers are freed before the merge.
    arena.execute([&] {
      tbb::parallel_for(size_t{0}, workers_.size(), [&](size_t i) {
        worker_status[i] = Spill(&workers_[i]);
      });
    });
    for (const Status& s : worker_status) TM_RETURN_IF_ERROR(s);
    for (Worker& w : workers_) {
      std::vector<uint64_t>().swap(w.main);
      std::vector<ExtraCount>().swap(w.extras);
    }
  } else {
    arena.execute([&] {
      tbb::parallel_for(size_t{0}, workers_.size(), [&](size_t i) {
        RadixSort64(workers_[i].main.data(), workers_[i].main.size());
        std::sort(workers_[i].extras.begin(), workers_[i].extras.end());
      });
    });
  }
  if (CancelRequested()) return Status::Cancelled("index build interrupted");

  std::vector<std::unique_ptr<RunFile>> runs;
  for (const std::string& p : run_paths_) {
    TM_ASSIGN_OR_RETURN(auto rf, RunFile::Open(p, params_.shard_bits));
    runs.push_back(std::move(rf));
  }
  // Per worker, the [begin, end) of each shard in main and extras.
  struct Cuts {
    std::vector<size_t> main, extras;
  };
  std::vector<Cuts> cuts(workers_.size());
  for (size_t wi = 0; wi < workers_.size(); ++wi) {
    const Worker& w = workers_[wi];
    cuts[wi].main.resize(num_shards_ + 1);
    cuts[wi].extras.resize(num_shards_ + 1);
    for (uint32_t s = 0; s <= num_shards_; ++s) {
      if (s == num_shards_) {
        cuts[wi].main[s] = w.main.size();
        cuts[wi].extras[s] = w.extras.size();
        continue;
      }
      const uint64_t lo = params_.shard_bits == 0 ? 0 : static_cast<uint64_t>(s) << (64 - params_.shard_bits);
      cuts[wi].main[s] = static_cast<size_t>(std::lower_bound(w.main.begin(), w.main.end(), lo) - w.main.begin());
      cuts[wi].extras[s] = static_cast<size_t>(
          std::lower_bound(w.extras.begin(), w.extras.end(), ExtraCount{lo, 0}) - w.extras.begin());
    }
  }
  // Concurrency bounded by memory: the largest shard's writer times concurrency
  // (plus run read buffers) must fit in merge_budget_.
  uint64_t max_shard_records = 1;
  for (uint32_t s = 0; s < num_shards_; ++s) {
    uint64_t r = 0;
    for (size_t wi = 0; wi < workers_.size(); ++wi) r += cuts[wi].main[s + 1] - cuts[wi].main[s];
    for (const auto& rf : runs) r += rf->RecordsIn(s);
    max_shard_records = std::max(max_shard_records, r);
  }
  const uint64_t per_shard = max_shard_records * kWriterBytesPerKey + runs.size() * kRunReadBuffer;
  uint64_t in_memory = 0;
  for (const Worker& w : workers_) in_memory += w.main.capacity() * 8 + w.extras.capacity() * 16;
  const uint64_t avail = merge_budget_ > in_memory ? merge_budget_ - in_memory : 0;
  const int conc = static_cast<int>(std::clamp<uint64_t>(
      avail / std::max<uint64_t>(per_shard, 1), 1, static_cast<uint64_t>(conc_max)));

  seg->shards.assign(num_shards_, ManifestShard{});
  std::vector<Status> shard_status(num_shards_);
  std::vector<uint64_t> shard_total(num_shards_, 0);
  std::atomic<bool> failed{false};
  std::atomic<uint32_t> shards_done{0};
  const uint64_t total_bytes_for_progress = progress_ != nullptr ? progress_->done() : 0;
  tbb::task_arena merge_arena(conc);
  merge_arena.execute([&] {
    tbb::parallel_for(
        uint32_t{0}, num_shards_,
        [&](uint32_t s) {
          if (failed.load() || CancelRequested()) return;
          std::vector<std::unique_ptr<SortedSource>> sources;
          for (size_t wi = 0; wi < workers_.size(); ++wi) {
            const Worker& w = workers_[wi];
            const size_t mb = cuts[wi].main[s], me = cuts[wi].main[s + 1];
            if (mb == me) continue;
            const size_t eb = cuts[wi].extras[s], ee = cuts[wi].extras[s + 1];
            sources.push_back(std::make_unique<BufferSource>(
                std::span<const uint64_t>(w.main.data() + mb, me - mb),
                std::span<const ExtraCount>(w.extras.data() + eb, ee - eb)));
          }
          for (const auto& rf : runs) {
            if (rf->RecordsIn(s) > 0) sources.push_back(rf->ShardRange(s, kRunReadBuffer));
          }
          ShardParams p = params_;
          p.shard_id = s;
          ShardWriter writer(p);
          uint64_t total = 0;
          Status st = MergeSources(sources, [&](const MergeRecord& r) {
            writer.Add(r.fp, r.count, r.docs);
            total += r.count;
            return Status::Ok();
          });
          sources.clear();
          ShardFileInfo info;
          if (st.ok()) st = writer.Finish(JoinPath(staging_dir, fmt::ShardFileName(s)), env_, &info);
          if (!st.ok()) {
            shard_status[s] = st;
            failed = true;
            return;
          }
          seg->shards[s] = ManifestShard{s, info.keys, info.bytes, info.header_xxh3};
          shard_total[s] = total;
          const uint32_t done = shards_done.fetch_add(1) + 1;
          if (progress_ != nullptr && total_bytes_for_progress > 0) {
            progress_->SetDone(total_bytes_for_progress * done / num_shards_);
            progress_->Report("merging");
          }
        },
        tbb::simple_partitioner());
  });
  for (const Status& s : shard_status) TM_RETURN_IF_ERROR(s);
  if (CancelRequested()) return Status::Cancelled("index build interrupted");
  seg->ngrams_distinct = 0;
  seg->bytes = 0;
  for (const ManifestShard& sh : seg->shards) {
    seg->ngrams_distinct += sh.keys;
    seg->bytes += sh.bytes;
  }
  seg->ngrams_total = ngrams_total();
  runs.clear();
  if (run_dir_made_) {
    (void)env_->RemoveTree(run_dir_);
    run_dir_made_ = false;
  }
  return env_->SyncDir(staging_dir);
}

}  // namespace tidemark
