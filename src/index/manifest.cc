#include "index/manifest.h"

#include <simdjson.h>

#include <algorithm>
#include <cstdio>
#include <set>

#include "common/text_util.h"
#include "index/format.h"

namespace tidemark {

namespace {

constexpr std::string_view kFormatName = "tidemark-index";

void Key(std::string* out, std::string_view k) {
  AppendJsonString(out, k);
  out->append(": ");
}
void Num(std::string* out, uint64_t v) { out->append(std::to_string(v)); }
void SNum(std::string* out, int64_t v) { out->append(std::to_string(v)); }

void AppendReadOptions(std::string* out, const ReadOptions& r) {
  out->append("{");
  Key(out, "fields");
  out->append("[");
  for (size_t i = 0; i < r.fields.size(); ++i) {
    if (i > 0) out->append(", ");
    AppendJsonString(out, r.fields[i]);
  }
  out->append("], ");
  Key(out, "id_field");
  AppendJsonString(out, r.id_field);
  out->append(", ");
  Key(out, "format");
  AppendJsonString(out, InputFormatName(r.format));
  out->append(", ");
  Key(out, "compression");
  AppendJsonString(out, ManifestCompressionName(r.compression));
  out->append(", ");
  Key(out, "text_lines");
  out->append(r.text_lines ? "true" : "false");
  out->append(", ");
  Key(out, "max_record_bytes");
  Num(out, r.max_record_bytes);
  out->append(", ");
  Key(out, "field_joiner");
  AppendJsonString(out, r.field_joiner);
  out->append(", ");
  Key(out, "array_joiner");
  AppendJsonString(out, r.array_joiner);
  out->append(", ");
  Key(out, "allow_missing_fields");
  out->append(r.allow_missing_fields ? "true" : "false");
  out->append("}");
}

// ---- parsing helpers -------------------------------------------------------------

class Parser {
 public:
  explicit Parser(const std::string& path) : path_(path) {}
  Status Err(const std::string& what) const {
    return Status::Corruption(path_ + ": " + what);
  }
  // Checks that `obj` has exactly the keys in `keys`.
  Status Keys(simdjson::dom::object obj, std::initializer_list<std::string_view> keys,
              const std::string& where) const {
    std::set<std::string_view> want(keys);
    std::set<std::string_view> seen;
    for (auto field : obj) {
      if (want.count(field.key) == 0) {
        return Err(where + ": unknown key \"" + std::string(field.key) + "\"");
      }
      seen.insert(field.key);
    }
    for (const auto k : want) {
      if (seen.count(k) == 0) return Err(where + ": missing key \"" + std::string(k) + "\"");
    }
    return Status::Ok();
  }
  template <typename T>
  Status Get(simdjson::dom::object obj, std::string_view key, T* out, const std::string& where) const {
    auto v = obj[key];
    if (v.error()) return Err(where + ": missing key \"" + std::string(key) + "\"");
    if constexpr (std::is_same_v<T, uint64_t>) {
      if (v.get_uint64().get(*out)) return Err(where + "." + std::string(key) + ": expected an unsigned integer");
    } else if constexpr (std::is_same_v<T, int64_t>) {
      if (v.get_int64().get(*out)) return Err(where + "." + std::string(key) + ": expected an integer");
    } else if constexpr (std::is_same_v<T, double>) {
      if (v.get_double().get(*out)) return Err(where + "." + std::string(key) + ": expected a number");
    } else if constexpr (std::is_same_v<T, bool>) {
      if (v.get_bool().get(*out)) return Err(where + "." + std::string(key) + ": expected true/false");
    } else if constexpr (std::is_same_v<T, std::string>) {
      std::string_view sv;
      if (v.get_string().get(sv)) return Err(where + "." + std::string(key) + ": expected a string");
      *out = std::string(sv);
    } else if constexpr (std::is_same_v<T, simdjson::dom::object>) {
      if (v.get_object().get(*out)) return Err(where + "." + std::string(key) + ": expected an object");
    } else if constexpr (std::is_same_v<T, simdjson::dom::array>) {
      if (v.get_array().get(*out)) return Err(where + "." + std::string(key) + ": expected an array");
    }
    return Status::Ok();
  }
  Status GetU32(simdjson::dom::object obj, std::string_view key, uint32_t* out,
                const std::string& where) const {
    uint64_t v = 0;
    TM_RETURN_IF_ERROR(Get(obj, key, &v, where));
    if (v > 0xFFFFFFFFull) return Err(where + "." + std::string(key) + ": value too large");
    *out = static_cast<uint32_t>(v);
    return Status::Ok();
  }
  Status GetHex(simdjson::dom::object obj, std::string_view key, uint64_t* out,
                const std::string& where) const {
    std::string s;
    TM_RETURN_IF_ERROR(Get(obj, key, &s, where));
    if (s.size() != 16) return Err(where + "." + std::string(key) + ": expected 16 hex digits");
    uint64_t v = 0;
    for (const char c : s) {
      int d;
      if (c >= '0' && c <= '9') d = c - '0';
      else if (c >= 'a' && c <= 'f') d = c - 'a' + 10;
      else return Err(where + "." + std::string(key) + ": expected 16 lower-case hex digits");
      v = (v << 4) | static_cast<uint64_t>(d);
    }
    *out = v;
    return Status::Ok();
  }

