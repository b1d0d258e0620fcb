// AuditPlan: a whole audit (index, benchmarks, fields, rules, filters, level)
// described in a small TOML file, so batch jobs are reproducible.
//
//   index = "out/index"            # paths relative to the plan file's directory
//   output = "out/report"
//   level = 0.95
//   rules = ["gpt3", "llama2", "strict=coverage>=0.5,span=10"]
//   boilerplate_cap = 1000         # 0: off
//   template_share = 0.1           # 0: off
//   sample = 0                     # audit a seeded random subset of this many items
//   sample_seed = 1
//   fail_above = 0.05              # optional: exit 3 when a rate exceeds it
//
//   [[benchmark]]
//   name = "quiz"
//   path = "benchmarks/quiz.jsonl"
//   fields = ["question", "/choices"]   # keys or RFC 6901 JSON Pointers
//   id = "id"                           # optional; default: record number
//   format = "jsonl"                    # optional: jsonl, json, csv, txt
//
// Unknown keys are an error (a typo must not silently change an audit).
//
// Thread safety: plain values.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_PLAN_H_
#define TIDEMARK_INCLUDE_TIDEMARK_PLAN_H_

#include <optional>
#include <string>
#include <vector>

#include "tidemark/probe.h"
#include "tidemark/status.h"

namespace tidemark {

struct AuditPlan {
  std::string index_dir;
  std::string output_dir;
  std::vector<BenchmarkSpec> benchmarks;
  std::vector<std::string> rule_specs;  ///< as written; resolved into probe.rules
  ProbeOptions probe;
  double level = 0.95;
  std::optional<double> fail_above;
};

/// Parses a plan file. Errors name the file and, for TOML syntax errors, line:column.
Result<AuditPlan> LoadAuditPlan(const std::string& path);

/// "jsonl" / "json" / "csv" / "txt" / "auto" -> InputFormat.
Result<InputFormat> ParseInputFormat(const std::string& name);

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_PLAN_H_
