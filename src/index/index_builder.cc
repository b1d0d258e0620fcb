// Build, add, merge, verify, inspect and dump (include/tidemark/index_builder.h).
#include "tidemark/index_builder.h"

#include <fcntl.h>
#include <signal.h>
#include <sys/file.h>
#include <sys/resource.h>
#include <sys/stat.h>
#include <unistd.h>
#define XXH_STATIC_LINKING_ONLY  // XXH3_state_t on the stack
#include <xxhash.h>

#include <tbb/parallel_for.h>
#include <tbb/task_arena.h>
#include <tbb/task_group.h>

#include <algorithm>
#include <atomic>
#include <cerrno>
#include <chrono>
#include <cmath>
#include <condition_variable>
#include <cstring>
#include <ctime>
#include <filesystem>
#include <mutex>
#include <optional>
#include <thread>
#include <cctype>
#include <cstdlib>

#include "common/env.h"
#include "common/text_util.h"
#include "index/bloom_filter.h"
#include "index/format.h"
#include "index/index_internal.h"
#include "index/manifest.h"
#include "index/segment_builder.h"
#include "index/shard_reader.h"
#include "tidemark/tokenizer.h"
#include "tidemark_version.h"

namespace tidemark {

namespace fmt = index_format;

namespace {

using Clock = std::chrono::steady_clock;

// User + system CPU seconds of the whole process so far.
double ProcessCpuSeconds() {
  rusage ru;
  ::getrusage(RUSAGE_SELF, &ru);
  return static_cast<double>(ru.ru_utime.tv_sec + ru.ru_stime.tv_sec) +
         static_cast<double>(ru.ru_utime.tv_usec + ru.ru_stime.tv_usec) / 1e6;
}

double SecondsSince(Clock::time_point t) {
  return std::chrono::duration<double>(Clock::now() - t).count();
}

int ResolveThreads(int threads) {
  if (threads > 0) return threads;
  const unsigned hw = std::thread::hardware_concurrency();
  return hw == 0 ? 1 : static_cast<int>(hw);
}

uint64_t PhysicalMemory() {
  const long pages = ::sysconf(_SC_PHYS_PAGES);
  const long page = ::sysconf(_SC_PAGE_SIZE);
  if (pages <= 0 || page <= 0) return 4ull << 30;
  return static_cast<uint64_t>(pages) * static_cast<uint64_t>(page);
}

uint64_t ResolveBudget(uint64_t budget) { return budget > 0 ? budget : PhysicalMemory() / 4; }

bool PidAlive(long pid) {
  if (pid <= 0) return false;
  if (pid == static_cast<long>(::getpid())) return true;
  return ::kill(static_cast<pid_t>(pid), 0) == 0 || errno == EPERM;
}

// "<prefix><digits>" -> pid, else -1.
long PidAfter(const std::string& name, std::string_view prefix) {
  if (name.size() <= prefix.size() || name.compare(0, prefix.size(), prefix) != 0) return -1;
  long pid = 0;
  for (size_t i = prefix.size(); i < name.size(); ++i) {
    if (name[i] < '0' || name[i] > '9') return -1;
    pid = pid * 10 + (name[i] - '0');
    if (pid > 1'000'000'000) return -1;
  }
  return pid;
}

// seg-NNNNNN -> id; seg-NNNNNN.tmp.<pid> -> id with *staging_pid set.
std::optional<uint32_t> SegmentIdOf(const std::string& name, long* staging_pid) {
  *staging_pid = -1;
  if (name.size() < 10 || name.compare(0, 4, "seg-") != 0) return std::nullopt;
  uint32_t id = 0;
  for (size_t i = 4; i < 10; ++i) {
    if (name[i] < '0' || name[i] > '9') return std::nullopt;
    id = id * 10 + static_cast<uint32_t>(name[i] - '0');
  }
  if (name.size() == 10) return id;
  const long pid = PidAfter(name.substr(10), ".tmp.");
  if (pid < 0) return std::nullopt;
  *staging_pid = pid;
  return id;
}

bool IsOurName(const std::string& name) {
  long pid;
  if (name == fmt::kLockName || SegmentIdOf(name, &pid)) return true;
  if (PidAfter(name, ".tmp-") >= 0) return true;
  if (PidAfter(name, std::string(fmt::kManifestName) + ".tmp.") >= 0) return true;
  return false;
}

// An exclusive flock on <dir>/LOCK for the lifetime of the object.
class DirLock {
 public:
  ~DirLock() {
    if (fd_ >= 0) ::close(fd_);
  }
  Status Acquire(const std::string& dir) {
    const std::string path = JoinPath(dir, fmt::kLockName);
    fd_ = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
    if (fd_ < 0) return Status::IOError(path + ": cannot create lock file: " + std::strerror(errno));
    if (::flock(fd_, LOCK_EX | LOCK_NB) != 0) {
      return Status::IOError(dir + ": another tidemark process is writing this index (" + path +
                             " is locked)");
    }
    return Status::Ok();
  }

 private:
  int fd_ = -1;
};

Status ValidateBuildOptions(const IndexBuildOptions& o) {
  TM_RETURN_IF_ERROR(o.text.Validate());
  if (o.shard_bits > fmt::kMaxShardBits) {
    return Status::InvalidArgument("shard bits " + std::to_string(o.shard_bits) +
                                   " out of range 0..16 (1..65536 shards)");
  }
  if (o.bloom_bits_per_key < fmt::kMinBloomBitsPerKey ||
      o.bloom_bits_per_key > fmt::kMaxBloomBitsPerKey) {
    return Status::InvalidArgument("Bloom bits per key " + std::to_string(o.bloom_bits_per_key) +
                                   " out of range 1..64");
  }
  return ValidateReadOptions(o.read);
}

ManifestBuildInfo MakeBuildInfo(double seconds, int threads, uint64_t spills) {
  ManifestBuildInfo b;
  b.tool = std::string("tidemark ") + TIDEMARK_VERSION;
  b.unix_time = static_cast<int64_t>(std::time(nullptr));
  b.seconds = seconds;
  b.threads = threads;
  b.spills = spills;
  return b;
}

std::string AbsolutePath(const std::string& p) {
  std::error_code ec;
  auto abs = std::filesystem::absolute(p, ec);
  if (ec) return p;
  return abs.lexically_normal().string();
}

Result<ManifestFile> StatFile(const std::string& path) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) {
    if (errno == ENOENT) return Status::NotFound(path + ": no such file");
    return Status::IOError(path + ": stat: " + std::strerror(errno));
  }
  ManifestFile f;
  f.path = path;
  f.size = static_cast<uint64_t>(st.st_size);
  f.mtime_ns = static_cast<int64_t>(st.st_mtim.tv_sec) * 1'000'000'000 + st.st_mtim.tv_nsec;
  return f;
}

Status HashFile(const std::string& path, uint64_t* out) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return Status::IOError(path + ": cannot open: " + std::strerror(errno));
  XXH3_state_t state;
  XXH3_64bits_reset(&state);
  std::vector<char> buf(1 << 20);
  uint64_t off = 0;
  while (true) {
    const ssize_t n = ::read(fd, buf.data(), buf.size());
    if (n < 0) {
      if (errno == EINTR) continue;
      const int err = errno;
      ::close(fd);
      return Status::IOError(path + "@" + std::to_string(off) + ": read: " + std::strerror(err));
    }
    if (n == 0) break;
    XXH3_64bits_update(&state, buf.data(), static_cast<size_t>(n));
    off += static_cast<uint64_t>(n);
  }
  ::close(fd);
  *out = XXH3_64bits_digest(&state);
  return Status::Ok();
}

