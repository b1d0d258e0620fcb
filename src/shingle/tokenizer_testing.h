// Test hook: the tokenizer without its ASCII fast path, so tests can check that the
// fast path gives byte-identical tokens (tests/unit/shingle).
//
// Thread safety: reentrant.
#ifndef TIDEMARK_SRC_SHINGLE_TOKENIZER_TESTING_H_
#define TIDEMARK_SRC_SHINGLE_TOKENIZER_TESTING_H_

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/tokenizer.h"

namespace tidemark::shingle {

/// As Tokenizer::TokenizeWithText, but every character, ASCII included, goes through
/// the cluster normalizer. Returns the ill-formed UTF-8 bytes seen.
uint64_t TokenizeWithoutAsciiFastPath(const TextOptions& options, std::string_view text,
                                      std::vector<Token>* tokens,
                                      std::vector<std::string>* normalized);

}  // namespace tidemark::shingle

#endif  // TIDEMARK_SRC_SHINGLE_TOKENIZER_TESTING_H_
