#include "index/kway_merge.h"

#include <fcntl.h>
#include <unistd.h>
#define XXH_STATIC_LINKING_ONLY  // XXH3_state_t on the stack
#include <xxhash.h>

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <queue>
#include <span>

#include "index/format.h"
#include "index/radix_sort.h"

namespace tidemark {

namespace fmt = index_format;

namespace {

constexpr uint64_t kRunMagic = 0x0100004E55524D54ull;  // bytes "TMRUN\0\0\x01" read as LE64
constexpr size_t kRunWriteBuffer = 1 << 20;

void PutVarint(uint64_t v, std::string* out) {
  while (v >= 0x80) {
    out->push_back(static_cast<char>((v & 0x7F) | 0x80));
    v >>= 7;
  }
  out->push_back(static_cast<char>(v));
}

class RunRangeSource final : public SortedSource {
 public:
  RunRangeSource(int fd, const std::string* path, uint32_t shard, const RunFile::Range& range,
                 size_t buffer_bytes)
      : fd_(fd), path_(path), shard_(shard), range_(range), buf_(std::max<size_t>(buffer_bytes, 64)) {
    XXH3_64bits_reset(&state_);
  }
  bool Next(MergeRecord* rec) override {
    if (!status_.ok()) return false;
    if (decoded_ == range_.records) {
      if (!finished_) {
        finished_ = true;
        if (consumed_ != range_.bytes || XXH3_64bits_digest(&state_) != range_.xxh3) {
          status_ = Status::Corruption(*path_ + "@" + std::to_string(range_.offset) +
                                       ": spilled run of shard " + std::to_string(shard_) +
                                       " is damaged (checksum mismatch)");
        }
      }
      return false;
    }
    uint64_t delta, tag, docs;
    if (!ReadVarint(&delta) || !ReadVarint(&tag)) return false;
    const uint64_t count = tag >> 1;
    if ((tag & 1) != 0) {
      if (!ReadVarint(&docs)) return false;
    } else {
      docs = count;
    }
    fp_ = decoded_ == 0 ? delta : fp_ + delta;
    ++decoded_;
    rec->fp = fp_;
    rec->count = count;
    rec->docs = docs;
    return true;
  }
  Status status() const override { return status_; }

 private:
  bool Fill() {
    const uint64_t left = range_.bytes - consumed_ - (end_ - pos_);
    if (left == 0) {
      status_ = Status::Corruption(*path_ + ": spilled run of shard " + std::to_string(shard_) +
                                   " ends early");
      return false;
    }
    // Keep the unconsumed tail.
    const size_t tail = end_ - pos_;
    std::memmove(buf_.data(), buf_.data() + pos_, tail);
    pos_ = 0;
    end_ = tail;
    const size_t want = static_cast<size_t>(std::min<uint64_t>(left, buf_.size() - tail));
    const uint64_t file_off = range_.offset + consumed_ + tail;
    size_t got = 0;
    while (got < want) {
      const ssize_t r = ::pread(fd_, buf_.data() + end_ + got, want - got,
                                static_cast<off_t>(file_off + got));
      if (r < 0 && errno == EINTR) continue;
      if (r <= 0) {
        status_ = Status::IOError(*path_ + "@" + std::to_string(file_off + got) + ": read: " +
                                  (r < 0 ? std::strerror(errno) : "unexpected end of file"));
        return false;
      }
      got += static_cast<size_t>(r);
    }
    XXH3_64bits_update(&state_, buf_.data() + end_, got);
    end_ += got;
    return true;
  }
  bool ReadVarint(uint64_t* v) {
    uint64_t out = 0;
    for (int shift = 0; shift < 64; shift += 7) {
      if (pos_ == end_ && !Fill()) return false;
      const uint8_t b = static_cast<uint8_t>(buf_[pos_++]);
      ++consumed_;
      out |= static_cast<uint64_t>(b & 0x7F) << shift;
      if ((b & 0x80) == 0) {
        *v = out;
        return true;
      }
    }
    status_ = Status::Corruption(*path_ + ": bad varint in spilled run");
    return false;
  }

