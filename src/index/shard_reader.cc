#include "index/shard_reader.h"

#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>

#include <bit>
#include <cerrno>
#include <cstring>

namespace tidemark {

static_assert(std::endian::native == std::endian::little,
              "the index format is little-endian and read in place");

namespace fmt = index_format;

namespace {

Status CorruptAt(const std::string& path, uint64_t offset, const std::string& what) {
  return Status::Corruption(path + "@" + std::to_string(offset) + ": " + what);
}

uint64_t SatAdd64(uint64_t a, uint64_t b) {
  const uint64_t s = a + b;
  return s < a ? ~uint64_t{0} : s;
}

}  // namespace

ShardReader::~ShardReader() {
  if (map_ != nullptr) ::munmap(map_, file_bytes_);
}

Result<std::unique_ptr<ShardReader>> ShardReader::Open(const std::string& path,
                                                        const ShardParams& expected) {
  std::unique_ptr<ShardReader> r(new ShardReader());
  r->path_ = path;
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) {
    const int err = errno;
    if (err == ENOENT) return Status::Corruption(path + "@0: shard file listed in the manifest is missing");
    return Status::IOError(path + ": cannot open: " + std::strerror(err));
  }
  struct stat st;
  if (::fstat(fd, &st) != 0) {
    const int err = errno;
    ::close(fd);
    return Status::IOError(path + ": stat: " + std::strerror(err));
  }
  r->file_bytes_ = static_cast<uint64_t>(st.st_size);
  if (r->file_bytes_ < fmt::kHeaderBytes) {
    ::close(fd);
    return CorruptAt(path, 0, "file is " + std::to_string(r->file_bytes_) +
                                  " bytes, shorter than the 256-byte header (truncated?)");
  }
  void* map = ::mmap(nullptr, r->file_bytes_, PROT_READ, MAP_SHARED, fd, 0);
  const int map_err = errno;
  ::close(fd);
  if (map == MAP_FAILED) return Status::IOError(path + ": mmap: " + std::strerror(map_err));
  r->map_ = map;
  r->base_ = static_cast<const uint8_t*>(map);
  const uint8_t* h = r->base_;

  if (std::memcmp(h + fmt::off::kMagic, fmt::kShardMagic, 8) != 0) {
    return CorruptAt(path, 0, "bad magic (not a tidemark shard file)");
  }
  const uint32_t version = fmt::LoadLE32(h + fmt::off::kVersion);
  if (version != fmt::kFormatVersion) {
    return Status::Unsupported(path + "@8: shard format version " + std::to_string(version) +
                               " (this build reads " + std::to_string(fmt::kFormatVersion) +
                               "); rebuild the index with `tidemark index build`");
  }
  if (fmt::LoadLE32(h + fmt::off::kHeaderBytesField) != fmt::kHeaderBytes) {
    return CorruptAt(path, fmt::off::kHeaderBytesField, "bad header size");
  }
  r->header_xxh3_ = fmt::LoadLE64(h + fmt::off::kHeaderChecksum);
  if (XXH3_64bits(h, fmt::off::kHeaderChecksum) != r->header_xxh3_) {
    return CorruptAt(path, fmt::off::kHeaderChecksum, "header checksum mismatch");
  }
  r->s_ = fmt::LoadLE32(h + fmt::off::kShardBits);
  r->shard_id_ = fmt::LoadLE32(h + fmt::off::kShardId);
  r->n_ = fmt::LoadLE64(h + fmt::off::kKeyCount);
  const uint64_t params_hash = fmt::LoadLE64(h + fmt::off::kParamsHash);
  r->b_ = fmt::LoadLE32(h + fmt::off::kBucketBits);
  r->w_ = fmt::LoadLE32(h + fmt::off::kRemainderBits);
  const uint32_t bpk = fmt::LoadLE32(h + fmt::off::kBloomBitsPerKey);
  const uint32_t k = fmt::LoadLE32(h + fmt::off::kBloomK);
  const uint64_t blocks = fmt::LoadLE64(h + fmt::off::kBloomBlocks);
  r->total_count_ = fmt::LoadLE64(h + fmt::off::kTotalCount);
  r->total_docs_ = fmt::LoadLE64(h + fmt::off::kTotalDocs);

