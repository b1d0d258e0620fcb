// NormalizeText (include/tidemark/tokenizer.h): the text rules without tokenization.
#include "normalize/normalizer.h"
#include "tidemark/tokenizer.h"

namespace tidemark {

std::string NormalizeText(std::string_view text, const TextOptions& options) {
  return normalize::NormalizeNfkcCasefold(text, options.strip_accents);
}

}  // namespace tidemark