// o.env (or Env::Default()), wrapped so that nothing is flushed when `sync` is false
// (IndexBuildOptions::sync).
class ChosenEnv {
 public:
  ChosenEnv(Env* env, bool sync)
      : base_(env != nullptr ? env : Env::Default()), no_sync_(base_),
        env_(sync ? base_ : &no_sync_) {}
  ChosenEnv(const ChosenEnv&) = delete;
  ChosenEnv& operator=(const ChosenEnv&) = delete;
  Env* get() const { return env_; }

 private:
  Env* base_;
  NoSyncEnv no_sync_;
  Env* env_;
};

// Records the first error of many workers.
class FirstError {
 public:
  void Set(Status s) {
    if (s.ok()) return;
    std::lock_guard<std::mutex> lock(mu_);
    if (status_.ok()) status_ = std::move(s);
    failed_.store(true);
  }
  bool failed() const { return failed_.load(std::memory_order_relaxed); }
  Status status() {
    std::lock_guard<std::mutex> lock(mu_);
    return status_;
  }

 private:
  std::mutex mu_;
  Status status_;
  std::atomic<bool> failed_{false};
};

// ---- the corpus feeder -----------------------------------------------------------

// Hands out blocks of the corpus files to workers: up to `max_open` files are open at
// once, so decompression runs in parallel across files, and blocks of one file are
// parsed in parallel by whichever workers take them.
class CorpusFeeder {
 public:
  CorpusFeeder(std::vector<std::string> paths, const IndexBuildOptions& o, int workers,
               ProgressReporter* progress)
      : paths_(std::move(paths)),
        options_(o),
        max_open_(static_cast<size_t>(workers)),
        files_(paths_.size()),
        progress_(progress) {}

  Status Run(SegmentBuilder* builder, int workers, ManifestSegment* seg, SkipStats* skips,
             uint64_t* bytes_read) {
    for (size_t i = 0; i < paths_.size(); ++i) {
      TM_ASSIGN_OR_RETURN(files_[i], StatFile(paths_[i]));
      total_bytes_ += files_[i].size;
    }
    progress_->set_total(total_bytes_);
    tbb::task_group tg;
    std::vector<SkipStats> worker_skips(static_cast<size_t>(workers));
    std::vector<uint64_t> worker_records(static_cast<size_t>(workers), 0);
    for (int w = 0; w < workers; ++w) {
      tg.run([this, w, builder, &worker_skips, &worker_records] {
        errors_.Set(Work(w, builder, &worker_skips[static_cast<size_t>(w)],
                         &worker_records[static_cast<size_t>(w)]));
        // Wake everyone on failure.
        std::lock_guard<std::mutex> lock(mu_);
        cv_.notify_all();
      });
    }
    tg.wait();
    TM_RETURN_IF_ERROR(errors_.status());
    if (CancelRequested()) return Status::Cancelled("index build interrupted");
    for (const SkipStats& s : worker_skips) skips->Add(s);
    for (const SkipStats& s : reader_skips_) skips->Add(s);
    seg->records = 0;
    for (const uint64_t r : worker_records) seg->records += r;
    for (size_t i = 0; i < seg->skipped.size(); ++i) seg->skipped[i] = skips->counts[i];
    seg->files = files_;
    *bytes_read = total_bytes_;
    return Status::Ok();
  }

 private:
  struct Open {
    size_t index = 0;
    std::unique_ptr<BlockReader> blocks;
    std::unique_ptr<RecordReader> records;
    uint64_t reported = 0;
  };