 private:
  const std::string& path_;
};

Result<InputFormat> ParseManifestInputFormat(std::string_view s) {
  for (InputFormat f : {InputFormat::kAuto, InputFormat::kJsonl, InputFormat::kJsonArray,
                        InputFormat::kCsv, InputFormat::kText}) {
    if (InputFormatName(f) == s) return f;
  }
  return Status::Corruption("unknown input format \"" + std::string(s) + "\"");
}
Result<Compression> ParseCompression(std::string_view s) {
  for (Compression c : {Compression::kAuto, Compression::kNone, Compression::kZstd, Compression::kGzip}) {
    if (ManifestCompressionName(c) == s) return c;
  }
  return Status::Corruption("unknown compression \"" + std::string(s) + "\"");
}

}  // namespace

std::string_view ManifestCompressionName(Compression c) {
  switch (c) {
    case Compression::kAuto: return "auto";
    case Compression::kNone: return "none";
    case Compression::kZstd: return "zstd";
    case Compression::kGzip: return "gzip";
  }
  return "auto";
}

uint32_t IndexManifest::bloom_k() const { return index_format::BloomKFor(bloom_bits_per_key); }

uint64_t IndexManifest::params_hash() const { return Checksum64(text.ToString()); }

std::vector<ManifestFile> IndexManifest::AllFiles() const {
  std::vector<ManifestFile> out;
  for (const auto& s : segments) out.insert(out.end(), s.files.begin(), s.files.end());
  std::sort(out.begin(), out.end(),
            [](const ManifestFile& a, const ManifestFile& b) { return a.path < b.path; });
  return out;
}

namespace {
// Sum of one per-segment counter over all segments.
uint64_t SumSegments(const std::vector<ManifestSegment>& segments,
                     uint64_t ManifestSegment::*field) {
  uint64_t t = 0;
  for (const auto& s : segments) t += s.*field;
  return t;
}
}  // namespace

uint64_t IndexManifest::records() const { return SumSegments(segments, &ManifestSegment::records); }

SkipCounts IndexManifest::skipped() const {
  SkipCounts c{};
  for (const auto& s : segments) {
    for (size_t i = 0; i < c.size(); ++i) c[i] += s.skipped[i];
  }
  return c;
}

uint64_t IndexManifest::ngrams_total() const {
  return SumSegments(segments, &ManifestSegment::ngrams_total);
}

uint64_t IndexManifest::ngrams_distinct() const {
  return SumSegments(segments, &ManifestSegment::ngrams_distinct);
}

uint64_t IndexManifest::shard_bytes() const {
  return SumSegments(segments, &ManifestSegment::bytes);
}

std::string IndexManifest::Serialize(bool include_build) const {
  std::string o;
  o.append("{\n  ");
  Key(&o, "format");
  AppendJsonString(&o, kFormatName);
  o.append(",\n  ");
  Key(&o, "format_version");
  Num(&o, static_cast<uint64_t>(format_version));
  o.append(",\n  ");
  Key(&o, "text_options");
  AppendJsonString(&o, text.ToString());
  o.append(",\n  ");
  Key(&o, "text");
  o.append("{\"rules\": " + std::to_string(TextOptions::kRulesVersion) +
           ", \"n\": " + std::to_string(text.ngram) + ", \"seed\": " + std::to_string(text.seed) +
           ", \"strip_accents\": " + (text.strip_accents ? "true" : "false") + "}");
  o.append(",\n  ");
  Key(&o, "read");
  AppendReadOptions(&o, read);
  o.append(",\n  ");
  Key(&o, "shard_bits");
  Num(&o, shard_bits);
  o.append(",\n  ");
  Key(&o, "bloom");
  o.append("{\"bits_per_key\": " + std::to_string(bloom_bits_per_key) +
           ", \"k\": " + std::to_string(bloom_k()) +
           ", \"block_bits\": " + std::to_string(index_format::kBloomBlockBits) + "}");
  o.append(",\n  ");
  Key(&o, "segments");
  o.append("[");
  for (size_t si = 0; si < segments.size(); ++si) {
    const ManifestSegment& s = segments[si];
    o.append(si == 0 ? "\n    {" : ",\n    {");
    Key(&o, "id");
    Num(&o, s.id);
    o.append(",\n     ");
    Key(&o, "files");
    o.append("[");
    for (size_t i = 0; i < s.files.size(); ++i) {
      const ManifestFile& f = s.files[i];
      o.append(i == 0 ? "\n      {" : ",\n      {");
      Key(&o, "path");
      AppendJsonString(&o, f.path);
      o.append(", ");
      Key(&o, "size");
      Num(&o, f.size);
      o.append(", ");
      Key(&o, "mtime_ns");
      SNum(&o, f.mtime_ns);
      o.append(", ");
      Key(&o, "xxh3");
      AppendJsonString(&o, Hex64(f.xxh3));
      o.append("}");
    }
    o.append(s.files.empty() ? "]" : "\n     ]");
    o.append(",\n     ");
    Key(&o, "records");
    Num(&o, s.records);
    o.append(",\n     ");
    Key(&o, "skipped");
    o.append("{");
    for (size_t i = 0; i < s.skipped.size(); ++i) {
      if (i > 0) o.append(", ");
      Key(&o, SkipReasonName(static_cast<SkipReason>(i)));
      Num(&o, s.skipped[i]);
    }
    o.append("},\n     ");
    Key(&o, "ngrams_total");
    Num(&o, s.ngrams_total);
    o.append(", ");
    Key(&o, "ngrams_distinct");
    Num(&o, s.ngrams_distinct);
    o.append(", ");
    Key(&o, "bytes");
    Num(&o, s.bytes);
    o.append(",\n     ");
    Key(&o, "shards");
    o.append("[");
    for (size_t i = 0; i < s.shards.size(); ++i) {
      const ManifestShard& sh = s.shards[i];
      o.append(i == 0 ? "\n      {" : ",\n      {");
      o.append("\"id\": " + std::to_string(sh.id) + ", \"keys\": " + std::to_string(sh.keys) +
               ", \"bytes\": " + std::to_string(sh.bytes) + ", \"header_xxh3\": ");
      AppendJsonString(&o, Hex64(sh.header_xxh3));
      o.append("}");
    }
    o.append(s.shards.empty() ? "]" : "\n     ]");
    if (include_build) {
      o.append(",\n     ");
      Key(&o, "build");
      o.append("{");
      Key(&o, "tool");
      AppendJsonString(&o, s.build.tool);
      char buf[64];
      std::snprintf(buf, sizeof(buf), "%.3f", s.build.seconds);
      o.append(", \"unix_time\": " + std::to_string(s.build.unix_time) + ", \"seconds\": " + buf +
               ", \"threads\": " + std::to_string(s.build.threads) +
               ", \"spills\": " + std::to_string(s.build.spills) + "}");
    }
    o.append("}");
  }
  o.append(segments.empty() ? "]" : "\n  ]");
  o.append("\n}\n");
  return o;
}

std::string IndexManifest::Identity() const { return Hex64(Checksum64(Serialize(false))); }

Result<IndexManifest> IndexManifest::Parse(std::string_view json, const std::string& path) {
  Parser p(path);
  simdjson::dom::parser parser;
  simdjson::padded_string padded(json.data(), json.size());
  simdjson::dom::element root;
  if (auto err = parser.parse(padded).get(root); err) {
    return p.Err(std::string("not valid JSON: ") + simdjson::error_message(err));
  }
  simdjson::dom::object top;
  if (root.get_object().get(top)) return p.Err("not a JSON object");
  std::string format;
  TM_RETURN_IF_ERROR(p.Get(top, "format", &format, "manifest"));
  if (format != kFormatName) return p.Err("\"format\" is \"" + format + "\", not \"tidemark-index\"");
  uint64_t version = 0;
  TM_RETURN_IF_ERROR(p.Get(top, "format_version", &version, "manifest"));
  if (version != static_cast<uint64_t>(kFormatVersion)) {
    return Status::Unsupported(path + ": index format version " + std::to_string(version) +
                               " (this build reads " + std::to_string(kFormatVersion) +
                               "); rebuild it with `tidemark index build`");
  }
  TM_RETURN_IF_ERROR(p.Keys(top, {"format", "format_version", "text_options", "text", "read",
                                  "shard_bits", "bloom", "segments"},
                            "manifest"));
  IndexManifest m;
  std::string text_options;
  TM_RETURN_IF_ERROR(p.Get(top, "text_options", &text_options, "manifest"));
  {
    auto t = TextOptions::Parse(text_options);
    if (!t.ok() && t.status().code() == StatusCode::kUnsupported) {
      // Built under other text rules: its fingerprints mean something else.
      return Status::Unsupported(path + ": text_options: " + t.status().message() +
                                 "; rebuild the index with `tidemark index build`");
    }
    if (!t.ok()) return t.status().WithContext(path + ": text_options");
    m.text = *t;
  }
  simdjson::dom::object text;
  TM_RETURN_IF_ERROR(p.Get(top, "text", &text, "manifest"));
  TM_RETURN_IF_ERROR(p.Keys(text, {"rules", "n", "seed", "strip_accents"}, "text"));
  {
    uint64_t rules = 0, n = 0, seed = 0;
    bool accents = false;
    TM_RETURN_IF_ERROR(p.Get(text, "rules", &rules, "text"));
    TM_RETURN_IF_ERROR(p.Get(text, "n", &n, "text"));
    TM_RETURN_IF_ERROR(p.Get(text, "seed", &seed, "text"));
    TM_RETURN_IF_ERROR(p.Get(text, "strip_accents", &accents, "text"));
    if (rules != static_cast<uint64_t>(TextOptions::kRulesVersion) ||
        n != static_cast<uint64_t>(m.text.ngram) || seed != m.text.seed ||
        accents != m.text.strip_accents) {
      return p.Err("\"text\" disagrees with \"text_options\"");
    }
  }
  simdjson::dom::object read;
  TM_RETURN_IF_ERROR(p.Get(top, "read", &read, "manifest"));
  TM_RETURN_IF_ERROR(p.Keys(read, {"fields", "id_field", "format", "compression", "text_lines",
                                   "max_record_bytes", "field_joiner", "array_joiner",
                                   "allow_missing_fields"},
                            "read"));
  {
    simdjson::dom::array fields;
    TM_RETURN_IF_ERROR(p.Get(read, "fields", &fields, "read"));
    m.read.fields.clear();
    for (auto f : fields) {
      std::string_view sv;
      if (f.get_string().get(sv)) return p.Err("read.fields: expected strings");
      m.read.fields.emplace_back(sv);
    }
    TM_RETURN_IF_ERROR(p.Get(read, "id_field", &m.read.id_field, "read"));
    std::string s;
    TM_RETURN_IF_ERROR(p.Get(read, "format", &s, "read"));
    auto f = ParseManifestInputFormat(s);
    if (!f.ok()) return f.status().WithContext(path + ": read.format");
    m.read.format = *f;
    TM_RETURN_IF_ERROR(p.Get(read, "compression", &s, "read"));
    auto c = ParseCompression(s);
    if (!c.ok()) return c.status().WithContext(path + ": read.compression");
    m.read.compression = *c;
    TM_RETURN_IF_ERROR(p.Get(read, "text_lines", &m.read.text_lines, "read"));
    TM_RETURN_IF_ERROR(p.Get(read, "max_record_bytes", &m.read.max_record_bytes, "read"));
    TM_RETURN_IF_ERROR(p.Get(read, "field_joiner", &m.read.field_joiner, "read"));
    TM_RETURN_IF_ERROR(p.Get(read, "array_joiner", &m.read.array_joiner, "read"));
    TM_RETURN_IF_ERROR(p.Get(read, "allow_missing_fields", &m.read.allow_missing_fields, "read"));
  }
  TM_RETURN_IF_ERROR(p.GetU32(top, "shard_bits", &m.shard_bits, "manifest"));
  if (m.shard_bits > index_format::kMaxShardBits) return p.Err("shard_bits out of range");
  simdjson::dom::object bloom;
  TM_RETURN_IF_ERROR(p.Get(top, "bloom", &bloom, "manifest"));
  TM_RETURN_IF_ERROR(p.Keys(bloom, {"bits_per_key", "k", "block_bits"}, "bloom"));
  {
    uint32_t k = 0, block_bits = 0;
    TM_RETURN_IF_ERROR(p.GetU32(bloom, "bits_per_key", &m.bloom_bits_per_key, "bloom"));
    TM_RETURN_IF_ERROR(p.GetU32(bloom, "k", &k, "bloom"));
    TM_RETURN_IF_ERROR(p.GetU32(bloom, "block_bits", &block_bits, "bloom"));
    if (m.bloom_bits_per_key < index_format::kMinBloomBitsPerKey ||
        m.bloom_bits_per_key > index_format::kMaxBloomBitsPerKey || k != m.bloom_k() ||
        block_bits != index_format::kBloomBlockBits) {
      return p.Err("bad bloom parameters");
    }
  }
  simdjson::dom::array segs;
  TM_RETURN_IF_ERROR(p.Get(top, "segments", &segs, "manifest"));
  const uint64_t num_shards = uint64_t{1} << m.shard_bits;
  for (auto sv : segs) {
    simdjson::dom::object so;
    if (sv.get_object().get(so)) return p.Err("segments: expected objects");
    const std::string where = "segment " + std::to_string(m.segments.size());
    TM_RETURN_IF_ERROR(p.Keys(so, {"id", "files", "records", "skipped", "ngrams_total",
                                   "ngrams_distinct", "bytes", "shards", "build"},
                              where));
    ManifestSegment s;
    TM_RETURN_IF_ERROR(p.GetU32(so, "id", &s.id, where));
    if (s.id == 0 || (!m.segments.empty() && s.id <= m.segments.back().id)) {
      return p.Err(where + ": segment ids must be >= 1 and increasing");
    }
    simdjson::dom::array files;
    TM_RETURN_IF_ERROR(p.Get(so, "files", &files, where));
    for (auto fv : files) {
      simdjson::dom::object fo;
      if (fv.get_object().get(fo)) return p.Err(where + ".files: expected objects");
      TM_RETURN_IF_ERROR(p.Keys(fo, {"path", "size", "mtime_ns", "xxh3"}, where + ".files"));
      ManifestFile f;
      TM_RETURN_IF_ERROR(p.Get(fo, "path", &f.path, where + ".files"));
      TM_RETURN_IF_ERROR(p.Get(fo, "size", &f.size, where + ".files"));
      TM_RETURN_IF_ERROR(p.Get(fo, "mtime_ns", &f.mtime_ns, where + ".files"));
      TM_RETURN_IF_ERROR(p.GetHex(fo, "xxh3", &f.xxh3, where + ".files"));
      s.files.push_back(std::move(f));
    }
    TM_RETURN_IF_ERROR(p.Get(so, "records", &s.records, where));
    simdjson::dom::object sk;
    TM_RETURN_IF_ERROR(p.Get(so, "skipped", &sk, where));
    for (size_t i = 0; i < s.skipped.size(); ++i) {
      TM_RETURN_IF_ERROR(p.Get(sk, SkipReasonName(static_cast<SkipReason>(i)), &s.skipped[i],
                               where + ".skipped"));
    }
    TM_RETURN_IF_ERROR(p.Get(so, "ngrams_total", &s.ngrams_total, where));
    TM_RETURN_IF_ERROR(p.Get(so, "ngrams_distinct", &s.ngrams_distinct, where));
    TM_RETURN_IF_ERROR(p.Get(so, "bytes", &s.bytes, where));
    simdjson::dom::array shards;
    TM_RETURN_IF_ERROR(p.Get(so, "shards", &shards, where));
    uint64_t keys = 0, bytes = 0;
    for (auto hv : shards) {
      simdjson::dom::object ho;
      if (hv.get_object().get(ho)) return p.Err(where + ".shards: expected objects");
      TM_RETURN_IF_ERROR(p.Keys(ho, {"id", "keys", "bytes", "header_xxh3"}, where + ".shards"));
      ManifestShard sh;
      TM_RETURN_IF_ERROR(p.GetU32(ho, "id", &sh.id, where + ".shards"));
      TM_RETURN_IF_ERROR(p.Get(ho, "keys", &sh.keys, where + ".shards"));
      TM_RETURN_IF_ERROR(p.Get(ho, "bytes", &sh.bytes, where + ".shards"));
      TM_RETURN_IF_ERROR(p.GetHex(ho, "header_xxh3", &sh.header_xxh3, where + ".shards"));
      if (sh.id != s.shards.size()) return p.Err(where + ".shards: ids must be 0, 1, 2, ...");
      keys += sh.keys;
      bytes += sh.bytes;
      s.shards.push_back(sh);
    }
    if (s.shards.size() != num_shards) {
      return p.Err(where + ": " + std::to_string(s.shards.size()) + " shards, expected " +
                   std::to_string(num_shards));
    }
    if (keys != s.ngrams_distinct || bytes != s.bytes) {
      return p.Err(where + ": ngrams_distinct/bytes disagree with the shard list");
    }
    simdjson::dom::object bo;
    TM_RETURN_IF_ERROR(p.Get(so, "build", &bo, where));
    TM_RETURN_IF_ERROR(p.Keys(bo, {"tool", "unix_time", "seconds", "threads", "spills"}, where + ".build"));
    TM_RETURN_IF_ERROR(p.Get(bo, "tool", &s.build.tool, where + ".build"));
    TM_RETURN_IF_ERROR(p.Get(bo, "unix_time", &s.build.unix_time, where + ".build"));
    TM_RETURN_IF_ERROR(p.Get(bo, "seconds", &s.build.seconds, where + ".build"));
    uint64_t threads = 0;
    TM_RETURN_IF_ERROR(p.Get(bo, "threads", &threads, where + ".build"));
    s.build.threads = static_cast<int>(threads);
    TM_RETURN_IF_ERROR(p.Get(bo, "spills", &s.build.spills, where + ".build"));
    m.segments.push_back(std::move(s));
  }
  return m;
}

std::string ManifestPath(const std::string& dir) {
  return JoinPath(dir, index_format::kManifestName);
}

Result<IndexManifest> ReadManifest(const std::string& dir) {
  const std::string path = ManifestPath(dir);
  if (!Env::Default()->FileExists(path)) {
    return Status::NotFound(dir + ": not a tidemark index (no manifest.json)");
  }
  TM_ASSIGN_OR_RETURN(std::string json, ReadFileToString(path));
  return IndexManifest::Parse(json, path);
}

Status WriteManifest(const std::string& dir, const IndexManifest& manifest, Env* env) {
  return WriteFileAtomically(ManifestPath(dir), manifest.Serialize(true), env);
}

Status CompareTextOptions(const TextOptions& built, const TextOptions& wanted) {
  std::string diff;
  auto add = [&diff](const std::string& what) {
    if (!diff.empty()) diff += "; ";
    diff += what;
  };
  if (built.ngram != wanted.ngram) {
    add("index built with n=" + std::to_string(built.ngram) + ", asked for n=" +
        std::to_string(wanted.ngram));
  }
  if (built.seed != wanted.seed) {
    add("index built with seed=" + std::to_string(built.seed) + ", asked for seed=" +
        std::to_string(wanted.seed));
  }
  if (built.strip_accents != wanted.strip_accents) {
    add(std::string("index built with accents=") + (built.strip_accents ? "strip" : "keep") +
        ", asked for accents=" + (wanted.strip_accents ? "strip" : "keep"));
  }
  if (built.ToString() != wanted.ToString() && diff.empty()) {
    add("index built with text rules \"" + built.ToString() + "\", asked for \"" +
        wanted.ToString() + "\"");
  }
  if (diff.empty()) return Status::Ok();
  return Status::Mismatch(diff);
}

Status CompareReadOptions(const ReadOptions& built, const ReadOptions& wanted) {
  std::string diff;
  auto add = [&diff](const std::string& what) {
    if (!diff.empty()) diff += "; ";
    diff += what;
  };
  auto join = [](const std::vector<std::string>& v) {
    std::string s;
    for (const auto& f : v) s += (s.empty() ? "" : ",") + f;
    return s;
  };
  if (built.fields != wanted.fields) {
    add("index built with fields " + join(built.fields) + ", asked for " + join(wanted.fields));
  }
  if (built.id_field != wanted.id_field) {
    add("index built with id field \"" + built.id_field + "\", asked for \"" + wanted.id_field + "\"");
  }
  if (built.format != wanted.format || built.compression != wanted.compression ||
      built.text_lines != wanted.text_lines || built.max_record_bytes != wanted.max_record_bytes ||
      built.field_joiner != wanted.field_joiner || built.array_joiner != wanted.array_joiner ||
      built.allow_missing_fields != wanted.allow_missing_fields) {
    add("read options (format, compression, text lines, record size limit, joiners, "
        "missing-field rule) differ from the index's");
  }
  if (diff.empty()) return Status::Ok();
  return Status::Mismatch(diff);
}

}  // namespace tidemark
