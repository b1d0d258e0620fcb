// Constants and small codecs of the index file format, shared by writer and reader.
// The contract is docs/index_format.md; every value here is defined there.
//
// Thread safety: constants and pure functions.
#ifndef TIDEMARK_SRC_INDEX_FORMAT_H_
#define TIDEMARK_SRC_INDEX_FORMAT_H_

#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>

namespace tidemark::index_format {

/// docs/index_format.md "Version changes".
inline constexpr uint32_t kFormatVersion = 3;

/// Shard file magic, PNG-style (RFC 2083 section 12.11): high bit, "TMS", CR LF, ^Z, LF.
inline constexpr unsigned char kShardMagic[8] = {0x89, 'T', 'M', 'S', 0x0D, 0x0A, 0x1A, 0x0A};

inline constexpr uint32_t kHeaderBytes = 256;
inline constexpr uint32_t kMaxShardBits = 16;
inline constexpr uint32_t kMaxRemainderBits = 56;  // so one unaligned 8-byte load suffices
inline constexpr uint32_t kBloomBlockBits = 512;   // one 64-byte cache line
inline constexpr uint32_t kBloomBlockBytes = kBloomBlockBits / 8;
inline constexpr uint32_t kMinBloomBitsPerKey = 1;
inline constexpr uint32_t kMaxBloomBitsPerKey = 64;
inline constexpr uint32_t kDefaultBloomBitsPerKey = 10;  // about 1% FPR, see the doc
inline constexpr uint32_t kDefaultShardBits = 8;
inline constexpr uint64_t kMaxKeysPerShard = 0xFFFFFFFFull;  // u32 directory entries
inline constexpr uint32_t kTargetKeysPerBucket = 16;  // buckets hold 16..32 keys on average
inline constexpr uint8_t kCountEscape = 255;          // the writer's in-memory escape
inline constexpr uint32_t kCodeHeaderBytes = 8;       // counts / doc counts: u32 width, u32 0
/// Code widths of the counts and doc-counts sections (doc: "Counts and doc counts").
inline bool ValidCodeWidth(uint32_t w) { return w == 0 || w == 1 || w == 2 || w == 4 || w == 8; }
inline constexpr uint32_t kMaxCount = 0xFFFFFFFFu;    // counts saturate here

/// Section order in the file and in the header's section table.
enum Section : int {
  kSecBloom = 0,
  kSecDirectory,
  kSecRemainders,
  kSecCounts,
  kSecCountExceptions,
  kSecDocs,
  kSecDocExceptions,
  kNumSections
};
inline constexpr const char* kSectionNames[kNumSections] = {
    "bloom", "directory", "remainders", "counts", "count exceptions", "doc counts",
    "doc-count exceptions"};

/// Byte offsets of the header fields.
namespace off {
inline constexpr uint32_t kMagic = 0;
inline constexpr uint32_t kVersion = 8;
inline constexpr uint32_t kHeaderBytesField = 12;
inline constexpr uint32_t kShardBits = 16;
inline constexpr uint32_t kShardId = 20;
inline constexpr uint32_t kKeyCount = 24;
inline constexpr uint32_t kParamsHash = 32;
inline constexpr uint32_t kBucketBits = 40;
inline constexpr uint32_t kRemainderBits = 44;
inline constexpr uint32_t kBloomBitsPerKey = 48;
inline constexpr uint32_t kBloomK = 52;
inline constexpr uint32_t kBloomBlocks = 56;
inline constexpr uint32_t kTotalCount = 64;
inline constexpr uint32_t kTotalDocs = 72;
inline constexpr uint32_t kSections = 80;  // 7 x {u64 offset, u64 bytes, u64 xxh3}
inline constexpr uint32_t kSectionEntryBytes = 24;
inline constexpr uint32_t kHeaderChecksum = 248;
}  // namespace off
static_assert(off::kSections + kNumSections * off::kSectionEntryBytes == off::kHeaderChecksum);
static_assert(off::kHeaderChecksum + 8 == kHeaderBytes);

/// k for a given bits-per-key: one below the classic optimum (doc: "bloom_k").
inline uint32_t BloomKFor(uint32_t bits_per_key) {
  const double opt = static_cast<double>(bits_per_key) * 0.6931471805599453;
  long k = static_cast<long>(opt + 0.5) - 1;
  if (k < 1) k = 1;
  if (k > 16) k = 16;
  return static_cast<uint32_t>(k);
}

inline uint64_t BloomBlocksFor(uint64_t keys, uint32_t bits_per_key) {
  const uint64_t bits = keys * bits_per_key;
  const uint64_t blocks = (bits + kBloomBlockBits - 1) / kBloomBlockBits;
  return blocks == 0 ? 1 : blocks;
}

/// Bucket bits b for N keys in a shard of s shard bits (doc: "bucket_bits").
inline uint32_t BucketBitsFor(uint64_t keys, uint32_t shard_bits) {
  uint32_t b = 0;
  while ((keys >> (b + 1)) >= kTargetKeysPerBucket) ++b;
  const uint32_t min_b = shard_bits >= 8 ? 0 : 8 - shard_bits;
  if (b < min_b) b = min_b;
  const uint32_t max_b = 63 - shard_bits;  // w >= 1
  if (b > max_b) b = max_b;
  return b;
}

/// SplitMix64 finalizer (Steele, Lea, Flood 2014): decorrelates the Bloom probe bits
/// from the fingerprint's top bits, which are constant within a shard.
inline uint64_t Mix64(uint64_t z) {
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
  return z ^ (z >> 31);
}

/// Word j of the Bloom bit-position stream of a key with mixed hash h: 7 positions of
/// 9 bits each (bits 0..62); word 0 is h itself, word j >= 1 is
/// Mix64(h + j * 0x9e3779b97f4a7c15) (the SplitMix64 sequence seeded with h). The
/// default k = 6 thus costs one Mix64 per key.
inline uint64_t BloomWord(uint64_t h, uint32_t j) {
  return j == 0 ? h : Mix64(h + static_cast<uint64_t>(j) * 0x9e3779b97f4a7c15ull);
}

inline uint32_t ShardOf(uint64_t fp, uint32_t shard_bits) {
  return shard_bits == 0 ? 0u : static_cast<uint32_t>(fp >> (64 - shard_bits));
}

inline uint64_t LoadLE64(const void* p) {
  uint64_t v;
  std::memcpy(&v, p, 8);
  return v;  // little-endian hosts only (static_assert in shard_reader.cc)
}
inline uint32_t LoadLE32(const void* p) {
  uint32_t v;
  std::memcpy(&v, p, 4);
  return v;
}
inline void StoreLE64(void* p, uint64_t v) { std::memcpy(p, &v, 8); }
inline void StoreLE32(void* p, uint32_t v) { std::memcpy(p, &v, 4); }

inline uint64_t AlignUp(uint64_t v, uint64_t a) { return (v + a - 1) / a * a; }

/// "seg-000001", "shard-00042.tms".
std::string SegmentDirName(uint32_t segment_id);
std::string ShardFileName(uint32_t shard_id);
inline constexpr std::string_view kManifestName = "manifest.json";
inline constexpr std::string_view kLockName = "LOCK";

}  // namespace tidemark::index_format

#endif  // TIDEMARK_SRC_INDEX_FORMAT_H_