  // Takes an open file (or opens the next), or returns nullptr when all are done.
  Result<std::unique_ptr<Open>> Take() {
    std::unique_lock<std::mutex> lock(mu_);
    while (true) {
      if (errors_.failed() || CancelRequested()) return std::unique_ptr<Open>();
      if (!idle_.empty()) {
        auto o = std::move(idle_.back());
        idle_.pop_back();
        return o;
      }
      if (next_ < paths_.size() && open_ < max_open_) {
        const size_t i = next_++;
        ++open_;
        lock.unlock();
        auto o = std::make_unique<Open>();
        o->index = i;
        TM_ASSIGN_OR_RETURN(DetectedFormat df, DetectFormat(paths_[i], options_.read));
        if (df.format == InputFormat::kJsonl ||
            (df.format == InputFormat::kText && options_.read.text_lines)) {
          TM_ASSIGN_OR_RETURN(o->blocks, BlockReader::Open(paths_[i], options_.read));
        } else {
          TM_ASSIGN_OR_RETURN(o->records, RecordReader::Open(paths_[i], options_.read));
        }
        return o;
      }
      if (open_ == 0) return std::unique_ptr<Open>();
      cv_.wait(lock);
    }
  }

  void Give(std::unique_ptr<Open> o) {
    std::lock_guard<std::mutex> lock(mu_);
    idle_.push_back(std::move(o));
    cv_.notify_one();
  }

  Status Close(std::unique_ptr<Open> o) {
    const std::string& path = paths_[o->index];
    const SkipStats& s = o->blocks ? o->blocks->skips() : o->records->skips();
    // The checksum of the bytes just read, or (if the reader could not give one) of a
    // second read of the file.
    const std::optional<uint64_t> read_sum =
        o->blocks ? o->blocks->disk_checksum() : o->records->disk_checksum();
    uint64_t sum = 0;
    if (read_sum.has_value()) {
      sum = *read_sum;
    } else {
      TM_RETURN_IF_ERROR(HashFile(path, &sum));
    }
    TM_ASSIGN_OR_RETURN(ManifestFile now, StatFile(path));
    ManifestFile& f = files_[o->index];
    if (now.size != f.size || now.mtime_ns != f.mtime_ns) {
      return Status::BadInput(path + ": file changed while it was being indexed");
    }
    f.xxh3 = sum;
    std::lock_guard<std::mutex> lock(mu_);
    reader_skips_.push_back(s);
    --open_;
    cv_.notify_all();
    return Status::Ok();
  }

  void Progress(Open* o, uint64_t disk_read) {
    if (disk_read > o->reported) {
      progress_->AddBytes(disk_read - o->reported);
      o->reported = disk_read;
    }
    progress_->Report("reading");
  }

  Status Work(int w, SegmentBuilder* builder, SkipStats* skips, uint64_t* records) {
    BlockParser parser(options_.read);
    Tokenizer tokenizer(options_.text);
    LineBlock block;
    Record rec;
    auto add_record = [&](const Record& r) -> Status {
      // Token hashes only, turned into fingerprints where they lie.
      const std::span<uint64_t> h = tokenizer.TokenizeHashes(r.text);
      const size_t count = FingerprintsInPlace(h, options_.text);
      ++*records;
      return builder->AddDocument(w, h.first(count));
    };
    Status st;
    while (true) {
      TM_ASSIGN_OR_RETURN(std::unique_ptr<Open> o, Take());
      if (!o) break;
      if (o->blocks) {
        TM_ASSIGN_OR_RETURN(bool more, o->blocks->Next(&block));
        if (!more) {
          Progress(o.get(), o->blocks->disk_bytes_read());
          TM_RETURN_IF_ERROR(Close(std::move(o)));
          continue;
        }
        Progress(o.get(), o->blocks->disk_bytes_read());
        // The block outlives our hold on the reader: another worker may reach the end
        // of the file and destroy the reader (and the path string it owns) while this
        // block is parsed, so point at the path we own instead.
        block.path = &paths_[o->index];
        Give(std::move(o));
        uint64_t n = 0;
        parser.Reset(&block);
        while (true) {
          TM_ASSIGN_OR_RETURN(bool got, parser.Next(&rec));
          if (!got) break;
          TM_RETURN_IF_ERROR(add_record(rec));
          ++n;
        }
        progress_->AddRecords(n);
        if (CancelRequested()) return Status::Cancelled("index build interrupted");
      } else {
        // A whole-file format (JSON array, CSV, whole .txt): this worker reads it all.
        uint64_t n = 0;
        while (true) {
          TM_ASSIGN_OR_RETURN(bool got, o->records->Next(&rec));
          if (!got) break;
          TM_RETURN_IF_ERROR(add_record(rec));
          if (++n % 1024 == 0) {
            Progress(o.get(), o->records->disk_bytes_read());
            if (CancelRequested()) return Status::Cancelled("index build interrupted");
          }
        }
        progress_->AddRecords(n);
        Progress(o.get(), o->records->disk_bytes_read());
        TM_RETURN_IF_ERROR(Close(std::move(o)));
      }
    }
    skips->Add(parser.skips());
    return Status::Ok();
  }

  std::vector<std::string> paths_;
  const IndexBuildOptions& options_;
  size_t max_open_;
  std::vector<ManifestFile> files_;
  ProgressReporter* progress_;
  uint64_t total_bytes_ = 0;
  std::mutex mu_;
  std::condition_variable cv_;
  std::vector<std::unique_ptr<Open>> idle_;
  size_t next_ = 0;
  size_t open_ = 0;
  std::vector<SkipStats> reader_skips_;
  FirstError errors_;
};

// ---- writing a segment ------------------------------------------------------------

// A fixed share of the budget for everything that is not a fingerprint buffer: the
// process itself, blocks in flight, decompression windows, token vectors.
uint64_t PipelineReserve(int workers) { return (48ull << 20) + static_cast<uint64_t>(workers) * (24ull << 20); }

struct SegmentJob {
  std::string dir;
  std::string temp_root;
  IndexManifest manifest;  // parameters (+ existing segments when adding)
  bool adding = false;
};

using Feed = std::function<Status(SegmentBuilder*, int workers, ProgressReporter*, ManifestSegment*,
                                  IndexBuildStats*)>;

