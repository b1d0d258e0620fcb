// Pieces shared by the index reader and the builders (not a public API).
//
// Thread safety: as documented per function.
#ifndef TIDEMARK_SRC_INDEX_INDEX_INTERNAL_H_
#define TIDEMARK_SRC_INDEX_INDEX_INTERNAL_H_

#include <memory>
#include <string>
#include <vector>

#include "index/manifest.h"
#include "index/shard_reader.h"
#include "tidemark/status.h"

namespace tidemark {

/// Opens every shard of every segment of `m` (index shard * segments + segment),
/// checking headers against the manifest and, if asked, all section checksums.
/// Parallel over shards with `threads` workers (0: all).
Result<std::vector<std::unique_ptr<ShardReader>>> OpenAllShards(const std::string& dir,
                                                                const IndexManifest& m,
                                                                bool verify_checksums,
                                                                int threads);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_INDEX_INDEX_INTERNAL_H_
