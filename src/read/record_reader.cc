// RecordReader for every format: JSONL and text lines (on BlockReader + BlockParser),
// whole-file text, .json arrays; CSV lives in csv_reader.cc.
#include <cstring>

#include "common/text_util.h"
#include "read/byte_source.h"
#include "read/json_record.h"
#include "read/read_util.h"
#include "tidemark/reader.h"

namespace tidemark {
namespace {

constexpr std::string_view kBom = "\xEF\xBB\xBF";

class LineRecordReader final : public RecordReader {
 public:
  LineRecordReader(std::unique_ptr<BlockReader> blocks, const ReadOptions& options)
      : blocks_(std::move(blocks)), parser_(options) {}

  Result<bool> Next(Record* record) override {
    while (true) {
      if (have_block_) {
        TM_ASSIGN_OR_RETURN(const bool got, parser_.Next(record));
        if (got) return true;
        have_block_ = false;
      }
      TM_ASSIGN_OR_RETURN(const bool more, blocks_->Next(&block_));
      if (!more) return false;
      parser_.Reset(&block_);
      have_block_ = true;
    }
  }
  const SkipStats& skips() const override {
    combined_ = blocks_->skips();
    combined_.Add(parser_.skips());
    return combined_;
  }
  uint64_t disk_bytes_read() const override { return blocks_->disk_bytes_read(); }
  std::optional<uint64_t> disk_checksum() const override { return blocks_->disk_checksum(); }

 private:
  std::unique_ptr<BlockReader> blocks_;
  BlockParser parser_;
  LineBlock block_;
  bool have_block_ = false;
  mutable SkipStats combined_;
};

// Reads the whole decoded stream into *out, up to `limit` bytes. Returns false (and
// drains the rest, counting it in *total) when the stream is longer.
Result<bool> ReadAllUpTo(ByteSource* source, uint64_t limit, std::string* out,
                         uint64_t* total) {
  out->clear();
  *total = 0;
  std::vector<char> chunk(kDiskReadBytes);
  bool fits = true;
  while (true) {
    TM_ASSIGN_OR_RETURN(const size_t n, source->Read(chunk.data(), chunk.size()));
    if (n == 0) break;
    *total += n;
    if (!fits) continue;
    if (*total > limit) {
      fits = false;
      out->clear();
      out->shrink_to_fit();
      continue;
    }
    out->append(chunk.data(), n);
  }
  return fits;
}

// A whole .txt file is one document.
class WholeTextReader final : public RecordReader {
 public:
  WholeTextReader(std::string path, std::unique_ptr<ByteSource> source,
                  const ReadOptions& options)
      : path_(std::move(path)), source_(std::move(source)), options_(options) {}

  Result<bool> Next(Record* record) override {
    if (done_) return false;
    done_ = true;
    uint64_t total = 0;
    TM_ASSIGN_OR_RETURN(const bool fits,
                        ReadAllUpTo(source_.get(), options_.max_record_bytes + kBom.size(),
                                    &text_, &total));
    if (!fits) {
      TM_RETURN_IF_ERROR(NoteSkip(
          options_, SkipReason::kLineTooLong,
          path_ + ":1: document too long (" + std::to_string(total) + " bytes, limit " +
              std::to_string(options_.max_record_bytes) + ")",
          &skips_));
      return false;
    }
    uint64_t offset = 0;
    std::string_view text = text_;
    if (text.substr(0, kBom.size()) == kBom) {
      text.remove_prefix(kBom.size());
      offset = kBom.size();
    }
    if (text.empty()) return false;
    if (text.size() > options_.max_record_bytes) {
      TM_RETURN_IF_ERROR(NoteSkip(options_, SkipReason::kLineTooLong,
                                  path_ + ":1: document too long (" +
                                      std::to_string(text.size()) + " bytes, limit " +
                                      std::to_string(options_.max_record_bytes) + ")",
                                  &skips_));
      return false;
    }
    record->text = text;
    record->fields.assign(1, text);
    record->id = "1";
    record->path = &path_;
    record->line = 1;
    record->byte_offset = offset;
    record->record_number = 1;
    if (!IsValidUtf8(text)) {
      TM_RETURN_IF_ERROR(NoteSkip(options_, SkipReason::kInvalidUtf8,
                                  SkipMessage(path_ + ":1", "invalid UTF-8", text), &skips_));
    }
    return true;
  }
  const SkipStats& skips() const override { return skips_; }
  uint64_t disk_bytes_read() const override { return source_->disk_bytes_read(); }
  std::optional<uint64_t> disk_checksum() const override { return source_->disk_checksum(); }