  int fd_;
  const std::string* path_;
  uint32_t shard_;
  RunFile::Range range_;
  std::vector<char> buf_;
  size_t pos_ = 0, end_ = 0;
  uint64_t consumed_ = 0;  // bytes decoded (not merely buffered)
  uint64_t decoded_ = 0;
  uint64_t fp_ = 0;
  bool finished_ = false;
  XXH3_state_t state_;
  Status status_;
};

}  // namespace

bool BufferSource::Next(MergeRecord* rec) {
  if (i_ == main_.size()) return false;
  const uint64_t fp = main_[i_];
  uint64_t docs = 0;
  while (i_ < main_.size() && main_[i_] == fp) {
    ++docs;
    ++i_;
  }
  uint64_t count = docs;
  while (e_ < extras_.size() && extras_[e_].fp <= fp) {
    if (extras_[e_].fp == fp) count += extras_[e_].extra;
    ++e_;
  }
  rec->fp = fp;
  rec->count = count;
  rec->docs = docs;
  return true;
}

bool ShardSource::Next(MergeRecord* rec) {
  if (i_ >= shard_->size()) return false;
  while (shard_->DirAt(bucket_ + 1) <= i_) ++bucket_;
  rec->fp = shard_->MakeKey(bucket_, shard_->RemainderAt(i_));
  uint32_t count, docs;
  shard_->CountsAt(i_, &count, &docs);
  rec->count = count;
  rec->docs = docs;
  ++i_;
  return true;
}

RunWriter::RunWriter(std::string path, uint32_t shard_bits, Env* env)
    : path_(std::move(path)), shard_bits_(shard_bits), env_(env), ranges_(size_t{1} << shard_bits) {}

Status RunWriter::Open() {
  TM_ASSIGN_OR_RETURN(file_, env_->NewWritableFile(path_));
  buf_.reserve(kRunWriteBuffer);
  return Status::Ok();
}

void RunWriter::CloseShard() {
  if (cur_shard_ < 0) return;
  Range& r = ranges_[static_cast<size_t>(cur_shard_)];
  r.bytes = bytes_ - r.offset;
  r.xxh3 = XXH3_64bits_digest(&state_);
}

Status RunWriter::FlushBuffer() {
  if (buf_.empty()) return Status::Ok();
  TM_RETURN_IF_ERROR(file_->Append(buf_));
  buf_.clear();
  return Status::Ok();
}

Status RunWriter::Add(uint32_t shard, const MergeRecord& rec) {
  if (static_cast<int64_t>(shard) != cur_shard_) {
    CloseShard();
    cur_shard_ = shard;
    ranges_[shard].offset = bytes_;
    XXH3_64bits_reset(&state_);
  }
  Range& r = ranges_[shard];
  const size_t before = buf_.size();
  PutVarint(r.records == 0 ? rec.fp : rec.fp - prev_fp_, &buf_);
  const bool differ = rec.docs != rec.count;
  PutVarint((rec.count << 1) | (differ ? 1 : 0), &buf_);
  if (differ) PutVarint(rec.docs, &buf_);
  XXH3_64bits_update(&state_, buf_.data() + before, buf_.size() - before);
  bytes_ += buf_.size() - before;
  prev_fp_ = rec.fp;
  ++r.records;
  if (buf_.size() >= kRunWriteBuffer) return FlushBuffer();
  return Status::Ok();
}

Status RunWriter::Finish() {
  CloseShard();
  std::string trailer;
  trailer.resize(ranges_.size() * 32 + 16);
  for (size_t i = 0; i < ranges_.size(); ++i) {
    fmt::StoreLE64(trailer.data() + i * 32, ranges_[i].offset);
    fmt::StoreLE64(trailer.data() + i * 32 + 8, ranges_[i].bytes);
    fmt::StoreLE64(trailer.data() + i * 32 + 16, ranges_[i].records);
    fmt::StoreLE64(trailer.data() + i * 32 + 24, ranges_[i].xxh3);
  }
  fmt::StoreLE64(trailer.data() + ranges_.size() * 32, ranges_.size());
  fmt::StoreLE64(trailer.data() + ranges_.size() * 32 + 8, kRunMagic);
  buf_.append(trailer);
  TM_RETURN_IF_ERROR(FlushBuffer());
  // No fsync: runs are temporary and re-made by a new build after a crash.
  return file_->Close();
}

RunFile::~RunFile() {
  if (fd_ >= 0) ::close(fd_);
}

Result<std::unique_ptr<RunFile>> RunFile::Open(const std::string& path, uint32_t shard_bits) {
  std::unique_ptr<RunFile> f(new RunFile());
  f->path_ = path;
  f->fd_ = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (f->fd_ < 0) return Status::IOError(path + ": cannot open: " + std::strerror(errno));
  const off_t size = ::lseek(f->fd_, 0, SEEK_END);
  const size_t shards = size_t{1} << shard_bits;
  const uint64_t table = shards * 32 + 16;
  if (size < 0 || static_cast<uint64_t>(size) < table) {
    return Status::Corruption(path + ": spilled run is truncated");
  }
  std::string t(table, '\0');
  const uint64_t base = static_cast<uint64_t>(size) - table;
  if (::pread(f->fd_, t.data(), table, static_cast<off_t>(base)) != static_cast<ssize_t>(table)) {
    return Status::IOError(path + ": cannot read the run table");
  }
  if (fmt::LoadLE64(t.data() + shards * 32) != shards ||
      fmt::LoadLE64(t.data() + shards * 32 + 8) != kRunMagic) {
    return Status::Corruption(path + "@" + std::to_string(base) + ": bad run trailer");
  }
  f->ranges_.resize(shards);
  for (size_t i = 0; i < shards; ++i) {
    Range& r = f->ranges_[i];
    r.offset = fmt::LoadLE64(t.data() + i * 32);
    r.bytes = fmt::LoadLE64(t.data() + i * 32 + 8);
    r.records = fmt::LoadLE64(t.data() + i * 32 + 16);
    r.xxh3 = fmt::LoadLE64(t.data() + i * 32 + 24);
    if (r.offset > base || r.bytes > base - r.offset) {
      return Status::Corruption(path + ": run table entry " + std::to_string(i) + " out of bounds");
    }
  }
  return f;
}

std::unique_ptr<SortedSource> RunFile::ShardRange(uint32_t shard, size_t buffer_bytes) const {
  return std::make_unique<RunRangeSource>(fd_, &path_, shard, ranges_[shard], buffer_bytes);
}

Status RadixMergeSources(std::vector<std::unique_ptr<SortedSource>>& sources, uint32_t shard_bits,
                         RadixMergeScratch* sc, ShardWriter* writer, ShardImage* recycle) {
  using Special = RadixMergeScratch::Special;
  sc->plain.clear();
  sc->special.clear();
  for (const auto& src : sources) {
    MergeRecord r;
    bool first = true;
    uint64_t prev = 0;
    while (src->Next(&r)) {
      if (!first && r.fp <= prev) {
        return Status::Corruption("merge input not sorted after fingerprint " + std::to_string(prev));
      }
      first = false;
      prev = r.fp;
      if (r.count == 1 && r.docs == 1) {
        sc->plain.push_back(r.fp);
      } else {
        sc->special.push_back(Special{r.fp, r.count, r.docs});
      }
    }
    TM_RETURN_IF_ERROR(src->status());
  }
  const size_t n = sc->plain.size();
  const size_t cap = n + sc->special.size();
  if (sc->sorted.size() < n) sc->sorted.resize(n);
  if (sc->out.size() < cap) sc->out.resize(cap);
  // out doubles as the sort's scratch, then receives the distinct keys.
  const std::span<const uint64_t> in(sc->plain.data(), n);
  SortShard(std::span<const std::span<const uint64_t>>(&in, 1), shard_bits, sc->sorted.data(),
            sc->out.data());
  std::sort(sc->special.begin(), sc->special.end());
  auto sat = [](uint64_t a, uint64_t b) {
    const uint64_t t = a + b;
    return t < a ? ~uint64_t{0} : t;
  };
  uint64_t* keys = sc->out.data();
  writer->UseKeys(keys, cap, recycle);
  const uint64_t* sorted = sc->sorted.data();
  const std::vector<Special>& sp = sc->special;
  size_t i = 0, e = 0, u = 0;
  while (i < n || e < sp.size()) {
    const uint64_t fp = e == sp.size() || (i < n && sorted[i] <= sp[e].fp) ? sorted[i] : sp[e].fp;
    uint64_t count = 0, docs = 0;
    while (i < n && sorted[i] == fp) {
      ++count;
      ++docs;
      ++i;
    }
    while (e < sp.size() && sp[e].fp == fp) {
      count = sat(count, sp[e].count);
      docs = sat(docs, sp[e].docs);
      ++e;
    }
    keys[u++] = fp;
    writer->AddCounts(count, docs);
  }
  return Status::Ok();
}

}  // namespace tidemark
