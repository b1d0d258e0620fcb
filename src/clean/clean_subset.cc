// WriteCleanBenchmarkSubset: the items a probe (or a cleaning run) found clean,
// copied byte for byte from the benchmark file.
#include <simdjson.h>

#include <unordered_set>

#include "clean/codec.h"
#include "common/env.h"
#include "tidemark/clean.h"

namespace tidemark {
namespace {

// Calls f(start_line, record_bytes_with_line_end) for each record of a line-based
// file. With `csv`, a newline inside a double-quoted field (RFC 4180 section 2.6)
// does not end the record.
template <typename F>
void ForEachRecord(std::string_view data, bool csv, F&& f) {
  uint64_t line = 1;
  size_t pos = 0;
  while (pos < data.size()) {
    const uint64_t start_line = line;
    size_t i = pos;
    bool quoted = false;
    while (i < data.size()) {
      const char c = data[i];
      if (csv && c == '"') quoted = !quoted;
      if (c == '\n') {
        ++line;
        if (!quoted) {
          ++i;
          break;
        }
      }
      ++i;
    }
    f(start_line, data.substr(pos, i - pos));
    pos = i;
  }
}

}  // namespace

Result<uint64_t> WriteCleanBenchmarkSubset(const BenchmarkResult& result, const std::string& out_path,
                                           size_t rule_index, Env* env) {
  if (env == nullptr) env = Env::Default();
  const std::string& path = result.spec.path;
  std::unordered_set<uint64_t> clean;
  for (const ItemResult& item : result.items) {
    if (rule_index >= item.verdicts.size()) {
      return Status::InvalidArgument("rule index " + std::to_string(rule_index) + " out of range for item " +
                                     item.id + " of " + path);
    }
    if (item.verdicts[rule_index] == Verdict::kClean) clean.insert(item.line);
  }
  TM_ASSIGN_OR_RETURN(const DetectedFormat det, DetectFormat(path, result.spec.read));
  TM_ASSIGN_OR_RETURN(const std::string data, ReadDecompressedFile(path, det.compression));
  std::string out;
  uint64_t written = 0;
  switch (det.format) {
    case InputFormat::kJsonl:
    case InputFormat::kText:
    case InputFormat::kCsv: {
      if (det.format == InputFormat::kText && !result.spec.read.text_lines) {
        return Status::Unsupported(path + ": a whole-file text benchmark has no records to subset");
      }
      const bool csv = det.format == InputFormat::kCsv;
      bool header = csv;
      ForEachRecord(data, csv, [&](uint64_t line, std::string_view rec) {
        if (header) {  // the CSV header row is always kept
          out.append(rec);
          header = false;
          return;
        }
        if (clean.count(line) != 0) {
          out.append(rec);
          if (!rec.empty() && rec.back() != '\n') out.push_back('\n');
          ++written;
        }
      });
      break;
    }
    case InputFormat::kJsonArray: {
      // Items are numbered by their position in the array (reader.h: Record::line).
      simdjson::padded_string padded(data);
      simdjson::ondemand::parser parser;
      simdjson::ondemand::document doc;
      simdjson::ondemand::array arr;
      if (parser.iterate(padded).get(doc) != simdjson::SUCCESS || doc.get_array().get(arr) != simdjson::SUCCESS) {
        return Status::BadInput(path + ": not a JSON array");
      }
      out = "[\n";
      uint64_t number = 0;
      for (auto element : arr) {
        ++number;
        simdjson::ondemand::object obj;
        std::string_view raw;
        if (element.get_object().get(obj) != simdjson::SUCCESS || obj.raw_json().get(raw) != simdjson::SUCCESS) {
          return Status::BadInput(path + ": element " + std::to_string(number) + " is not an object");
        }
        if (clean.count(number) == 0) continue;
        if (written > 0) out += ",\n";
        out.append(raw);
        ++written;
      }
      out += "\n]\n";
      break;
    }
    default:
      return Status::Unsupported(path + ": unknown benchmark format");
  }
  if (written != clean.size()) {
    return Status::BadInput(path + ": " + std::to_string(clean.size() - written) +
                            " clean item(s) not found at their recorded lines; was the file changed "
                            "since it was probed?");
  }
  TM_RETURN_IF_ERROR(env->CreateDirs(DirName(out_path)));
  CompressedFileWriter w(out_path, CompressionForPath(out_path), 0, env);
  TM_RETURN_IF_ERROR(w.Open());
  TM_RETURN_IF_ERROR(w.Append(out));
  TM_RETURN_IF_ERROR(w.Commit());
  return written;
}

}  // namespace tidemark