Status WriteSegment(SegmentJob& job, const IndexBuildOptions& o, const Feed& feed,
                    IndexBuildStats* stats) {
  const auto t0 = Clock::now();
  const double cpu0 = ProcessCpuSeconds();
  const ChosenEnv chosen(o.env, o.sync);
  Env* env = chosen.get();
  const int threads = ResolveThreads(o.threads);
  const uint64_t budget = ResolveBudget(o.memory_budget);
  const uint64_t reserve = std::min(budget / 2, PipelineReserve(threads));
  const uint64_t buffers = budget - reserve;

  uint32_t seg_id = 1;
  for (const auto& s : job.manifest.segments) seg_id = std::max(seg_id, s.id + 1);
  const std::string final_dir = JoinPath(job.dir, fmt::SegmentDirName(seg_id));
  const std::string staging = final_dir + ".tmp." + std::to_string(::getpid());
  const std::string run_dir = JoinPath(job.temp_root, ".tmp-" + std::to_string(::getpid()));
  TM_RETURN_IF_ERROR(env->RemoveTree(staging));
  TM_RETURN_IF_ERROR(env->CreateDirs(staging));

  ShardParams params;
  params.shard_bits = job.manifest.shard_bits;
  params.bloom_bits_per_key = job.manifest.bloom_bits_per_key;
  params.params_hash = job.manifest.params_hash();
  ProgressReporter progress(o.progress);

  ManifestSegment seg;
  seg.id = seg_id;
  Status st;
  uint64_t spills = 0, spilled_bytes = 0;
  {
    SegmentBuilder builder(params, threads, buffers, budget - std::min(budget / 4, uint64_t{48} << 20),
                           run_dir, env, &progress, o.direct_writes);
    tbb::task_arena arena(threads);
    arena.execute([&] { st = feed(&builder, threads, &progress, &seg, stats); });
    stats->seconds_reading = SecondsSince(t0);
    const double cpu1 = ProcessCpuSeconds();
    stats->cpu_seconds_reading = cpu1 - cpu0;
    if (st.ok() && CancelRequested()) st = Status::Cancelled("index build interrupted");
    if (st.ok()) {
      progress.SetUnits("merging", 0, uint64_t{1} << params.shard_bits, "shards");
      progress.Report("merging", true);
      const auto t1 = Clock::now();
      st = builder.Finish(staging, threads, &seg);
      stats->seconds_writing = SecondsSince(t1);
      stats->cpu_seconds_writing = ProcessCpuSeconds() - cpu1;
    }
    spills = builder.spills();
    spilled_bytes = builder.spilled_bytes();
  }  // the builder's destructor removes the run directory
  if (st.ok()) st = env->Rename(staging, final_dir);
  if (!st.ok()) {
    (void)env->RemoveTree(staging);
    return st;
  }
  Status synced = env->SyncDir(job.dir);
  seg.build = MakeBuildInfo(SecondsSince(t0), threads, spills);
  job.manifest.segments.push_back(seg);
  if (synced.ok()) synced = WriteManifest(job.dir, job.manifest, env);
  if (!synced.ok()) {
    // The segment is not listed, so it does not exist; remove it now rather than later.
    (void)env->RemoveTree(final_dir);
    return synced;
  }
  progress.Report("done", true);
  stats->records = seg.records;
  stats->ngrams_total = seg.ngrams_total;
  stats->ngrams_distinct = seg.ngrams_distinct;
  stats->index_bytes = seg.bytes;
  stats->spills = spills;
  stats->spilled_bytes = spilled_bytes;
  stats->segment_id = seg_id;
  stats->seconds = SecondsSince(t0);
  return Status::Ok();
}

// Prepares `job` for a new index (`adding` false) or a new segment.
Status PrepareJob(const std::string& dir, const IndexBuildOptions& o, bool adding, SegmentJob* job,
                  DirLock* lock) {
  TM_RETURN_IF_ERROR(ValidateBuildOptions(o));
  const ChosenEnv chosen(o.env, o.sync);
  Env* env = chosen.get();
  job->dir = dir;
  job->temp_root = o.temp_dir.empty() ? dir : o.temp_dir;
  job->adding = adding;
  if (adding) {
    TM_ASSIGN_OR_RETURN(job->manifest, ReadManifest(dir));
    const IndexManifest& m = job->manifest;
    TM_RETURN_IF_ERROR(CompareTextOptions(m.text, o.text).WithContext(dir));
    TM_RETURN_IF_ERROR(CompareReadOptions(m.read, o.read).WithContext(dir));
    if (m.shard_bits != o.shard_bits || m.bloom_bits_per_key != o.bloom_bits_per_key) {
      return Status::Mismatch(dir + ": index has " + std::to_string(1u << m.shard_bits) +
                              " shards and " + std::to_string(m.bloom_bits_per_key) +
                              " Bloom bits per key, asked for " + std::to_string(1u << o.shard_bits) +
                              " and " + std::to_string(o.bloom_bits_per_key));
    }
    TM_RETURN_IF_ERROR(lock->Acquire(dir));
  } else {
    if (env->FileExists(ManifestPath(dir))) {
      return Status::InvalidArgument(dir + ": already an index; use `tidemark index add` to add "
                                           "files, or remove it first");
    }
    if (env->FileExists(dir)) {
      TM_ASSIGN_OR_RETURN(auto names, env->ListDir(dir));
      for (const auto& n : names) {
        if (!IsOurName(n)) {
          return Status::InvalidArgument(dir + ": directory is not empty and not a tidemark "
                                               "index (holds '" + n + "'); refusing to write into it");
        }
      }
    }
    TM_RETURN_IF_ERROR(env->CreateDirs(dir));
    TM_RETURN_IF_ERROR(lock->Acquire(dir));
    job->manifest = IndexManifest{};
    job->manifest.text = o.text;
    job->manifest.read = o.read;
    job->manifest.shard_bits = o.shard_bits;
    job->manifest.bloom_bits_per_key = o.bloom_bits_per_key;
  }
  if (!o.temp_dir.empty()) TM_RETURN_IF_ERROR(env->CreateDirs(o.temp_dir));
  return RemoveStaleFiles(dir, job->temp_root, env);
}

