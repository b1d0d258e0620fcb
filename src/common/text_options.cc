#include "tidemark/text_options.h"

#include <charconv>
#include <string>

namespace tidemark {

Status TextOptions::Validate() const {
  if (ngram < kMinNgram || ngram > kMaxNgram) {
    return Status::InvalidArgument("n-gram length " + std::to_string(ngram) + " is outside " +
                                   std::to_string(kMinNgram) + ".." + std::to_string(kMaxNgram));
  }
  return Status::Ok();
}

std::string TextOptions::ToString() const {
  std::string out = "rules=" + std::to_string(kRulesVersion);
  out += " n=" + std::to_string(ngram);
  out += " seed=" + std::to_string(seed);
  out += strip_accents ? " accents=strip" : " accents=keep";
  return out;
}

namespace {
template <typename T>
bool ParseNumber(std::string_view s, T* out) {
  const char* end = s.data() + s.size();
  auto [p, ec] = std::from_chars(s.data(), end, *out);
  return ec == std::errc() && p == end;
}
}  // namespace

Result<TextOptions> TextOptions::Parse(std::string_view text) {
  TextOptions o;
  bool saw_rules = false;
  size_t pos = 0;
  while (pos < text.size()) {
    while (pos < text.size() && text[pos] == ' ') ++pos;
    if (pos >= text.size()) break;
    size_t end = text.find(' ', pos);
    if (end == std::string_view::npos) end = text.size();
    const std::string_view field = text.substr(pos, end - pos);
    pos = end;
    const size_t eq = field.find('=');
    if (eq == std::string_view::npos) {
      return Status::BadInput("text options: expected key=value, got '" + std::string(field) + "'");
    }
    const std::string_view key = field.substr(0, eq);
    const std::string_view value = field.substr(eq + 1);
    bool good = true;
    if (key == "rules") {
      int v = 0;
      good = ParseNumber(value, &v);
      if (good && v != kRulesVersion) {
        return Status::Unsupported("text rules version " + std::string(value) +
                                   " (this build implements version " +
                                   std::to_string(kRulesVersion) + ")");
      }
      saw_rules = true;
    } else if (key == "n") {
      good = ParseNumber(value, &o.ngram);
    } else if (key == "seed") {
      good = ParseNumber(value, &o.seed);
    } else if (key == "accents") {
      good = value == "keep" || value == "strip";
      o.strip_accents = value == "strip";
    } else {
      return Status::BadInput("text options: unknown key '" + std::string(key) + "'");
    }
    if (!good) {
      return Status::BadInput("text options: bad value for '" + std::string(key) + "': '" +
                              std::string(value) + "'");
    }
  }
  if (!saw_rules) return Status::BadInput("text options: missing rules=<version>");
  TM_RETURN_IF_ERROR(o.Validate());
  return o;
}

}  // namespace tidemark
