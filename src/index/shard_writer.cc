#include "index/shard_writer.h"

#include <xxhash.h>

#include <array>
#include <cassert>
#include <cstring>

#include "index/bloom_filter.h"
#include "index/format.h"

namespace tidemark {

namespace fmt = index_format;

namespace {

uint64_t SatAdd(uint64_t a, uint64_t b) {
  const uint64_t s = a + b;
  return s < a ? ~uint64_t{0} : s;
}

inline void EncodeCount(uint64_t v, uint32_t index, std::vector<uint8_t>* bytes,
                 std::vector<std::pair<uint32_t, uint32_t>>* exceptions) {
  if (v > fmt::kMaxCount) v = fmt::kMaxCount;
  if (v < fmt::kCountEscape) {
    bytes->push_back(static_cast<uint8_t>(v));
  } else {
    bytes->push_back(fmt::kCountEscape);
    exceptions->emplace_back(index, static_cast<uint32_t>(v));
  }
}

// Walks the writer's per-key count bytes and their exception list in key order.
class CountCursor {
 public:
  CountCursor(const std::vector<uint8_t>& bytes, const std::vector<std::pair<uint32_t, uint32_t>>& ex)
      : bytes_(bytes), ex_(ex) {}
  uint32_t Next(size_t i) {
    const uint8_t v = bytes_[i];
    if (v != fmt::kCountEscape) return v;
    assert(e_ < ex_.size() && ex_[e_].first == i);
    return ex_[e_++].second;
  }

 private:
  const std::vector<uint8_t>& bytes_;
  const std::vector<std::pair<uint32_t, uint32_t>>& ex_;
  size_t e_ = 0;
};

// One coded stream (docs/index_format.md "Counts and doc counts"): a value v >= 0 per
// key is stored in `width` bits if v < 2^width - 1, else as the escape code 2^width - 1
// with an exception entry holding the exact count or doc count.
struct CodeWidth {
  // Keys whose v is at least 1, 3, 15, 255: the exceptions of widths 1, 2, 4, 8.
  uint64_t at_least[4] = {0, 0, 0, 0};
  void Add(uint64_t v) {
    at_least[0] += v >= 1;
    at_least[1] += v >= 3;
    at_least[2] += v >= 15;
    at_least[3] += v >= 255;
  }
  // The width of the fewest bytes (the smaller on a tie); 0 only when every v is 0.
  uint32_t Choose(uint64_t n) const {
    if (at_least[0] == 0) return 0;
    static constexpr uint32_t kWidths[4] = {1, 2, 4, 8};
    uint32_t best = 8;
    uint64_t best_bytes = ~uint64_t{0};
    for (int j = 0; j < 4; ++j) {
      const uint64_t bytes = (n * kWidths[j] + 7) / 8 + 8 * at_least[j];
      if (bytes < best_bytes) {
        best_bytes = bytes;
        best = kWidths[j];
      }
    }
    return best;
  }
};

// Lays out a coded section: u32 width, u32 0, then the codes (key i at bit i * width,
// LSB first), into *out (its capacity reused).
void StartCodes(uint32_t width, uint64_t n, std::vector<uint8_t>* out) {
  out->assign(fmt::kCodeHeaderBytes + (n * width + 7) / 8, 0);
  fmt::StoreLE32(out->data(), width);
}

inline void PutCode(std::vector<uint8_t>* out, uint32_t width, uint64_t i, uint64_t code) {
  const uint64_t bit = i * width;
  (*out)[fmt::kCodeHeaderBytes + bit / 8] |= static_cast<uint8_t>(code << (bit % 8));
}

inline void PutException(std::string* ex, uint64_t i, uint32_t value) {
  char e[8];
  fmt::StoreLE32(e, static_cast<uint32_t>(i));
  fmt::StoreLE32(e + 4, value);
  ex->append(e, 8);
}

}  // namespace

ShardWriter::ShardWriter(const ShardParams& params) : params_(params) {}

void ShardWriter::UseKeys(const uint64_t* keys, size_t capacity, ShardImage* recycle) {
  assert(keys_.empty() && counts_.empty());
  external_keys_ = keys;
  external_capacity_ = capacity;
  external_ = true;
  if (recycle != nullptr) {
    counts_.swap(recycle->work_counts);
    docs_.swap(recycle->work_docs);
  }
  counts_.resize(capacity);
  docs_.resize(capacity);
}

void ShardWriter::AddLargeCounts(uint64_t count, uint64_t docs) {
  const uint32_t index = static_cast<uint32_t>(added_++);
  not_single_ = true;
  if (count > fmt::kMaxCount) count = fmt::kMaxCount;
  if (docs > fmt::kMaxCount) docs = fmt::kMaxCount;
  counts_[index] = fmt::kCountEscape;
  count_exceptions_.emplace_back(index, static_cast<uint32_t>(count));
  if (docs < fmt::kCountEscape) {
    docs_[index] = static_cast<uint8_t>(docs);
  } else {
    docs_[index] = fmt::kCountEscape;
    doc_exceptions_.emplace_back(index, static_cast<uint32_t>(docs));
  }
  total_count_ = SatAdd(total_count_, count);
  total_docs_ = SatAdd(total_docs_, docs);
}

void ShardWriter::Add(uint64_t fp, uint64_t count, uint64_t docs) {
  assert(!external_);
  assert(keys_.empty() || fp > keys_.back());
  assert(fmt::ShardOf(fp, params_.shard_bits) == params_.shard_id);
  assert(count >= 1 && docs >= 1 && docs <= count);
  const uint32_t index = static_cast<uint32_t>(keys_.size());
  keys_.push_back(fp);
  not_single_ |= count != 1;
  EncodeCount(count, index, &counts_, &count_exceptions_);
  EncodeCount(docs, index, &docs_, &doc_exceptions_);
  total_count_ = SatAdd(total_count_, count > fmt::kMaxCount ? fmt::kMaxCount : count);
  total_docs_ = SatAdd(total_docs_, docs > fmt::kMaxCount ? fmt::kMaxCount : docs);
}

namespace {

// The directory and remainder part of BuildImage's pass over the keys (a visitor of
// BloomFilterBuilder::AddAllVisiting): its state lives in members, not in references
// to locals, so that it stays in registers (2^20 keys: 6.4 against 6.7 ns a key).
struct RemainderPacker {
  char* dir = nullptr;        // dir[j] = index of the first key of bucket j, u32 LE
  char* rem = nullptr;        // next 8-byte word of the packed remainders
  uint64_t next_bucket = 0;   // first bucket whose dir entry is not written yet
  uint64_t bucket_mask = 0;
  uint64_t rem_mask = 0;
  uint64_t acc = 0;           // remainder bits not yet stored, LSB first
  uint32_t w = 0;             // remainder bits
  uint32_t fill = 0;          // bits in acc

