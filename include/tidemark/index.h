// The n-gram index: build, open, look up. Format contract: docs/index_format.md.
//
// An index is a directory: a manifest (written last, atomically) and one or more
// immutable segments, each holding 2^shard_bits shard files (blocked Bloom filter +
// exact sorted fingerprints + occurrence counts). A directory without a valid
// manifest is not an index.
//
// Thread safety: an open Index is immutable; Lookup may be called from many threads
// at once. Building is single-owner (it parallelizes internally with oneTBB).
#ifndef TIDEMARK_INCLUDE_TIDEMARK_INDEX_H_
#define TIDEMARK_INCLUDE_TIDEMARK_INDEX_H_

#include <cstdint>
#include <memory>
#include <span>
#include <string>
#include <vector>

#include "tidemark/progress.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"
#include "tidemark/text_options.h"

namespace tidemark {

/// What the index knows about one fingerprint. count == 0: absent.
struct NgramInfo {
  uint32_t count = 0;  ///< occurrences in the corpus (saturating at UINT32_MAX)
  uint32_t docs = 0;   ///< distinct documents containing it (saturating)
  bool present() const { return count > 0; }
};

class IndexManifest;  // index/manifest.h; parsed manifest

/// How much Open checks.
struct IndexOpenOptions {
  /// Verify every section checksum of every shard (in parallel, at memory speed), so
  /// that a bit-flipped shard is refused before any lookup. false: header checks only
  /// (for huge indexes; then run `tidemark index verify` out of band).
  bool verify_checksums = true;
  /// Worker threads for the checksum pass; 0: all hardware threads.
  int threads = 0;
};

/// An opened, read-only index (all segments, mmap'd).
class Index {
 public:
  /// Opens and validates the manifest, every shard header and (by default) every
  /// section checksum. Errors: kNotFound (no manifest: not an index), kCorruption
  /// naming file@offset, kUnsupported (format version).
  static Result<std::unique_ptr<Index>> Open(const std::string& dir);
  static Result<std::unique_ptr<Index>> Open(const std::string& dir,
                                             const IndexOpenOptions& options);
  virtual ~Index() = default;

  /// kMismatch naming each differing parameter (n, rules, seed, accents) when the
  /// index was built with other text options than `wanted`.
  virtual Status CheckTextOptions(const TextOptions& wanted) const = 0;
  virtual const TextOptions& text_options() const = 0;

  /// Batched lookup: out[i] describes fps[i]. Bloom filter first, exact second;
  /// counts are summed over segments. REQUIRES: out.size() == fps.size().
  virtual void Lookup(std::span<const uint64_t> fps, std::span<NgramInfo> out) const = 0;

  virtual const IndexManifest& manifest() const = 0;
  /// Stable identity of the index contents (manifest checksum), for reports.
  virtual std::string identity() const = 0;
  virtual const std::string& dir() const = 0;
};

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_INDEX_H_
