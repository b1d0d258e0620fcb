// Internals shared by the cleaning and evidence stages: the per-record match scan
// and output-path mapping. Not part of the public API.
//
// Thread safety: pure functions.
#ifndef TIDEMARK_SRC_CLEAN_CLEAN_INTERNAL_H_
#define TIDEMARK_SRC_CLEAN_CLEAN_INTERNAL_H_

#include <cstdint>
#include <string>
#include <vector>

#include "tidemark/status.h"
#include "tidemark/tokenizer.h"

namespace tidemark {

/// Maximal runs [token_begin, token_end) of tokens covered by matched n-grams, given
/// the positions of the matched n-grams (ascending) and n.
struct TokenRun {
  uint32_t begin = 0;
  uint32_t end = 0;
};
std::vector<TokenRun> MergeMatchedRuns(const std::vector<uint32_t>& positions, int n);

/// Output paths for inputs: each input keeps its path relative to the inputs' common
/// directory, under `output_dir`. InvalidArgument when an output would be an input.
Result<std::vector<std::string>> MapOutputPaths(const std::vector<std::string>& inputs,
                                                const std::string& output_dir);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_CLEAN_CLEAN_INTERNAL_H_
