#include "report/report_util.h"

#include <charconv>
#include <cmath>
#include <cstdio>

namespace tidemark::report {

void AppendJsonNumber(std::string* out, double v) {
  if (!std::isfinite(v)) {
    *out += "null";
    return;
  }
  char buf[32];
  const auto [ptr, ec] = std::to_chars(buf, buf + sizeof buf, v);
  out->append(buf, ec == std::errc() ? ptr : buf);
}

void AppendUint(std::string* out, uint64_t v) {
  char buf[24];
  const auto [ptr, ec] = std::to_chars(buf, buf + sizeof buf, v);
  out->append(buf, ec == std::errc() ? ptr : buf);
}

void AppendCsvField(std::string* out, std::string_view field) {
  if (field.find_first_of(",\"\r\n") == std::string_view::npos) {
    out->append(field);
    return;
  }
  out->push_back('"');
  for (const char c : field) {
    if (c == '"') out->push_back('"');
    out->push_back(c);
  }
  out->push_back('"');
}

std::string_view RuleKindName(Rule::Kind kind) {
  switch (kind) {
    case Rule::Kind::kAnyHit: return "any_hit";
    case Rule::Kind::kHitFraction: return "hit_fraction";
    case Rule::Kind::kCoverage: return "coverage";
    case Rule::Kind::kLongestRun: return "longest_run";
  }
  return "unknown";
}

std::string FormatPercent(double v, int decimals) {
  if (!std::isfinite(v)) return "n/a";
  char buf[40];
  std::snprintf(buf, sizeof buf, "%.*f%%", decimals, 100.0 * v);
  return buf;
}

}  // namespace tidemark::report
