// tidemark tokens: show what the text rules make of some text: the normalized tokens
// with their original byte spans, and the n-gram fingerprints (docs/text_rules.md).
//
// One JSON object a line (JSONL) per record, on stdout or -o FILE:
//   {"source":"corpus.jsonl","line":3,"id":"doc-17","n":13,"invalid_utf8":0,
//    "tokens":[{"t":"the","b":0,"e":3},...],
//    "fingerprints":[{"i":0,"fp":"9f3c..."},...]}
// b and e are byte offsets [b, e) into the record's text (the selected fields joined
// with "\n"); fingerprint i covers tokens i .. i+n-1; fp is 16 hex digits.
// --table prints the same for people instead.
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

#include "cli/cli_common.h"
#include "cli/commands.h"
#include "common/env.h"
#include "common/text_util.h"
#include "tidemark/progress.h"
#include "tidemark/reader.h"
#include "tidemark/tokenizer.h"

namespace tidemark::cli {
namespace {

struct TokensArgs {
  std::vector<std::string> texts;
  std::vector<std::string> inputs;
  std::vector<std::string> fields = {"text"};
  std::string id_field;
  std::string format = "auto";
  bool text_lines = false;
  bool strict = false;
  int ngram = 13;
  uint64_t seed = 0;
  bool strip_accents = false;
  bool no_fingerprints = false;
  bool table = false;
  std::string output;
};

// Where the JSON lines go: stdout, or an AtomicFileWriter committed at the end.
class Sink {
 public:
  explicit Sink(const std::string& path) {
    if (!path.empty()) file_ = std::make_unique<AtomicFileWriter>(path);
  }
  Status Open() { return file_ ? file_->Open() : Status::Ok(); }
  Status Write(const std::string& line) {
    buf_ += line;
    return buf_.size() >= (1u << 20) ? Flush() : Status::Ok();
  }
  Status Finish() {
    TM_RETURN_IF_ERROR(Flush());
    if (file_) return file_->Commit();
    if (std::fflush(stdout) != 0) return Status::IOError("stdout: write failed");
    return Status::Ok();
  }