Status BuildOrAdd(const std::string& dir, const std::vector<std::string>& inputs,
                  const IndexBuildOptions& o, bool adding, IndexBuildStats* stats) {
  *stats = IndexBuildStats{};
  // Sorted absolute paths: the manifest and the bytes do not depend on input order.
  std::vector<std::string> paths;
  for (const auto& p : inputs) paths.push_back(AbsolutePath(p));
  std::sort(paths.begin(), paths.end());
  paths.erase(std::unique(paths.begin(), paths.end()), paths.end());
  DirLock lock;
  SegmentJob job;
  TM_RETURN_IF_ERROR(PrepareJob(dir, o, adding, &job, &lock));
  if (adding) {
    for (const auto& f : job.manifest.AllFiles()) {
      if (std::binary_search(paths.begin(), paths.end(), f.path)) {
        return Status::InvalidArgument(f.path + ": already in the index " + dir);
      }
    }
  }
  const std::string index_abs = AbsolutePath(dir);
  for (const auto& p : paths) {
    if (p.compare(0, index_abs.size() + 1, index_abs + "/") == 0) {
      return Status::InvalidArgument(p + ": inside the index directory itself");
    }
  }
  stats->files = paths.size();
  Feed feed = [&](SegmentBuilder* b, int workers, ProgressReporter* progress, ManifestSegment* seg,
                  IndexBuildStats* st) {
    CorpusFeeder feeder(paths, o, workers, progress);
    return feeder.Run(b, workers, seg, &st->skips, &st->bytes_read);
  };
  return WriteSegment(job, o, feed, stats);
}

// ---- merging -----------------------------------------------------------------------

// Merges shard `s` of all `inputs` (segments of one or more opened indexes) into
// staging; fills seg->shards[s].
Status MergeShardFiles(const std::vector<std::vector<const ShardReader*>>& by_shard,
                       const ShardParams& base, const std::string& staging, int threads,
                       bool direct, Env* env, ProgressReporter* progress, ManifestSegment* seg) {
  const uint32_t num_shards = static_cast<uint32_t>(by_shard.size());
  seg->shards.assign(num_shards, ManifestShard{});
  FirstError errors;
  std::atomic<uint32_t> done{0};
  progress->SetUnits("merging", 0, num_shards, "shards");
  progress->Report("merging", true);
  // Shard files are written in the background while the next shards are merged.
  BackgroundShardWriter io(env, direct, /*max_pending=*/1);
  tbb::task_arena arena(threads);
  arena.execute([&] {
    tbb::parallel_for(uint32_t{0}, num_shards, [&](uint32_t s) {
      if (errors.failed() || io.failed() || CancelRequested()) return;
      std::vector<std::unique_ptr<SortedSource>> sources;
      for (const ShardReader* r : by_shard[s]) sources.push_back(std::make_unique<ShardSource>(r));
      ShardParams p = base;
      p.shard_id = s;
      ShardWriter writer(p);
      Status st = MergeSources(sources, [&](const MergeRecord& r) {
        writer.Add(r.fp, r.count, r.docs);
        return Status::Ok();
      });
      if (st.ok()) st = SubmitShard(&writer, s, staging, io.TakeWritten(), &io, &seg->shards[s]);
      if (!st.ok()) return errors.Set(st);
      progress->SetUnits("merging", done.fetch_add(1) + 1, num_shards, "shards");
      progress->Report("merging");
    }, tbb::simple_partitioner());
  });
  errors.Set(io.Finish());
  TM_RETURN_IF_ERROR(errors.status());
  if (CancelRequested()) return Status::Cancelled("merge interrupted");
  seg->ngrams_distinct = 0;
  seg->bytes = 0;
  for (const auto& sh : seg->shards) {
    seg->ngrams_distinct += sh.keys;
    seg->bytes += sh.bytes;
  }
  return SyncNewShards(env, staging, progress);
}

// The merged segment's corpus bookkeeping: union of files, sums.
void CombineSegments(const std::vector<const ManifestSegment*>& segs, ManifestSegment* out) {
  out->files.clear();
  out->records = 0;
  out->skipped = SkipCounts{};
  out->ngrams_total = 0;
  for (const ManifestSegment* s : segs) {
    out->files.insert(out->files.end(), s->files.begin(), s->files.end());
    out->records += s->records;
    for (size_t i = 0; i < out->skipped.size(); ++i) out->skipped[i] += s->skipped[i];
    out->ngrams_total += s->ngrams_total;
  }
  std::sort(out->files.begin(), out->files.end(),
            [](const ManifestFile& a, const ManifestFile& b) { return a.path < b.path; });
}

bool SameParameters(const IndexManifest& a, const IndexManifest& b, std::string* why) {
  Status t = CompareTextOptions(a.text, b.text);
  if (!t.ok()) {
    *why = t.message();
    return false;
  }
  Status r = CompareReadOptions(a.read, b.read);
  if (!r.ok()) {
    *why = r.message();
    return false;
  }
  if (a.shard_bits != b.shard_bits || a.bloom_bits_per_key != b.bloom_bits_per_key) {
    *why = "shard count or Bloom bits per key differ";
    return false;
  }
  return true;
}

}  // namespace

// ---- public functions ---------------------------------------------------------------

