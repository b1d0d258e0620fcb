// Decision rules: the published presets and user thresholds, applied to one
// OverlapResult. Each preset cites its publication beside its definition.
#include "probe/rules.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <string>
#include <utility>
#include <vector>

#include "common/text_util.h"
#include "tidemark/probe.h"

namespace tidemark {

std::string_view VerdictName(Verdict v) {
  switch (v) {
    case Verdict::kClean: return "clean";
    case Verdict::kContaminated: return "contaminated";
    case Verdict::kTooShort: return "too_short";
  }
  return "unknown";
}

std::string_view Llama2BinName(Llama2Bin bin) {
  switch (bin) {
    case Llama2Bin::kTooShort: return "too_short";
    case Llama2Bin::kClean: return "clean";
    case Llama2Bin::kMixed: return "mixed";
    case Llama2Bin::kDirty: return "dirty";
  }
  return "unknown";
}

Result<Rule> PresetRule(const std::string& name) {
  Rule rule;
  rule.name = name;
  if (name == "gpt3") {
    // Brown et al. 2020, "Language Models are Few-Shot Learners", App. C: an item
    // is dirty if any of its 13-grams collides with the training data.
    rule.kind = Rule::Kind::kAnyHit;
    rule.required_n = rules::kGpt3N;
    return rule;
  }
  if (name == "palm") {
    // Chowdhery et al. 2022, "PaLM: Scaling Language Modeling with Pathways",
    // section 8: contaminated if at least 70% of the item's 8-grams occur at least
    // once in the training data.
    rule.kind = Rule::Kind::kHitFraction;
    rule.threshold = rules::kPalmHitFraction;
    rule.required_n = rules::kPalmN;
    return rule;
  }
  if (name == "llama2") {
    // Touvron et al. 2023, "Llama 2", App. A.6: a sample is dirty when at least
    // 80% of its tokens lie in matched spans of at least 10 tokens. The paper
    // matches tokens, not n-grams of a fixed size, so any index n will do.
    rule.kind = Rule::Kind::kCoverage;
    rule.threshold = kLlama2DirtyFrom;
    rule.min_span = kLlama2MinSpan;
    rule.required_n = 0;
    return rule;
  }
  return Status::NotFound("no preset rule named '" + name +
                          "' (presets: gpt3, palm, llama2)");
}

namespace {

Status RuleSyntaxError(std::string_view spec, std::string_view why) {
  return Status::InvalidArgument("rule '" + ClipExcerpt(spec) + "': " + std::string(why) +
                                 " (expected a preset, gpt3|palm|llama2, or "
                                 "[NAME=]fraction|coverage|run>=VALUE[,span=K])");
}

bool ParseDouble(std::string_view s, double* out) {
  if (s.empty()) return false;
  const auto [ptr, ec] = std::from_chars(s.data(), s.data() + s.size(), *out);
  return ec == std::errc() && ptr == s.data() + s.size() && std::isfinite(*out);
}

bool ParseUint32(std::string_view s, uint32_t* out) {
  if (s.empty()) return false;
  const auto [ptr, ec] = std::from_chars(s.data(), s.data() + s.size(), *out);
  return ec == std::errc() && ptr == s.data() + s.size();
}

}  // namespace

Result<Rule> ParseRule(std::string_view spec) {
  if (spec.find(">=") == std::string_view::npos) {
    Result<Rule> preset = PresetRule(std::string(spec));
    if (preset.ok()) return preset;
    return RuleSyntaxError(spec, "unknown rule");
  }
  const size_t ge = spec.find(">=");
  Rule rule;
  std::string_view kind = spec.substr(0, ge);
  const size_t eq = kind.find('=');
  if (eq != std::string_view::npos) {
    rule.name = std::string(kind.substr(0, eq));
    kind = kind.substr(eq + 1);
    if (rule.name.empty()) return RuleSyntaxError(spec, "empty rule name");
  } else {
    rule.name = std::string(spec);
  }
  std::string_view rest = spec.substr(ge + 2);
  std::string_view value = rest;
  std::string_view option;
  if (const size_t comma = rest.find(','); comma != std::string_view::npos) {
    value = rest.substr(0, comma);
    option = rest.substr(comma + 1);
  }
  double threshold = 0.0;
  if (!ParseDouble(value, &threshold)) return RuleSyntaxError(spec, "bad threshold");
  if (kind == "fraction" || kind == "coverage") {
    if (!(threshold > 0.0 && threshold <= 1.0)) {
      return RuleSyntaxError(spec, "threshold must be in (0, 1]");
    }
    rule.kind = kind == "fraction" ? Rule::Kind::kHitFraction : Rule::Kind::kCoverage;
  } else if (kind == "run") {
    if (!(threshold >= 1.0) || threshold != std::floor(threshold)) {
      return RuleSyntaxError(spec, "longest-run threshold must be a whole number of tokens >= 1");
    }
    rule.kind = Rule::Kind::kLongestRun;
  } else {
    return RuleSyntaxError(spec, "unknown kind '" + std::string(kind) + "'");
  }
  rule.threshold = threshold;
  if (!option.empty()) {
    if (rule.kind != Rule::Kind::kCoverage || option.substr(0, 5) != "span=" ||
        !ParseUint32(option.substr(5), &rule.min_span) || rule.min_span == 0) {
      return RuleSyntaxError(spec, "only coverage rules take an option, span=K with K >= 1");
    }
  }
  return rule;
}

Status CheckRuleN(const Rule& rule, int index_n) {
  if (rule.required_n == 0 || rule.required_n == index_n) return Status::Ok();
  const std::string need = std::to_string(rule.required_n);
  return Status::InvalidArgument("rule '" + rule.name + "' needs " + need +
                                 "-grams; this index was built with n=" +
                                 std::to_string(index_n) +
                                 "; rebuild with `tidemark index build -n " + need + "`");
}

double SpanCoverage(const OverlapResult& overlap, uint32_t min_span) {
  if (overlap.tokens == 0) return 0.0;
  std::vector<std::pair<uint32_t, uint32_t>> kept;
  kept.reserve(overlap.spans.size());
  for (const MatchedSpan& s : overlap.spans) {
    if (s.token_end > s.token_begin && s.token_end - s.token_begin >= min_span) {
      kept.emplace_back(s.token_begin, std::min(s.token_end, overlap.tokens));
    }
  }
  std::sort(kept.begin(), kept.end());
  uint64_t covered = 0;
  uint32_t reach = 0;  // tokens before `reach` are already counted
  for (const auto& [begin, end] : kept) {
    const uint32_t from = std::max(begin, reach);
    if (end > from) {
      covered += end - from;
      reach = end;
    }
  }
  return static_cast<double>(covered) / static_cast<double>(overlap.tokens);
}

Verdict EvaluateRule(const Rule& rule, const OverlapResult& overlap) {
  // An item with no n-gram cannot be judged by an n-gram index: never clean.
  if (overlap.too_short()) return Verdict::kTooShort;
  bool dirty = false;
  switch (rule.kind) {
    case Rule::Kind::kAnyHit:
      dirty = overlap.hits > 0;
      break;
    case Rule::Kind::kHitFraction:
      // Recomputed from the counts: IEEE division is correctly rounded, so a share
      // that equals the threshold exactly (7/10 vs 0.7) compares equal.
      dirty = static_cast<double>(overlap.hits) / static_cast<double>(overlap.ngrams) >=
              rule.threshold;
      break;
    case Rule::Kind::kCoverage:
      dirty = SpanCoverage(overlap, rule.min_span) >= rule.threshold;
      break;
    case Rule::Kind::kLongestRun:
      dirty = static_cast<double>(overlap.longest_run) >= rule.threshold;
      break;
  }
  return dirty ? Verdict::kContaminated : Verdict::kClean;
}

Llama2Bin ClassifyLlama2(const OverlapResult& overlap) {
  if (overlap.too_short()) return Llama2Bin::kTooShort;
  const double c = SpanCoverage(overlap, kLlama2MinSpan);
  if (c < kLlama2CleanBelow) return Llama2Bin::kClean;
  if (c >= kLlama2DirtyFrom) return Llama2Bin::kDirty;
  return Llama2Bin::kMixed;
}

}  // namespace tidemark