 private:
  Status Flush() {
    if (file_) {
      TM_RETURN_IF_ERROR(file_->Append(buf_));
    } else if (!buf_.empty() && std::fwrite(buf_.data(), 1, buf_.size(), stdout) != buf_.size()) {
      return Status::IOError("stdout: write failed");
    }
    buf_.clear();
    return Status::Ok();
  }
  std::unique_ptr<AtomicFileWriter> file_;
  std::string buf_;
};

struct Totals {
  uint64_t records = 0, tokens = 0, fingerprints = 0, invalid_utf8 = 0;
};

// One record's tokens, their normalized text, its fingerprints (if asked for) and its
// invalid UTF-8 bytes; added to the totals.
struct Tokenized {
  std::vector<Token> tokens;
  std::vector<std::string> normalized;
  std::vector<uint64_t> fps;
  uint64_t invalid = 0;
};

Tokenized TokenizeRecord(std::string_view text, const TextOptions& options, bool fingerprints,
                         Tokenizer* tokenizer, Totals* totals) {
  Tokenized r;
  const uint64_t invalid_before = tokenizer->invalid_utf8_bytes();
  tokenizer->TokenizeWithText(text, &r.tokens, &r.normalized);
  r.invalid = tokenizer->invalid_utf8_bytes() - invalid_before;
  if (fingerprints) ComputeFingerprints(r.tokens, options, &r.fps);
  ++totals->records;
  totals->tokens += r.tokens.size();
  totals->fingerprints += r.fps.size();
  totals->invalid_utf8 += r.invalid;
  return r;
}

void AppendRecordJson(const std::string& source, uint64_t line, const std::string& id,
                      std::string_view text, const TextOptions& options, bool fingerprints,
                      Tokenizer* tokenizer, Totals* totals, std::string* out) {
  const auto [tokens, normalized, fps, invalid] =
      TokenizeRecord(text, options, fingerprints, tokenizer, totals);
  out->clear();
  *out += "{\"source\":";
  AppendJsonString(out, source);
  *out += ",\"line\":" + std::to_string(line) + ",\"id\":";
  AppendJsonString(out, id);
  *out += ",\"n\":" + std::to_string(options.ngram);
  *out += ",\"invalid_utf8\":" + std::to_string(invalid);
  *out += ",\"tokens\":[";
  for (size_t i = 0; i < tokens.size(); ++i) {
    if (i > 0) *out += ',';
    *out += "{\"t\":";
    AppendJsonString(out, normalized[i]);
    *out += ",\"b\":" + std::to_string(tokens[i].begin) + ",\"e\":" + std::to_string(tokens[i].end) +
            "}";
  }
  *out += ']';
  if (fingerprints) {
    *out += ",\"fingerprints\":[";
    for (size_t i = 0; i < fps.size(); ++i) {
      if (i > 0) *out += ',';
      *out += "{\"i\":" + std::to_string(i) + ",\"fp\":\"" + Hex64(fps[i]) + "\"}";
    }
    *out += ']';
  }
  *out += "}\n";
}

// Terminal columns, roughly: one per character, two for the CJK and Hangul ranges
// (UTF-8 lead bytes E3..ED, F0: U+3000..U+DFFF and the ideographic planes).
size_t DisplayWidth(std::string_view s) {
  size_t w = 0;
  for (unsigned char c : s) {
    if ((c & 0xC0) == 0x80) continue;
    w += (c >= 0xE3 && c <= 0xED) || c == 0xF0 ? 2 : 1;
  }
  return w;
}

// --table: the same content for people, one block per record:
//   --text:1  9 tokens, 7 3-gram fingerprints, 0 invalid UTF-8 bytes
//     token   0  hello        bytes 0..15    "Ｈｅｌｌｏ"
//     print   0  176fb98676ba355d  tokens 0..2  hello naïve coop
void AppendRecordTable(const std::string& source, uint64_t line, const std::string& id,
                       std::string_view text, const TextOptions& options, bool fingerprints,
                       Tokenizer* tokenizer, Totals* totals, std::string* out) {
  const auto [tokens, normalized, fps, invalid] =
      TokenizeRecord(text, options, fingerprints, tokenizer, totals);
  out->clear();
  *out += source + ":" + std::to_string(line);
  if (id != std::to_string(line)) *out += " id " + id;
  *out += "  " + std::to_string(tokens.size()) + " tokens";
  if (fingerprints) {
    *out += ", " + std::to_string(fps.size()) + " " + std::to_string(options.ngram) +
            "-gram fingerprints";
  }
  *out += ", " + std::to_string(invalid) + " invalid UTF-8 bytes\n";
  char buf[64];
  for (size_t i = 0; i < tokens.size(); ++i) {
    std::snprintf(buf, sizeof buf, "  token %4zu  ", i);
    *out += buf;
    *out += normalized[i];
    const size_t width = DisplayWidth(normalized[i]);
    *out += std::string(width < 14 ? 14 - width : 1, ' ');
    std::snprintf(buf, sizeof buf, "%u..%u", tokens[i].begin, tokens[i].end);
    std::string span = std::string(" bytes ") + buf;
    if (span.size() < 18) span.resize(18, ' ');
    *out += span;
    *out += "\"" + ClipExcerpt(text.substr(tokens[i].begin, tokens[i].end - tokens[i].begin), 40) +
            "\"\n";
  }
  for (size_t i = 0; i < fps.size(); ++i) {
    std::snprintf(buf, sizeof buf, "  print %4zu  %s  tokens %zu..%zu ", i, Hex64(fps[i]).c_str(), i,
                  i + static_cast<size_t>(options.ngram) - 1);
    *out += buf;
    for (size_t k = i; k < i + static_cast<size_t>(options.ngram); ++k) *out += " " + normalized[k];
    *out += "\n";
  }
}

Result<InputFormat> ParseFormat(const std::string& f) {
  if (f == "auto") return InputFormat::kAuto;
  if (f == "jsonl") return InputFormat::kJsonl;
  if (f == "json") return InputFormat::kJsonArray;
  if (f == "csv") return InputFormat::kCsv;
  if (f == "text" || f == "txt") return InputFormat::kText;
  return Status::InvalidArgument("--format must be auto, jsonl, json, csv or text, got '" + f + "'");
}

int Run(const TokensArgs& a) {
  if (a.texts.empty() && a.inputs.empty()) {
    std::fprintf(stderr, "tidemark tokens: give --text STRING or input files (see --help)\n");
    return kExitUsage;
  }
  TextOptions options;
  options.ngram = a.ngram;
  options.seed = a.seed;
  options.strip_accents = a.strip_accents;
  if (Status s = options.Validate(); !s.ok()) return ReportError(s);
  ReadOptions read;
  read.fields = a.fields;
  read.id_field = a.id_field;
  read.text_lines = a.text_lines;
  read.strict = a.strict;
  Result<InputFormat> format = ParseFormat(a.format);
  if (!format.ok()) return ReportError(format.status());
  read.format = *format;

  Tokenizer tokenizer(options);
  Sink sink(a.output);
  if (Status s = sink.Open(); !s.ok()) return ReportError(s);
  Totals totals;
  SkipStats skips;
  std::string line;
  for (size_t i = 0; i < a.texts.size(); ++i) {
    (a.table ? AppendRecordTable : AppendRecordJson)("--text", i + 1, std::to_string(i + 1),
                                                     a.texts[i], options, !a.no_fingerprints,
                                                     &tokenizer, &totals, &line);
    if (Status s = sink.Write(line); !s.ok()) return ReportError(s);
  }
  if (!a.inputs.empty()) {
    Result<std::vector<std::string>> paths = ExpandInputs(a.inputs);
    if (!paths.ok()) return ReportError(paths.status());
    for (const std::string& path : *paths) {
      Result<std::unique_ptr<RecordReader>> reader = RecordReader::Open(path, read);
      if (!reader.ok()) return ReportError(reader.status());
      Record rec;
      for (;;) {
        if (CancelRequested()) return ReportError(Status::Cancelled("interrupted"));
        Result<bool> more = (*reader)->Next(&rec);
        if (!more.ok()) return ReportError(more.status());
        if (!*more) break;
        (a.table ? AppendRecordTable : AppendRecordJson)(path, rec.line, rec.id, rec.text, options,
                                                         !a.no_fingerprints, &tokenizer, &totals,
                                                         &line);
        if (Status s = sink.Write(line); !s.ok()) return ReportError(s);
      }
      skips.Add((*reader)->skips());
    }
  }
  if (Status s = sink.Finish(); !s.ok()) return ReportError(s);
  std::string summary = "tokens: " + std::to_string(totals.records) + " records, " +
                        std::to_string(totals.tokens) + " tokens, " +
                        std::to_string(totals.fingerprints) + " " + std::to_string(options.ngram) +
                        "-gram fingerprints (" + options.ToString() + ")";
  if (totals.invalid_utf8 > 0) {
    summary += ", " + std::to_string(totals.invalid_utf8) + " invalid UTF-8 bytes replaced";
  }
  for (size_t r = 0; r < static_cast<size_t>(SkipReason::kCount); ++r) {
    if (skips.counts[r] > 0) {
      summary += ", skipped " + std::string(SkipReasonName(static_cast<SkipReason>(r))) + " " +
                 std::to_string(skips.counts[r]);
    }
  }
  Info(summary);
  if (Globals().verbosity > 0) {
    for (const std::string& e : skips.examples) Info("  skipped: " + e);
  }
  return kExitOk;
}

}  // namespace

void RegisterTokens(CLI::App& app) {
  auto a = std::make_shared<TokensArgs>();
  CLI::App* c = app.add_subcommand(
      "tokens",
      "Show the tokens (normalized text, original byte spans) and n-gram fingerprints that the "
      "text rules give, as JSON Lines");
  c->add_option("--text", a->texts, "Tokenize this string; repeatable");
  c->add_option("--field", a->fields, "Text field of JSONL/JSON/CSV inputs (key or JSON Pointer); "
                                      "repeatable (default text)");
  c->add_option("--id-field", a->id_field, "Record id field (default: record number)");
  c->add_option("--format", a->format, "Input format: auto, jsonl, json, csv, text (default auto)");
  c->add_flag("--text-lines", a->text_lines, "A .txt input holds one document per line");
  c->add_flag("--strict", a->strict, "Stop at the first unreadable record");
  c->add_option("-n,--ngram", a->ngram, "Word n-gram length (default 13)");
  c->add_option("--seed", a->seed, "Hash seed for tokens and fingerprints (default 0)");
  c->add_flag("--strip-accents", a->strip_accents, "Strip accents (nonspacing marks)");
  c->add_flag("--no-fingerprints", a->no_fingerprints, "Print the tokens only");
  c->add_flag("--table", a->table,
              "Readable text instead of JSON Lines: each token with its original bytes, each "
              "fingerprint with its tokens");
  c->add_option("-o,--output", a->output, "Write to FILE instead of stdout (atomically)");
  c->add_option("inputs", a->inputs, "Input files, directories or @lists");
  c->callback([a] { SetHandler([a] { return Run(*a); }); });
}

}  // namespace tidemark::cli