Result<uint64_t> ParseByteSize(const std::string& text) {
  if (text.empty()) return Status::InvalidArgument("empty size");
  char* end = nullptr;
  const double value = std::strtod(text.c_str(), &end);
  if (end == text.c_str()) {
    return Status::InvalidArgument("bad size '" + text + "' (expected e.g. 512M, 4G)");
  }
  std::string unit(end);
  for (auto& c : unit) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  if (unit.size() >= 2 && unit.substr(unit.size() - 2) == "IB") unit.resize(unit.size() - 2);
  else if (!unit.empty() && unit.back() == 'B') unit.pop_back();
  double mult = 1;
  if (unit.empty()) mult = 1;
  else if (unit == "K") mult = 1024.0;
  else if (unit == "M") mult = 1024.0 * 1024;
  else if (unit == "G") mult = 1024.0 * 1024 * 1024;
  else if (unit == "T") mult = 1024.0 * 1024 * 1024 * 1024;
  else return Status::InvalidArgument("bad size unit in '" + text + "' (use K, M, G or T)");
  if (!(value >= 0) || value * mult > 1.8e19) {
    return Status::InvalidArgument("size '" + text + "' out of range");
  }
  return static_cast<uint64_t>(value * mult);
}

Status RemoveStaleFiles(const std::string& dir, const std::string& temp_root, Env* env) {
  auto remove_dead_tmp = [env](const std::string& root) -> Status {
    if (!env->FileExists(root)) return Status::Ok();
    TM_ASSIGN_OR_RETURN(auto names, env->ListDir(root));
    for (const auto& n : names) {
      const long pid = PidAfter(n, ".tmp-");
      if (pid >= 0 && !PidAlive(pid)) TM_RETURN_IF_ERROR(env->RemoveTree(JoinPath(root, n)));
    }
    return Status::Ok();
  };
  TM_RETURN_IF_ERROR(remove_dead_tmp(temp_root));
  if (temp_root != dir) TM_RETURN_IF_ERROR(remove_dead_tmp(dir));
  if (!env->FileExists(dir)) return Status::Ok();
  std::vector<uint32_t> listed;
  if (env->FileExists(ManifestPath(dir))) {
    auto m = ReadManifest(dir);
    if (!m.ok()) return Status::Ok();  // leave a damaged index alone; verify reports it
    for (const auto& s : m->segments) listed.push_back(s.id);
  }
  TM_ASSIGN_OR_RETURN(auto names, env->ListDir(dir));
  const std::string manifest_tmp = std::string(fmt::kManifestName) + ".tmp.";
  for (const auto& n : names) {
    long pid = -1;
    const auto id = SegmentIdOf(n, &pid);
    if (id) {
      const bool stale = pid >= 0 ? !PidAlive(pid)
                                  : std::find(listed.begin(), listed.end(), *id) == listed.end();
      if (stale) TM_RETURN_IF_ERROR(env->RemoveTree(JoinPath(dir, n)));
      continue;
    }
    const long mpid = PidAfter(n, manifest_tmp);
    if (mpid >= 0 && !PidAlive(mpid)) TM_RETURN_IF_ERROR(env->RemoveFile(JoinPath(dir, n)));
  }
  return Status::Ok();
}

Status BuildIndex(const std::string& dir, const std::vector<std::string>& inputs,
                  const IndexBuildOptions& options, IndexBuildStats* stats) {
  return BuildOrAdd(dir, inputs, options, false, stats);
}

Status AddSegment(const std::string& dir, const std::vector<std::string>& inputs,
                  const IndexBuildOptions& options, IndexBuildStats* stats) {
  return BuildOrAdd(dir, inputs, options, true, stats);
}

Status BuildIndexFromDocuments(const std::string& dir,
                               std::span<const std::vector<uint64_t>> documents,
                               const IndexBuildOptions& options, bool add,
                               IndexBuildStats* stats) {
  *stats = IndexBuildStats{};
  DirLock lock;
  SegmentJob job;
  TM_RETURN_IF_ERROR(PrepareJob(dir, options, add, &job, &lock));
  Feed feed = [&](SegmentBuilder* b, int, ProgressReporter*, ManifestSegment* seg,
                  IndexBuildStats*) -> Status {
    FirstError errors;
    tbb::parallel_for(tbb::blocked_range<size_t>(0, documents.size(), 64),
                      [&](const tbb::blocked_range<size_t>& r) {
                        if (errors.failed()) return;
                        const int w = tbb::this_task_arena::current_thread_index();
                        for (size_t i = r.begin(); i < r.end(); ++i) {
                          Status st = b->AddDocument(w, documents[i]);
                          if (!st.ok()) return errors.Set(st);
                        }
                      });
    seg->records = documents.size();
    return errors.status();
  };
  return WriteSegment(job, options, feed, stats);
}