 private:
  std::string path_;
  std::unique_ptr<ByteSource> source_;
  const ReadOptions options_;
  std::string text_;
  bool done_ = false;
  SkipStats skips_;
};

bool IsJsonSpace(char c) { return c == ' ' || c == '\t' || c == '\n' || c == '\r'; }

// A .json file: one array of objects, loaded whole (at most kMaxJsonArrayBytes).
// A small scanner splits the array into its elements (strings and nesting tracked;
// simdjson then validates each element on its own), so every record gets its exact
// byte offset and a bad element is skipped like a bad JSONL line.
class JsonArrayReader final : public RecordReader {
 public:
  JsonArrayReader(std::string path, std::unique_ptr<ByteSource> source,
                  const ReadOptions& options)
      : path_(std::move(path)), source_(std::move(source)), options_(options),
        parser_(options_) {}

  Status Load(bool compressed) {
    uint64_t total = 0;
    if (!compressed && source_->disk_bytes_total() > kMaxJsonArrayBytes) {
      return TooBig(source_->disk_bytes_total());
    }
    TM_ASSIGN_OR_RETURN(const bool fits,
                        ReadAllUpTo(source_.get(), kMaxJsonArrayBytes, &buf_, &total));
    if (!fits) return TooBig(total);
    const size_t n = buf_.size();
    buf_.append(kParsePadding, ' ');
    buf_.resize(n);
    return Split();
  }

  Result<bool> Next(Record* record) override {
    while (next_ < elements_.size()) {
      const auto [begin, end] = elements_[next_++];
      const uint64_t number = next_;
      const std::string_view json(buf_.data() + begin, end - begin);
      record->path = &path_;
      record->line = number;
      record->byte_offset = begin;
      record->record_number = number;
      const std::string where = path_ + "@" + std::to_string(begin) + " (record " +
                                std::to_string(number) + ")";
      const JsonRecordParser::Outcome o = parser_.Parse(json, number, record);
      if (!o.ok) {
        TM_RETURN_IF_ERROR(NoteSkip(options_, o.reason, SkipMessage(where, o.what, json),
                                    &skips_));
        continue;
      }
      if (o.repaired_bytes > 0) {
        TM_RETURN_IF_ERROR(NoteSkip(options_, SkipReason::kInvalidUtf8,
                                    SkipMessage(where,
                                                "invalid UTF-8 (" +
                                                    std::to_string(o.repaired_bytes) +
                                                    " bytes replaced by U+FFFD)",
                                                json),
                                    &skips_));
      }
      return true;
    }
    return false;
  }
  const SkipStats& skips() const override { return skips_; }
  uint64_t disk_bytes_read() const override { return source_->disk_bytes_read(); }
  std::optional<uint64_t> disk_checksum() const override { return source_->disk_checksum(); }

 private:
  Status TooBig(uint64_t bytes) const {
    return Status::BadInput(path_ + ": " + std::to_string(bytes) +
                            " bytes is over the limit of " + std::to_string(kMaxJsonArrayBytes) +
                            " bytes for a .json array file (it is loaded whole); "
                            "convert it to JSON Lines (.jsonl)");
  }

  Status Error(size_t at, std::string_view what) const {
    return Status::BadInput(path_ + "@" + std::to_string(at) + ": " + std::string(what) +
                            ": '" + ClipExcerpt(std::string_view(buf_).substr(at, 40)) +
                            "'");
  }

  size_t SkipSpace(size_t i) const {
    while (i < buf_.size() && IsJsonSpace(buf_[i])) ++i;
    return i;
  }

  // End of the string starting at the quote at i, or npos if unterminated.
  size_t ScanString(size_t i) const {
    const size_t n = buf_.size();
    for (++i; i < n; ++i) {
      if (buf_[i] == '\\') {
        ++i;
      } else if (buf_[i] == '"') {
        return i + 1;
      }
    }
    return std::string::npos;
  }