  if (r->s_ != expected.shard_bits) {
    return CorruptAt(path, fmt::off::kShardBits, "shard_bits " + std::to_string(r->s_) +
                                                     ", manifest says " +
                                                     std::to_string(expected.shard_bits));
  }
  if (r->shard_id_ != expected.shard_id) {
    return CorruptAt(path, fmt::off::kShardId, "shard id " + std::to_string(r->shard_id_) +
                                                   ", expected " +
                                                   std::to_string(expected.shard_id));
  }
  if (r->n_ > fmt::kMaxKeysPerShard) return CorruptAt(path, fmt::off::kKeyCount, "key count too large");
  if (params_hash != expected.params_hash) {
    return CorruptAt(path, fmt::off::kParamsHash,
                     "shard was built with other text options than its manifest says");
  }
  if (r->b_ != fmt::BucketBitsFor(r->n_, r->s_)) {
    return CorruptAt(path, fmt::off::kBucketBits, "bucket_bits does not match the key count");
  }
  if (r->w_ != 64 - r->s_ - r->b_) {
    return CorruptAt(path, fmt::off::kRemainderBits, "remainder_bits is not 64 - s - b");
  }
  if (bpk != expected.bloom_bits_per_key) {
    return CorruptAt(path, fmt::off::kBloomBitsPerKey, "bloom bits per key " +
                                                           std::to_string(bpk) +
                                                           ", manifest says " +
                                                           std::to_string(expected.bloom_bits_per_key));
  }
  if (k != fmt::BloomKFor(bpk)) return CorruptAt(path, fmt::off::kBloomK, "bad bloom_k");
  if (blocks != fmt::BloomBlocksFor(r->n_, bpk)) {
    return CorruptAt(path, fmt::off::kBloomBlocks, "bloom_blocks does not match the key count");
  }

  // Section table: exact sizes (exceptions: multiples of 8, at most one per key),
  // consecutive aligned offsets, and the file ends at the last section.
  const uint64_t n = r->n_;
  const uint64_t expect_bytes[fmt::kNumSections] = {
      blocks * fmt::kBloomBlockBytes, ((1ull << r->b_) + 1) * 4, ((n * r->w_ + 63) / 64) * 8 + 8,
      0, 0, 0, 0};  // (counts and doc counts: from their width, below)
  uint64_t pos = fmt::kHeaderBytes;
  for (int i = 0; i < fmt::kNumSections; ++i) {
    const uint8_t* e = h + fmt::off::kSections + i * fmt::off::kSectionEntryBytes;
    SectionInfo& sec = r->sections_[i];
    sec.offset = fmt::LoadLE64(e);
    sec.bytes = fmt::LoadLE64(e + 8);
    sec.xxh3 = fmt::LoadLE64(e + 16);
    const uint64_t entry_off = fmt::off::kSections + static_cast<uint64_t>(i) * fmt::off::kSectionEntryBytes;
    const uint64_t want_off = fmt::AlignUp(pos, i == fmt::kSecBloom ? 64 : 8);
    if (sec.offset != want_off) {
      return CorruptAt(path, entry_off, std::string(fmt::kSectionNames[i]) + " section offset " +
                                            std::to_string(sec.offset) + ", expected " +
                                            std::to_string(want_off));
    }
    const bool is_ex = i == fmt::kSecCountExceptions || i == fmt::kSecDocExceptions;
    uint64_t want_bytes = expect_bytes[i];
    if (i == fmt::kSecCounts || i == fmt::kSecDocs) {
      // u32 width, u32 0, then the codes. (A file too short to hold the width fails
      // the file-end check below.)
      uint32_t width = 0;
      if (sec.offset + fmt::kCodeHeaderBytes <= r->file_bytes_) {
        width = fmt::LoadLE32(r->base_ + sec.offset);
        if (!fmt::ValidCodeWidth(width) || fmt::LoadLE32(r->base_ + sec.offset + 4) != 0) {
          return CorruptAt(path, sec.offset, std::string(fmt::kSectionNames[i]) +
                                                 " section: bad code width " + std::to_string(width));
        }
      }
      (i == fmt::kSecCounts ? r->cw_ : r->dw_) = width;
      want_bytes = fmt::kCodeHeaderBytes + (n * width + 7) / 8;
    }
    if (is_ex ? (sec.bytes % 8 != 0 || sec.bytes / 8 > n) : sec.bytes != want_bytes) {
      return CorruptAt(path, entry_off + 8,
                       std::string(fmt::kSectionNames[i]) + " section size " +
                           std::to_string(sec.bytes) + " is wrong");
    }
    pos = sec.offset + sec.bytes;
  }
  if (pos != r->file_bytes_) {
    return CorruptAt(path, std::min<uint64_t>(pos, r->file_bytes_),
                     "file is " + std::to_string(r->file_bytes_) + " bytes, sections end at " +
                         std::to_string(pos) + (pos > r->file_bytes_ ? " (truncated)" : ""));
  }