Status MergeSegments(const std::string& dir, const IndexMergeOptions& o, IndexMergeStats* stats) {
  const auto t0 = Clock::now();
  *stats = IndexMergeStats{};
  const ChosenEnv chosen(o.env, o.sync);
  Env* env = chosen.get();
  const int threads = ResolveThreads(o.threads);
  TM_ASSIGN_OR_RETURN(IndexManifest m, ReadManifest(dir));
  DirLock lock;
  TM_RETURN_IF_ERROR(lock.Acquire(dir));
  TM_RETURN_IF_ERROR(RemoveStaleFiles(dir, dir, env));
  stats->segments_in = static_cast<uint32_t>(m.segments.size());
  if (m.segments.size() <= 1) {
    stats->ngrams_distinct = m.ngrams_distinct();
    stats->index_bytes = m.shard_bytes();
    return Status::Ok();
  }
  ProgressReporter progress(o.progress);
  progress.Report("verifying", true);
  TM_ASSIGN_OR_RETURN(auto readers, OpenAllShards(dir, m, /*verify_checksums=*/true, threads));
  const size_t nseg = m.segments.size();
  const uint32_t num_shards = 1u << m.shard_bits;
  std::vector<std::vector<const ShardReader*>> by_shard(num_shards);
  for (uint32_t s = 0; s < num_shards; ++s) {
    for (size_t g = 0; g < nseg; ++g) by_shard[s].push_back(readers[s * nseg + g].get());
  }
  uint32_t seg_id = m.segments.back().id + 1;
  const std::string final_dir = JoinPath(dir, fmt::SegmentDirName(seg_id));
  const std::string staging = final_dir + ".tmp." + std::to_string(::getpid());
  TM_RETURN_IF_ERROR(env->RemoveTree(staging));
  TM_RETURN_IF_ERROR(env->CreateDirs(staging));
  ShardParams base;
  base.shard_bits = m.shard_bits;
  base.bloom_bits_per_key = m.bloom_bits_per_key;
  base.params_hash = m.params_hash();
  ManifestSegment seg;
  seg.id = seg_id;
  Status st = MergeShardFiles(by_shard, base, staging, threads, o.direct_writes, env, &progress, &seg);
  if (st.ok()) st = env->Rename(staging, final_dir);
  if (!st.ok()) {
    (void)env->RemoveTree(staging);
    return st;
  }
  std::vector<const ManifestSegment*> olds;
  for (const auto& s : m.segments) olds.push_back(&s);
  CombineSegments(olds, &seg);
  seg.build = MakeBuildInfo(SecondsSince(t0), threads, 0);
  IndexManifest out = m;
  out.segments = {seg};
  st = env->SyncDir(dir);
  if (st.ok()) st = WriteManifest(dir, out, env);
  if (!st.ok()) {
    (void)env->RemoveTree(final_dir);
    return st;
  }
  readers.clear();
  for (const auto& s : m.segments) {
    (void)env->RemoveTree(JoinPath(dir, fmt::SegmentDirName(s.id)));
  }
  stats->segment_id = seg_id;
  stats->ngrams_distinct = seg.ngrams_distinct;
  stats->index_bytes = seg.bytes;
  stats->seconds = SecondsSince(t0);
  return Status::Ok();
}

Status MergeIndexes(const std::string& out_dir, const std::vector<std::string>& inputs,
                    const IndexMergeOptions& o, IndexMergeStats* stats) {
  const auto t0 = Clock::now();
  *stats = IndexMergeStats{};
  if (inputs.empty()) return Status::InvalidArgument("no input indexes to merge");
  const ChosenEnv chosen(o.env, o.sync);
  Env* env = chosen.get();
  const int threads = ResolveThreads(o.threads);
  std::vector<IndexManifest> ms;
  for (const auto& in : inputs) {
    TM_ASSIGN_OR_RETURN(IndexManifest m, ReadManifest(in));
    std::string why;
    if (!ms.empty() && !SameParameters(ms.front(), m, &why)) {
      return Status::Mismatch(in + ": parameters differ from " + inputs.front() + ": " + why);
    }
    ms.push_back(std::move(m));
  }
  // Disjoint corpus files.
  std::vector<std::pair<std::string, size_t>> all;
  for (size_t i = 0; i < ms.size(); ++i) {
    for (const auto& f : ms[i].AllFiles()) all.emplace_back(f.path, i);
  }
  std::sort(all.begin(), all.end());
  for (size_t i = 1; i < all.size(); ++i) {
    if (all[i].first == all[i - 1].first) {
      return Status::InvalidArgument(all[i].first + ": indexed in both " + inputs[all[i - 1].second] +
                                     " and " + inputs[all[i].second]);
    }
  }
  if (env->FileExists(ManifestPath(out_dir))) {
    return Status::InvalidArgument(out_dir + ": already an index");
  }
  if (env->FileExists(out_dir)) {
    TM_ASSIGN_OR_RETURN(auto names, env->ListDir(out_dir));
    for (const auto& n : names) {
      if (!IsOurName(n)) return Status::InvalidArgument(out_dir + ": directory is not empty");
    }
  }
  TM_RETURN_IF_ERROR(env->CreateDirs(out_dir));
  DirLock lock;
  TM_RETURN_IF_ERROR(lock.Acquire(out_dir));
  TM_RETURN_IF_ERROR(RemoveStaleFiles(out_dir, out_dir, env));
  const uint32_t num_shards = 1u << ms.front().shard_bits;
  std::vector<std::vector<std::unique_ptr<ShardReader>>> readers;
  std::vector<std::vector<const ShardReader*>> by_shard(num_shards);
  std::vector<const ManifestSegment*> segs;
  for (size_t i = 0; i < ms.size(); ++i) {
    TM_ASSIGN_OR_RETURN(auto r, OpenAllShards(inputs[i], ms[i], true, threads));
    const size_t nseg = ms[i].segments.size();
    for (uint32_t s = 0; s < num_shards; ++s) {
      for (size_t g = 0; g < nseg; ++g) by_shard[s].push_back(r[s * nseg + g].get());
    }
    for (const auto& sg : ms[i].segments) segs.push_back(&sg);
    readers.push_back(std::move(r));
  }
  stats->segments_in = static_cast<uint32_t>(segs.size());
  const std::string final_dir = JoinPath(out_dir, fmt::SegmentDirName(1));
  const std::string staging = final_dir + ".tmp." + std::to_string(::getpid());
  TM_RETURN_IF_ERROR(env->CreateDirs(staging));
  ShardParams base;
  base.shard_bits = ms.front().shard_bits;
  base.bloom_bits_per_key = ms.front().bloom_bits_per_key;
  base.params_hash = ms.front().params_hash();
  ProgressReporter progress(o.progress);
  ManifestSegment seg;
  seg.id = 1;
  Status st = MergeShardFiles(by_shard, base, staging, threads, o.direct_writes, env, &progress, &seg);
  if (st.ok()) st = env->Rename(staging, final_dir);
  if (!st.ok()) {
    (void)env->RemoveTree(staging);
    return st;
  }
  CombineSegments(segs, &seg);
  seg.build = MakeBuildInfo(SecondsSince(t0), threads, 0);
  IndexManifest out = ms.front();
  out.segments = {seg};
  st = env->SyncDir(out_dir);
  if (st.ok()) st = WriteManifest(out_dir, out, env);
  if (!st.ok()) {
    (void)env->RemoveTree(final_dir);
    return st;
  }
  stats->segment_id = 1;
  stats->ngrams_distinct = seg.ngrams_distinct;
  stats->index_bytes = seg.bytes;
  stats->seconds = SecondsSince(t0);
  return Status::Ok();
}

