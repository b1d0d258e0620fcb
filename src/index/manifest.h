// IndexManifest: the parsed manifest.json of an index directory
// (docs/index_format.md "Manifest"). Other stages include this header to read the
// corpus file list (path, size, mtime, checksum) and the ReadOptions the corpus was
// indexed with (the evidence pass re-reads the corpus with them).
//
// Thread safety: a plain value; const methods may be called concurrently.
#ifndef TIDEMARK_SRC_INDEX_MANIFEST_H_
#define TIDEMARK_SRC_INDEX_MANIFEST_H_

#include <array>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/env.h"
#include "index/format.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"
#include "tidemark/text_options.h"

namespace tidemark {

/// One corpus file as seen when it was indexed.
struct ManifestFile {
  std::string path;      ///< absolute, lexically normal
  uint64_t size = 0;     ///< bytes on disk
  int64_t mtime_ns = 0;  ///< modification time, ns since the Unix epoch
  uint64_t xxh3 = 0;     ///< XXH3-64 (seed 0) of the file's bytes on disk
  bool operator==(const ManifestFile&) const = default;
};

struct ManifestShard {
  uint32_t id = 0;
  uint64_t keys = 0;
  uint64_t bytes = 0;
  uint64_t header_xxh3 = 0;
  bool operator==(const ManifestShard&) const = default;
};

/// How a segment was made. Not deterministic: excluded from identity and comparisons.
struct ManifestBuildInfo {
  std::string tool;      ///< "tidemark 0.1.0"
  int64_t unix_time = 0;
  double seconds = 0;
  int threads = 0;
  uint64_t spills = 0;
};

using SkipCounts = std::array<uint64_t, static_cast<size_t>(SkipReason::kCount)>;

struct ManifestSegment {
  uint32_t id = 0;
  std::vector<ManifestFile> files;  ///< sorted by path
  uint64_t records = 0;
  SkipCounts skipped{};
  uint64_t ngrams_total = 0;
  uint64_t ngrams_distinct = 0;
  uint64_t bytes = 0;
  std::vector<ManifestShard> shards;  ///< 2^shard_bits, by id
  ManifestBuildInfo build;
};

class IndexManifest {
 public:
  /// The manifest and the shard files share one format version.
  static constexpr int kFormatVersion = static_cast<int>(index_format::kFormatVersion);

  int format_version = kFormatVersion;
  TextOptions text;
  ReadOptions read;
  uint32_t shard_bits = 8;
  uint32_t bloom_bits_per_key = 10;
  std::vector<ManifestSegment> segments;  ///< increasing id

  /// k derived from bloom_bits_per_key.
  uint32_t bloom_k() const;
  /// XXH3 of text.ToString(): stored in every shard header.
  uint64_t params_hash() const;
  /// All corpus files of all segments, sorted by path.
  std::vector<ManifestFile> AllFiles() const;
  uint64_t records() const;
  SkipCounts skipped() const;
  uint64_t ngrams_total() const;
  /// Sum over segments (an upper bound on the distinct count when there are several).
  uint64_t ngrams_distinct() const;
  uint64_t shard_bytes() const;

  /// The JSON text (fixed key order, ends in '\n'). Without `include_build` the
  /// `build` objects are left out (identity, comparisons).
  std::string Serialize(bool include_build = true) const;
  /// 16 hex digits: XXH3 of Serialize(false).
  std::string Identity() const;
  /// Parses manifest JSON; errors are kCorruption/kUnsupported naming `path`.
  static Result<IndexManifest> Parse(std::string_view json, const std::string& path);
};

/// Path of the manifest inside an index directory.
std::string ManifestPath(const std::string& dir);
/// Reads and parses <dir>/manifest.json; kNotFound when the directory is not an index.
Result<IndexManifest> ReadManifest(const std::string& dir);
/// Atomically writes <dir>/manifest.json.
Status WriteManifest(const std::string& dir, const IndexManifest& manifest, Env* env);

/// Stable names used in the manifest for ReadOptions::compression ("auto", "none",
/// "zstd", "gzip"); formats use InputFormatName (reader.h).
std::string_view ManifestCompressionName(Compression c);

/// kMismatch naming each differing field (n, rules, seed, accents) between the
/// options an index was built with and the ones wanted.
Status CompareTextOptions(const TextOptions& built, const TextOptions& wanted);
/// kMismatch naming each differing read option (fields, id field, format, ...).
Status CompareReadOptions(const ReadOptions& built, const ReadOptions& wanted);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_MANIFEST_H_