  r->bloom_ = BloomFilterView(r->base_ + r->sections_[fmt::kSecBloom].offset, blocks, k, r->s_);
  r->dir_ = r->base_ + r->sections_[fmt::kSecDirectory].offset;
  r->rem_ = r->base_ + r->sections_[fmt::kSecRemainders].offset;
  r->counts_ = r->base_ + r->sections_[fmt::kSecCounts].offset + fmt::kCodeHeaderBytes;
  r->cmask_ = (1u << r->cw_) - 1;
  r->dmask_ = (1u << r->dw_) - 1;
  r->count_ex_ = r->base_ + r->sections_[fmt::kSecCountExceptions].offset;
  r->count_ex_n_ = r->sections_[fmt::kSecCountExceptions].bytes / 8;
  r->docs_ = r->base_ + r->sections_[fmt::kSecDocs].offset + fmt::kCodeHeaderBytes;
  r->doc_ex_ = r->base_ + r->sections_[fmt::kSecDocExceptions].offset;
  r->doc_ex_n_ = r->sections_[fmt::kSecDocExceptions].bytes / 8;
  r->bucket_mask_ = (1ull << r->b_) - 1;
  r->rem_mask_ = (1ull << r->w_) - 1;
  r->shard_prefix_ = r->s_ == 0 ? 0 : static_cast<uint64_t>(r->shard_id_) << (64 - r->s_);
  ::madvise(map, r->file_bytes_, MADV_RANDOM);
  return r;
}

uint64_t ShardReader::KeyAt(uint64_t i) const {
  // Bucket of key i: the last j with dir[j] <= i (binary search; used by dump/merge
  // iteration only through IterateKeys-style loops, which walk buckets directly).
  uint64_t lo = 0, hi = bucket_mask_ + 1;  // dir[lo] <= i < dir[hi]
  while (hi - lo > 1) {
    const uint64_t mid = (lo + hi) / 2;
    if (fmt::LoadLE32(dir_ + mid * 4) <= i) lo = mid; else hi = mid;
  }
  return shard_prefix_ | (lo << w_) | RemainderAt(i);
}

uint32_t ShardReader::Exception(const uint8_t* ex, uint64_t ex_n, uint64_t i) {
  uint64_t lo = 0, hi = ex_n;
  while (lo < hi) {
    const uint64_t mid = (lo + hi) / 2;
    const uint32_t idx = fmt::LoadLE32(ex + mid * 8);
    if (idx == i) return fmt::LoadLE32(ex + mid * 8 + 4);
    if (idx < i) lo = mid + 1; else hi = mid;
  }
  return 0;  // only in a damaged file; VerifyInvariants reports it
}

int64_t ShardReader::Find(uint64_t fp) const {
  if (fmt::ShardOf(fp, s_) != shard_id_ || n_ == 0) return -1;
  uint64_t lo, hi;
  BucketRange(fp, &lo, &hi);
  return FindInRange(fp, lo, hi);
}

void ShardReader::AddCountsAt(uint64_t i, NgramInfo* info) const {
  uint32_t count, docs;
  CountsAt(i, &count, &docs);
  const uint64_t c = static_cast<uint64_t>(info->count) + count;
  const uint64_t d = static_cast<uint64_t>(info->docs) + docs;
  info->count = static_cast<uint32_t>(c > fmt::kMaxCount ? fmt::kMaxCount : c);
  info->docs = static_cast<uint32_t>(d > fmt::kMaxCount ? fmt::kMaxCount : d);
}

void ShardReader::ExactInto(uint64_t fp, NgramInfo* info) const {
  const int64_t i = Find(fp);
  if (i >= 0) AddCountsAt(static_cast<uint64_t>(i), info);
}

Status ShardReader::VerifyChecksums() const {
  uint64_t pos = fmt::kHeaderBytes;
  for (int i = 0; i < fmt::kNumSections; ++i) {
    const SectionInfo& sec = sections_[i];
    for (uint64_t p = pos; p < sec.offset; ++p) {
      if (base_[p] != 0) return CorruptAt(path_, p, "nonzero padding byte before the " +
                                                        std::string(fmt::kSectionNames[i]) +
                                                        " section");
    }
    if (XXH3_64bits(base_ + sec.offset, sec.bytes) != sec.xxh3) {
      return CorruptAt(path_, sec.offset,
                       std::string(fmt::kSectionNames[i]) + " section checksum mismatch");
    }
    pos = sec.offset + sec.bytes;
  }
  return Status::Ok();
}