Status InspectIndex(const std::string& dir, IndexInspection* out) {
  *out = IndexInspection{};
  TM_ASSIGN_OR_RETURN(out->manifest_json, ReadFileToString(ManifestPath(dir)));
  TM_ASSIGN_OR_RETURN(IndexManifest m, IndexManifest::Parse(out->manifest_json, ManifestPath(dir)));
  TM_ASSIGN_OR_RETURN(auto readers, OpenAllShards(dir, m, /*verify_checksums=*/false, 0));
  out->identity = m.Identity();
  out->ngrams_distinct = m.ngrams_distinct();
  out->ngrams_total = m.ngrams_total();
  out->bytes = m.shard_bytes();
  out->bytes_per_ngram = out->ngrams_distinct > 0
                             ? static_cast<double>(out->bytes) / static_cast<double>(out->ngrams_distinct)
                             : 0.0;
  out->bloom_formula_fpr = BlockedBloomExpectedFpr(m.bloom_bits_per_key, m.bloom_k());
  const size_t nseg = m.segments.size();
  out->shards.resize(readers.size());
  tbb::parallel_for(size_t{0}, readers.size(), [&](size_t i) {
    const ShardReader& r = *readers[i];
    ShardStats& s = out->shards[i];
    s.segment_id = m.segments[i % nseg].id;
    s.shard_id = static_cast<uint32_t>(i / nseg);
    s.path = r.path();
    s.keys = r.size();
    s.bytes = r.file_bytes();
    s.bloom_bytes = r.section(fmt::kSecBloom).bytes;
    s.bucket_bits = r.bucket_bits();
    s.remainder_bits = r.remainder_bits();
    s.bloom_fill = r.bloom().FillRatio();
    s.bloom_expected_fpr = std::pow(s.bloom_fill, static_cast<double>(r.bloom().k()));
    s.total_count = r.total_count();
    s.total_docs = r.total_docs();
    uint64_t mx = 0;
    for (uint64_t k = 0; k < r.size(); ++k) mx = std::max<uint64_t>(mx, r.CountAt(k));
    s.max_count = mx;
  });
  double weighted = 0;
  for (const auto& s : out->shards) weighted += s.bloom_expected_fpr * static_cast<double>(s.keys);
  out->bloom_mean_expected_fpr =
      out->ngrams_distinct > 0 ? weighted / static_cast<double>(out->ngrams_distinct) : 0.0;
  // Keep the table in (segment, shard) order.
  std::sort(out->shards.begin(), out->shards.end(), [](const ShardStats& a, const ShardStats& b) {
    return a.segment_id != b.segment_id ? a.segment_id < b.segment_id : a.shard_id < b.shard_id;
  });
  return Status::Ok();
}

Status VerifyIndex(const std::string& dir, int threads, IndexVerifyReport* report) {
  *report = IndexVerifyReport{};
  TM_ASSIGN_OR_RETURN(IndexManifest m, ReadManifest(dir));
  TM_ASSIGN_OR_RETURN(auto readers, OpenAllShards(dir, m, /*verify_checksums=*/true, threads));
  FirstError errors;
  tbb::task_arena arena(threads > 0 ? threads : tbb::task_arena::automatic);
  arena.execute([&] {
    tbb::parallel_for(size_t{0}, readers.size(), [&](size_t i) {
      if (errors.failed()) return;
      errors.Set(readers[i]->VerifyInvariants());
    });
  });
  TM_RETURN_IF_ERROR(errors.status());
  // Manifest totals against the shards.
  const size_t nseg = m.segments.size();
  for (size_t g = 0; g < nseg; ++g) {
    uint64_t total = 0;
    bool saturated = false;
    for (size_t s = 0; s < (size_t{1} << m.shard_bits); ++s) {
      const ShardReader& r = *readers[s * nseg + g];
      total += r.total_count();
      if (r.total_count() >= fmt::kMaxCount) saturated = true;
    }
    if (!saturated && total != m.segments[g].ngrams_total) {
      return Status::Corruption(ManifestPath(dir) + ": segment " + std::to_string(m.segments[g].id) +
                                " ngrams_total " + std::to_string(m.segments[g].ngrams_total) +
                                " differs from the shards' sum of counts " + std::to_string(total));
    }
  }
  for (const auto& r : readers) {
    ++report->shards_checked;
    report->bytes_checked += r->file_bytes();
    report->keys_checked += r->size();
  }
  return Status::Ok();
}

Status DumpIndex(const std::string& dir,
                 const std::function<Status(uint64_t fp, const NgramInfo& info)>& fn) {
  TM_ASSIGN_OR_RETURN(IndexManifest m, ReadManifest(dir));
  TM_ASSIGN_OR_RETURN(auto readers, OpenAllShards(dir, m, /*verify_checksums=*/true, 0));
  const size_t nseg = m.segments.size();
  for (uint32_t s = 0; s < (1u << m.shard_bits); ++s) {
    std::vector<std::unique_ptr<SortedSource>> sources;
    for (size_t g = 0; g < nseg; ++g) sources.push_back(std::make_unique<ShardSource>(readers[s * nseg + g].get()));
    TM_RETURN_IF_ERROR(MergeSources(sources, [&](const MergeRecord& r) {
      NgramInfo info;
      info.count = static_cast<uint32_t>(std::min<uint64_t>(r.count, fmt::kMaxCount));
      info.docs = static_cast<uint32_t>(std::min<uint64_t>(r.docs, fmt::kMaxCount));
      return fn(r.fp, info);
    }));
  }
  return Status::Ok();
}

}  // namespace tidemark