  // End of the JSON value starting at i (brackets balanced, strings skipped).
  Result<size_t> ScanValue(size_t i) const {
    const size_t n = buf_.size();
    const size_t start = i;
    const char c = buf_[i];
    if (c == '"') {
      const size_t e = ScanString(i);
      if (e == std::string::npos) return Error(start, "unterminated string");
      return e;
    }
    if (c == '{' || c == '[') {
      int64_t depth = 0;
      while (i < n) {
        const char d = buf_[i];
        if (d == '"') {
          i = ScanString(i);
          if (i == std::string::npos) return Error(start, "unterminated string in element");
          continue;
        }
        if (d == '{' || d == '[') ++depth;
        if (d == '}' || d == ']') {
          if (--depth == 0) return i + 1;
        }
        ++i;
      }
      return Error(start, "unterminated element (file truncated?)");
    }
    while (i < n && !IsJsonSpace(buf_[i]) && buf_[i] != ',' && buf_[i] != ']' &&
           buf_[i] != '}' && buf_[i] != '[' && buf_[i] != '{') {
      ++i;
    }
    return i;
  }

  Status Split() {
    size_t i = 0;
    if (std::string_view(buf_).substr(0, kBom.size()) == kBom) i = kBom.size();
    i = SkipSpace(i);
    if (i == buf_.size()) return Status::Ok();  // empty file: no records
    if (buf_[i] != '[') return Error(i, "expected a JSON array of objects ('[')");
    i = SkipSpace(i + 1);
    if (i < buf_.size() && buf_[i] == ']') return CheckEnd(i + 1);
    while (true) {
      if (i >= buf_.size()) return Error(i, "unterminated array (file truncated?)");
      if (buf_[i] == ',' || buf_[i] == ']') return Error(i, "missing array element");
      TM_ASSIGN_OR_RETURN(const size_t end, ScanValue(i));
      elements_.emplace_back(i, end);
      i = SkipSpace(end);
      if (i >= buf_.size()) return Error(i, "unterminated array (file truncated?)");
      if (buf_[i] == ']') return CheckEnd(i + 1);
      if (buf_[i] != ',') return Error(i, "expected ',' or ']' after an array element");
      i = SkipSpace(i + 1);
    }
  }

  Status CheckEnd(size_t i) const {
    i = SkipSpace(i);
    if (i != buf_.size()) return Error(i, "unexpected content after the array");
    return Status::Ok();
  }

  std::string path_;
  std::unique_ptr<ByteSource> source_;
  const ReadOptions options_;
  JsonRecordParser parser_;
  std::string buf_;
  std::vector<std::pair<size_t, size_t>> elements_;
  size_t next_ = 0;
  SkipStats skips_;
};

}  // namespace

Result<std::unique_ptr<RecordReader>> RecordReader::Open(const std::string& path,
                                                         const ReadOptions& options) {
  TM_RETURN_IF_ERROR(ValidateReadOptions(options));
  TM_ASSIGN_OR_RETURN(const DetectedFormat detected, DetectFormat(path, options));
  if (IsLineFormat(detected.format, options)) {
    TM_ASSIGN_OR_RETURN(auto blocks, BlockReader::Open(path, options));
    return std::unique_ptr<RecordReader>(new LineRecordReader(std::move(blocks), options));
  }
  TM_ASSIGN_OR_RETURN(auto source, OpenByteSource(path, detected.compression));
  switch (detected.format) {
    case InputFormat::kText:
      return std::unique_ptr<RecordReader>(new WholeTextReader(path, std::move(source), options));
    case InputFormat::kJsonArray: {
      auto reader = std::make_unique<JsonArrayReader>(path, std::move(source), options);
      TM_RETURN_IF_ERROR(reader->Load(detected.compression != Compression::kNone));
      return std::unique_ptr<RecordReader>(std::move(reader));
    }
    case InputFormat::kCsv: return OpenCsvReader(path, std::move(source), options);
    default: break;
  }
  return Status::InvalidArgument(path + ": no reader for this format");
}

}  // namespace tidemark