Status ShardReader::VerifyInvariants() const {
  const uint64_t dir_off = sections_[fmt::kSecDirectory].offset;
  const uint64_t rem_off = sections_[fmt::kSecRemainders].offset;
  const uint64_t buckets = bucket_mask_ + 1;
  if (fmt::LoadLE32(dir_) != 0) return CorruptAt(path_, dir_off, "directory does not start at 0");
  if (fmt::LoadLE32(dir_ + buckets * 4) != n_) {
    return CorruptAt(path_, dir_off + buckets * 4, "directory does not end at the key count");
  }
  for (uint64_t j = 0; j < buckets; ++j) {
    const uint64_t lo = fmt::LoadLE32(dir_ + j * 4);
    const uint64_t hi = fmt::LoadLE32(dir_ + (j + 1) * 4);
    if (hi < lo || hi > n_) {
      return CorruptAt(path_, dir_off + (j + 1) * 4, "directory entry out of order");
    }
    for (uint64_t i = lo + 1; i < hi; ++i) {
      if (RemainderAt(i) <= RemainderAt(i - 1)) {
        return CorruptAt(path_, rem_off + (i * w_) / 8,
                         "keys not sorted and unique at key " + std::to_string(i));
      }
    }
  }
  // Bits after the last remainder and the 8 trailing bytes are zero.
  const uint64_t used_bits = n_ * w_;
  const uint64_t rem_bytes = sections_[fmt::kSecRemainders].bytes;
  for (uint64_t byte = used_bits / 8; byte < rem_bytes; ++byte) {
    uint8_t v = rem_[byte];
    if (byte == used_bits / 8) v = static_cast<uint8_t>(v >> (used_bits % 8));
    if (v != 0) return CorruptAt(path_, rem_off + byte, "nonzero bits after the last key");
  }
  // Coded counts: one exception entry per escape code, in key order, each holding a
  // value that its code could not (the writer escapes nothing else).
  struct Table {
    const uint8_t* codes;
    uint32_t width, esc;
    const uint8_t* ex;
    uint64_t ex_n;
    int codes_sec, ex_sec;
  };
  const Table tables[2] = {
      {counts_, cw_, cmask_, count_ex_, count_ex_n_, fmt::kSecCounts, fmt::kSecCountExceptions},
      {docs_, dw_, dmask_, doc_ex_, doc_ex_n_, fmt::kSecDocs, fmt::kSecDocExceptions}};
  for (const Table& t : tables) {
    const uint64_t codes_off = sections_[t.codes_sec].offset + fmt::kCodeHeaderBytes;
    const uint64_t ex_off = sections_[t.ex_sec].offset;
    uint64_t escapes = 0;
    if (t.width > 0) {
      for (uint64_t i = 0; i < n_; ++i) escapes += Code(t.codes, t.width, t.esc, i) == t.esc;
      // Bits after the last code are zero.
      const uint64_t code_bits = n_ * t.width;
      if (code_bits % 8 != 0 && (t.codes[code_bits / 8] >> (code_bits % 8)) != 0) {
        return CorruptAt(path_, codes_off + code_bits / 8, "nonzero bits after the last code");
      }
    }
    if (escapes != t.ex_n) {
      return CorruptAt(path_, ex_off, std::to_string(t.ex_n) + " exceptions for " +
                                          std::to_string(escapes) + " escaped values");
    }
    int64_t prev = -1;
    for (uint64_t e = 0; e < t.ex_n; ++e) {
      const uint32_t idx = fmt::LoadLE32(t.ex + e * 8);
      if (static_cast<int64_t>(idx) <= prev || idx >= n_ || Code(t.codes, t.width, t.esc, idx) != t.esc) {
        return CorruptAt(path_, ex_off + e * 8, "bad exception entry");
      }
      prev = idx;
    }
  }
  for (uint64_t e = 0; e < count_ex_n_; ++e) {
    // (A count of 0 wraps past every mask here; the per-key loop below reports it.)
    if (fmt::LoadLE32(count_ex_ + e * 8 + 4) - 1 < cmask_) {
      return CorruptAt(path_, sections_[fmt::kSecCountExceptions].offset + e * 8,
                       "count exception that fits its code");
    }
  }
  uint64_t sum_count = 0, sum_docs = 0;
  const uint64_t counts_off = sections_[fmt::kSecCounts].offset + fmt::kCodeHeaderBytes;
  const uint64_t docs_off = sections_[fmt::kSecDocs].offset + fmt::kCodeHeaderBytes;
  for (uint64_t i = 0; i < n_; ++i) {
    uint32_t c, d;
    CountsAt(i, &c, &d);
    if (c == 0) {
      return CorruptAt(path_, counts_off + (i * cw_) / 8, "count 0 for key " + std::to_string(i));
    }
    if (d == 0 || d > c || (dw_ > 0 && Code(docs_, dw_, dmask_, i) == dmask_ && c - d < dmask_)) {
      return CorruptAt(path_, docs_off + (i * dw_) / 8,
                       "doc count " + std::to_string(d) + " outside 1..count (" +
                           std::to_string(c) + ") or escaped needlessly");
    }
    sum_count = SatAdd64(sum_count, c);
    sum_docs = SatAdd64(sum_docs, d);
  }
  if (sum_count != total_count_) return CorruptAt(path_, fmt::off::kTotalCount, "total_count differs from the sum of counts");
  if (sum_docs != total_docs_) return CorruptAt(path_, fmt::off::kTotalDocs, "total_docs differs from the sum of doc counts");
  return Status::Ok();
}

}  // namespace tidemark
