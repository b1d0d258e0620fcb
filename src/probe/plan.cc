// Audit plan files (TOML, parsed with toml++ from Debian's libtomlplusplus-dev).
#include "tidemark/plan.h"

#include <set>

#include <toml++/toml.h>

#include "common/env.h"

namespace tidemark {
namespace {

std::string Resolve(const std::string& base_dir, const std::string& p) {
  if (p.empty() || p[0] == '/') return p;
  return JoinPath(base_dir, p);
}

Status CheckKeys(const toml::table& t, const std::set<std::string>& allowed,
                 const std::string& where) {
  for (const auto& [k, v] : t) {
    (void)v;
    if (allowed.count(std::string(k.str())) == 0) {
      return Status::BadInput(where + ": unknown key '" + std::string(k.str()) + "'");
    }
  }
  return Status::Ok();
}

std::string Where(const std::string& path, const toml::node& n) {
  const auto& src = n.source();
  return path + ":" + std::to_string(src.begin.line);
}

}  // namespace

Result<InputFormat> ParseInputFormat(const std::string& name) {
  if (name == "auto" || name.empty()) return InputFormat::kAuto;
  if (name == "jsonl" || name == "ndjson") return InputFormat::kJsonl;
  if (name == "json") return InputFormat::kJsonArray;
  if (name == "csv") return InputFormat::kCsv;
  if (name == "txt" || name == "text") return InputFormat::kText;
  return Status::InvalidArgument("unknown format '" + name + "' (jsonl, json, csv, txt, auto)");
}

Result<AuditPlan> LoadAuditPlan(const std::string& path) {
  TM_ASSIGN_OR_RETURN(const std::string text, ReadFileToString(path));
  toml::table root;
  try {
    root = toml::parse(text, path);
  } catch (const toml::parse_error& e) {
    const auto& src = e.source();
    return Status::BadInput(path + ":" + std::to_string(src.begin.line) + ":" +
                            std::to_string(src.begin.column) + ": " +
                            std::string(e.description()));
  }
  TM_RETURN_IF_ERROR(CheckKeys(root,
                               {"index", "output", "level", "rules", "boilerplate_cap",
                                "template_share", "sample", "sample_seed", "fail_above",
                                "benchmark"},
                               path));
  const std::string base = DirName(path);
  AuditPlan plan;
  auto str = [&](const toml::table& t, const char* key, std::string* out,
                 bool required) -> Status {
    const toml::node* n = t.get(key);
    if (n == nullptr) {
      return required ? Status::BadInput(path + ": missing '" + key + "'") : Status::Ok();
    }
    auto v = n->value<std::string>();
    if (!v) return Status::BadInput(Where(path, *n) + ": '" + key + "' must be a string");
    *out = *v;
    return Status::Ok();
  };
  auto num = [&](const char* key, double* out) -> Status {
    const toml::node* n = root.get(key);
    if (n == nullptr) return Status::Ok();
    auto v = n->value<double>();
    if (!v) return Status::BadInput(Where(path, *n) + ": '" + key + "' must be a number");
    *out = *v;
    return Status::Ok();
  };
  TM_RETURN_IF_ERROR(str(root, "index", &plan.index_dir, true));
  plan.index_dir = Resolve(base, plan.index_dir);
  TM_RETURN_IF_ERROR(str(root, "output", &plan.output_dir, false));
  if (!plan.output_dir.empty()) plan.output_dir = Resolve(base, plan.output_dir);
  TM_RETURN_IF_ERROR(num("level", &plan.level));
  if (!(plan.level > 0.0 && plan.level < 1.0)) {
    return Status::BadInput(path + ": 'level' must be between 0 and 1, e.g. 0.95");
  }
  double cap = 0, share = 0, sample = 0, sample_seed = 1;
  TM_RETURN_IF_ERROR(num("boilerplate_cap", &cap));
  TM_RETURN_IF_ERROR(num("template_share", &share));
  TM_RETURN_IF_ERROR(num("sample", &sample));
  TM_RETURN_IF_ERROR(num("sample_seed", &sample_seed));
  if (cap < 0 || sample < 0 || share < 0 || share > 1) {
    return Status::BadInput(path + ": boilerplate_cap and sample must be >= 0, "
                                   "template_share within 0..1");
  }
  plan.probe.boilerplate_cap = static_cast<uint64_t>(cap);
  plan.probe.template_share = share;
  plan.probe.sample_size = static_cast<uint64_t>(sample);
  plan.probe.sample_seed = static_cast<uint64_t>(sample_seed);
  if (root.get("fail_above") != nullptr) {
    double f = 0;
    TM_RETURN_IF_ERROR(num("fail_above", &f));
    plan.fail_above = f;
  }
  if (const toml::node* rules = root.get("rules")) {
    const toml::array* arr = rules->as_array();
    if (arr == nullptr) return Status::BadInput(Where(path, *rules) + ": 'rules' must be an array");
    for (const toml::node& r : *arr) {
      auto v = r.value<std::string>();
      if (!v) return Status::BadInput(Where(path, r) + ": rules must be strings");
      plan.rule_specs.push_back(*v);
      TM_ASSIGN_OR_RETURN(Rule rule, ParseRule(*v));
      plan.probe.rules.push_back(rule);
    }
  }
  const toml::node* benches = root.get("benchmark");
  const toml::array* arr = benches ? benches->as_array() : nullptr;
  if (arr == nullptr || arr->empty()) {
    return Status::BadInput(path + ": no [[benchmark]] tables");
  }
  for (const toml::node& b : *arr) {
    const toml::table* t = b.as_table();
    if (t == nullptr) return Status::BadInput(Where(path, b) + ": [[benchmark]] must be a table");
    const std::string where = Where(path, b);
    TM_RETURN_IF_ERROR(CheckKeys(*t, {"name", "path", "fields", "id", "format"}, where));
    BenchmarkSpec spec;
    TM_RETURN_IF_ERROR(str(*t, "path", &spec.path, true));
    spec.path = Resolve(base, spec.path);
    TM_RETURN_IF_ERROR(str(*t, "name", &spec.name, false));
    if (spec.name.empty()) spec.name = BaseName(spec.path);
    TM_RETURN_IF_ERROR(str(*t, "id", &spec.read.id_field, false));
    std::string format;
    TM_RETURN_IF_ERROR(str(*t, "format", &format, false));
    TM_ASSIGN_OR_RETURN(spec.read.format, ParseInputFormat(format));
    if (const toml::node* f = t->get("fields")) {
      const toml::array* fa = f->as_array();
      if (fa == nullptr || fa->empty()) {
        return Status::BadInput(Where(path, *f) + ": 'fields' must be a non-empty array");
      }
      spec.read.fields.clear();
      for (const toml::node& x : *fa) {
        auto v = x.value<std::string>();
        if (!v) return Status::BadInput(Where(path, x) + ": fields must be strings");
        spec.read.fields.push_back(*v);
      }
    }
    for (const BenchmarkSpec& other : plan.benchmarks) {
      if (other.name == spec.name) {
        return Status::BadInput(where + ": benchmark name '" + spec.name + "' used twice");
      }
    }
    plan.benchmarks.push_back(std::move(spec));
  }
  return plan;
}

}  // namespace tidemark
