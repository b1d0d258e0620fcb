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

// Packs remainders [begin, end) of `keys` into `out` (appends whole 64-bit words of
// the bit stream). Callers pack in chunks whose bit length is a multiple of 64.
class RemainderPacker {
 public:
  explicit RemainderPacker(uint32_t w) : w_(w), mask_(w == 64 ? ~0ull : (1ull << w) - 1) {}
  void Put(uint64_t r, std::string* out) {
    r &= mask_;
    acc_ |= r << fill_;
    const uint32_t used = 64 - fill_;
    if (w_ >= used) {
      Emit(acc_, out);
      acc_ = used == 64 ? 0 : (r >> used);
      fill_ = w_ - used;
    } else {
      fill_ += w_;
    }
  }
  void Flush(std::string* out) {
    if (fill_ > 0) Emit(acc_, out);
    acc_ = 0;
    fill_ = 0;
  }

 private:
  static void Emit(uint64_t v, std::string* out) {
    char b[8];
    fmt::StoreLE64(b, v);
    out->append(b, 8);
  }
  uint32_t w_;
  uint64_t mask_;
  uint64_t acc_ = 0;
  uint32_t fill_ = 0;
};

void EncodeCount(uint64_t v, uint32_t index, std::vector<uint8_t>* bytes,
                 std::vector<std::pair<uint32_t, uint32_t>>* exceptions) {
  if (v > fmt::kMaxCount) v = fmt::kMaxCount;
  if (v < fmt::kCountEscape) {
    bytes->push_back(static_cast<uint8_t>(v));
  } else {
    bytes->push_back(fmt::kCountEscape);
    exceptions->emplace_back(index, static_cast<uint32_t>(v));
  }
}

std::string ExceptionBytes(const std::vector<std::pair<uint32_t, uint32_t>>& ex) {
  std::string out(ex.size() * 8, '\0');
  for (size_t i = 0; i < ex.size(); ++i) {
    fmt::StoreLE32(out.data() + i * 8, ex[i].first);
    fmt::StoreLE32(out.data() + i * 8 + 4, ex[i].second);
  }
  return out;
}

}  // namespace

ShardWriter::ShardWriter(const ShardParams& params) : params_(params) {}

void ShardWriter::Add(uint64_t fp, uint64_t count, uint64_t docs) {
  assert(keys_.empty() || fp > keys_.back());
  assert(fmt::ShardOf(fp, params_.shard_bits) == params_.shard_id);
  assert(count >= 1 && docs >= 1 && docs <= count);
  const uint32_t index = static_cast<uint32_t>(keys_.size());
  keys_.push_back(fp);
  EncodeCount(count, index, &counts_, &count_exceptions_);
  EncodeCount(docs, index, &docs_, &doc_exceptions_);
  total_count_ = SatAdd(total_count_, count > fmt::kMaxCount ? fmt::kMaxCount : count);
  total_docs_ = SatAdd(total_docs_, docs > fmt::kMaxCount ? fmt::kMaxCount : docs);
}

uint64_t ShardWriter::MemoryBytes() const {
  return keys_.capacity() * 8 + counts_.capacity() + docs_.capacity() +
         (count_exceptions_.capacity() + doc_exceptions_.capacity()) * 8;
}

Status ShardWriter::Finish(const std::string& path, Env* env, ShardFileInfo* info) {
  const uint64_t n = keys_.size();
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
  const uint64_t rem_mask = (1ull << w) - 1;

  // Bloom filter.
  BloomFilterBuilder bloom(n, params_.bloom_bits_per_key);
  for (const uint64_t k : keys_) bloom.Add(k);

  // Directory: dir[j] = first key of bucket j.
  std::string dir((num_buckets + 1) * 4, '\0');
  {
    uint64_t i = 0;
    for (uint64_t j = 0; j <= num_buckets; ++j) {
      while (i < n && ((keys_[i] >> w) & (num_buckets - 1)) < j) ++i;
      fmt::StoreLE32(dir.data() + j * 4, static_cast<uint32_t>(j == num_buckets ? n : i));
    }
  }

  // Remainders, bit-packed; + 8 zero bytes.
  std::string rem;
  rem.reserve(((n * w + 63) / 64) * 8 + 8);
  {
    RemainderPacker packer(w);
    for (const uint64_t k : keys_) packer.Put(k & rem_mask, &rem);
    packer.Flush(&rem);
    rem.append(8, '\0');
  }
  // The key array is no longer needed; free it before the write buffers grow.
  std::vector<uint64_t>().swap(keys_);

  const std::string count_ex = ExceptionBytes(count_exceptions_);
  const std::string doc_ex = ExceptionBytes(doc_exceptions_);

  struct Piece {
    const char* data;
    uint64_t size;
    uint64_t align;
  };
  const std::array<Piece, fmt::kNumSections> pieces = {{
      {reinterpret_cast<const char*>(bloom.bytes().data()), bloom.bytes().size(), 64},
      {dir.data(), dir.size(), 8},
      {rem.data(), rem.size(), 8},
      {reinterpret_cast<const char*>(counts_.data()), counts_.size(), 8},
      {count_ex.data(), count_ex.size(), 8},
      {reinterpret_cast<const char*>(docs_.data()), docs_.size(), 8},
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

  TM_ASSIGN_OR_RETURN(std::unique_ptr<WritableFile> file, env->NewWritableFile(path));
  TM_RETURN_IF_ERROR(file->Append(std::string_view(header, sizeof(header))));
  static const char kZeros[64] = {};
  uint64_t pos = fmt::kHeaderBytes;
  for (int i = 0; i < fmt::kNumSections; ++i) {
    if (offsets[i] > pos) {
      TM_RETURN_IF_ERROR(file->Append(std::string_view(kZeros, offsets[i] - pos)));
    }
    if (pieces[i].size > 0) {
      TM_RETURN_IF_ERROR(file->Append(std::string_view(pieces[i].data, pieces[i].size)));
    }
    pos = offsets[i] + pieces[i].size;
  }
  TM_RETURN_IF_ERROR(file->Sync());
  TM_RETURN_IF_ERROR(file->Close());

  info->shard_id = params_.shard_id;
  info->keys = n;
  info->bytes = file_bytes;
  info->header_xxh3 = header_sum;
  info->total_count = total_count_;
  info->total_docs = total_docs_;
  return Status::Ok();
}

}  // namespace tidemark