  void operator()(size_t i, uint64_t key) {
    const uint64_t j = (key >> w) & bucket_mask;
    while (next_bucket <= j) fmt::StoreLE32(dir + 4 * next_bucket++, static_cast<uint32_t>(i));
    const uint64_t r = key & rem_mask;
    acc |= r << fill;
    const uint32_t room = 64 - fill;
    if (w >= room) {
      fmt::StoreLE64(rem, acc);
      rem += 8;
      acc = room == 64 ? 0 : (r >> room);
      fill = w - room;
    } else {
      fill += w;
    }
  }
};

}  // namespace

Status ShardWriter::BuildImage(const std::string& path, ShardImage* out) {
  if (external_) {
    counts_.resize(added_);
    docs_.resize(added_);
  }
  const std::span<const uint64_t> keys = this->keys();
  const uint64_t n = keys.size();
  assert(counts_.size() == n);
  if (n > fmt::kMaxKeysPerShard) {
    return Status::InvalidArgument(path + ": " + std::to_string(n) +
                                   " keys in one shard exceed the format's 2^32-1; use more "
                                   "shards (--shards)");
  }
  const uint32_t s = params_.shard_bits;
  const uint32_t b = fmt::BucketBitsFor(n, s);
  const uint32_t w = 64 - s - b;
  assert(w >= 1 && w <= fmt::kMaxRemainderBits);
  const uint64_t num_buckets = 1ull << b;

  // One pass over the keys lays out the Bloom filter (ascending keys fill its blocks
  // front to back), the directory (dir[j] = first key of bucket j) and the bit-packed
  // remainders (the low w bits of key i at bit i*w of little-endian 64-bit words, then
  // 8 zero bytes). The sections go into *out's buffers, whose capacity a recycled
  // image brings along.
  BloomFilterBuilder bloom(n, params_.bloom_bits_per_key, s, std::move(out->bloom));
  std::string dir = std::move(out->dir);
  dir.assign((num_buckets + 1) * 4, '\0');
  std::string rem = std::move(out->rem);
  rem.assign((n * w + 63) / 64 * 8 + 8, '\0');
  {
    RemainderPacker packer;
    packer.dir = dir.data();
    packer.rem = rem.data();
    packer.bucket_mask = num_buckets - 1;
    packer.rem_mask = (uint64_t{1} << w) - 1;  // w <= kMaxRemainderBits < 64
    packer.w = w;
    packer = bloom.AddAllVisiting(keys, packer);
    while (packer.next_bucket <= num_buckets) {
      fmt::StoreLE32(packer.dir + 4 * packer.next_bucket++, static_cast<uint32_t>(n));
    }
    if (packer.fill > 0) fmt::StoreLE64(packer.rem, packer.acc);
  }
  // The key array is no longer needed; free it before the write buffers grow.
  std::vector<uint64_t>().swap(keys_);

  // Counts (v = count - 1) and doc counts (v = count - docs), each at its width.
  std::string count_ex = std::move(out->count_ex);
  std::string doc_ex = std::move(out->doc_ex);
  count_ex.clear();
  doc_ex.clear();
  std::vector<uint8_t> count_codes = std::move(out->counts);
  std::vector<uint8_t> doc_codes = std::move(out->docs);
  if (!not_single_) {  // every count (and so every doc count) is 1
    StartCodes(0, n, &count_codes);
    StartCodes(0, n, &doc_codes);
  } else {
    CodeWidth cw, dw;
    {
      CountCursor c(counts_, count_exceptions_), d(docs_, doc_exceptions_);
      for (uint64_t i = 0; i < n; ++i) {
        const uint32_t count = c.Next(i);
        cw.Add(count - 1);
        dw.Add(count - d.Next(i));
      }
    }
    const uint32_t cwidth = cw.Choose(n), dwidth = dw.Choose(n);
    StartCodes(cwidth, n, &count_codes);
    StartCodes(dwidth, n, &doc_codes);
    const uint64_t cesc = (uint64_t{1} << cwidth) - 1, desc = (uint64_t{1} << dwidth) - 1;
    CountCursor c(counts_, count_exceptions_), d(docs_, doc_exceptions_);
    for (uint64_t i = 0; i < n; ++i) {
      const uint32_t count = c.Next(i);
      const uint32_t docs = d.Next(i);
      const uint64_t vc = count - 1, vd = count - docs;
      if (cwidth > 0) {
        PutCode(&count_codes, cwidth, i, vc < cesc ? vc : cesc);
        if (vc >= cesc) PutException(&count_ex, i, count);
      }
      if (dwidth > 0) {
        PutCode(&doc_codes, dwidth, i, vd < desc ? vd : desc);
        if (vd >= desc) PutException(&doc_ex, i, docs);
      }
    }
  }

  struct Piece {
    const char* data;
    uint64_t size;
    uint64_t align;
  };
  const std::array<Piece, fmt::kNumSections> pieces = {{
      {reinterpret_cast<const char*>(bloom.bytes().data()), bloom.bytes().size(), 64},
      {dir.data(), dir.size(), 8},
      {rem.data(), rem.size(), 8},
      {reinterpret_cast<const char*>(count_codes.data()), count_codes.size(), 8},
      {count_ex.data(), count_ex.size(), 8},
      {reinterpret_cast<const char*>(doc_codes.data()), doc_codes.size(), 8},
      {doc_ex.data(), doc_ex.size(), 8},
  }};

  char header[fmt::kHeaderBytes];
  std::memset(header, 0, sizeof(header));
  std::memcpy(header + fmt::off::kMagic, fmt::kShardMagic, 8);
  fmt::StoreLE32(header + fmt::off::kVersion, fmt::kFormatVersion);
  fmt::StoreLE32(header + fmt::off::kHeaderBytesField, fmt::kHeaderBytes);
  fmt::StoreLE32(header + fmt::off::kShardBits, s);
  fmt::StoreLE32(header + fmt::off::kShardId, params_.shard_id);
  fmt::StoreLE64(header + fmt::off::kKeyCount, n);
  fmt::StoreLE64(header + fmt::off::kParamsHash, params_.params_hash);
  fmt::StoreLE32(header + fmt::off::kBucketBits, b);
  fmt::StoreLE32(header + fmt::off::kRemainderBits, w);
  fmt::StoreLE32(header + fmt::off::kBloomBitsPerKey, params_.bloom_bits_per_key);
  fmt::StoreLE32(header + fmt::off::kBloomK, bloom.k());
  fmt::StoreLE64(header + fmt::off::kBloomBlocks, bloom.num_blocks());
  fmt::StoreLE64(header + fmt::off::kTotalCount, total_count_);
  fmt::StoreLE64(header + fmt::off::kTotalDocs, total_docs_);
  uint64_t offset = fmt::kHeaderBytes;
  std::array<uint64_t, fmt::kNumSections> offsets{};
  for (int i = 0; i < fmt::kNumSections; ++i) {
    offset = fmt::AlignUp(offset, pieces[i].align);
    offsets[i] = offset;
    char* e = header + fmt::off::kSections + i * fmt::off::kSectionEntryBytes;
    fmt::StoreLE64(e, offset);
    fmt::StoreLE64(e + 8, pieces[i].size);
    fmt::StoreLE64(e + 16, XXH3_64bits(pieces[i].data, pieces[i].size));
    offset += pieces[i].size;
  }
  const uint64_t file_bytes = offset;
  const uint64_t header_sum = XXH3_64bits(header, fmt::off::kHeaderChecksum);
  fmt::StoreLE64(header + fmt::off::kHeaderChecksum, header_sum);

  out->header.assign(header, sizeof(header));
  out->offsets = offsets;
  out->bloom = bloom.TakeBytes();
  out->dir = std::move(dir);
  out->rem = std::move(rem);
  out->counts = std::move(count_codes);
  out->count_ex = std::move(count_ex);
  out->docs = std::move(doc_codes);
  out->work_counts = std::move(counts_);
  out->work_docs = std::move(docs_);
  out->doc_ex = std::move(doc_ex);
  ShardFileInfo& info = out->info;
  info.shard_id = params_.shard_id;
  info.keys = n;
  info.bytes = file_bytes;
  info.header_xxh3 = header_sum;
  info.total_count = total_count_;
  info.total_docs = total_docs_;
  return Status::Ok();
}

std::string_view ShardImage::Section(int i) const {
  auto bytes = [](const std::vector<uint8_t>& v) {
    return std::string_view(reinterpret_cast<const char*>(v.data()), v.size());
  };
  switch (i) {
    case fmt::kSecBloom: return bytes(bloom);
    case fmt::kSecDirectory: return dir;
    case fmt::kSecRemainders: return rem;
    case fmt::kSecCounts: return bytes(counts);
    case fmt::kSecCountExceptions: return count_ex;
    case fmt::kSecDocs: return bytes(docs);
    default: return doc_ex;
  }
}

Status ShardWriter::Finish(const std::string& path, Env* env, ShardFileInfo* info, bool direct) {
  ShardImage image;
  TM_RETURN_IF_ERROR(BuildImage(path, &image));
  TM_RETURN_IF_ERROR(WriteShardImage(image, path, env, direct));
  *info = image.info;
  return Status::Ok();
}

Status SubmitShard(ShardWriter* writer, uint32_t shard, const std::string& staging_dir,
                   ShardImage image, BackgroundShardWriter* io, ManifestShard* manifest_shard) {
  const std::string path = JoinPath(staging_dir, fmt::ShardFileName(shard));
  TM_RETURN_IF_ERROR(writer->BuildImage(path, &image));
  *manifest_shard = ManifestShard{shard, image.info.keys, image.info.bytes, image.info.header_xxh3};
  io->Submit(std::move(image), path);
  return Status::Ok();
}

Status WriteShardImage(const ShardImage& image, const std::string& path, Env* env, bool direct,
                       bool sync) {
  TM_ASSIGN_OR_RETURN(std::unique_ptr<WritableFile> file, env->NewWritableFile(path, FileOptions{direct}));
  TM_RETURN_IF_ERROR(file->Append(image.header));
  static const char kZeros[64] = {};
  uint64_t pos = image.header.size();
  for (int i = 0; i < fmt::kNumSections; ++i) {
    const std::string_view sec = image.Section(i);
    if (image.offsets[i] > pos) {
      TM_RETURN_IF_ERROR(file->Append(std::string_view(kZeros, image.offsets[i] - pos)));
    }
    if (!sec.empty()) TM_RETURN_IF_ERROR(file->Append(sec));
    pos = image.offsets[i] + sec.size();
  }
  TM_RETURN_IF_ERROR(sync ? file->Sync() : file->StartWriteback());
  return file->Close();
}

}  // namespace tidemark
