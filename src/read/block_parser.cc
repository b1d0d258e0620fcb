// BlockParser: the records of one LineBlock (JSONL lines or text lines).
#include <cstring>

#include "read/json_record.h"
#include "read/read_util.h"
#include "tidemark/reader.h"

namespace tidemark {
namespace {

bool IsBlank(std::string_view s) {
  for (const char c : s) {
    if (c != ' ' && c != '\t' && c != '\r') return false;
  }
  return true;
}

}  // namespace

struct BlockParser::Impl {
  explicit Impl(const ReadOptions& o) : options(o), json(options) {}

  const ReadOptions options;
  JsonRecordParser json;
  const LineBlock* block = nullptr;
  std::string_view data;
  std::string padded;  // copy of a block whose buffer lacks kParsePadding
  size_t pos = 0;
  uint64_t line = 0;
  SkipStats skips;
};

BlockParser::BlockParser(const ReadOptions& options) : impl_(std::make_unique<Impl>(options)) {}
BlockParser::~BlockParser() = default;

void BlockParser::Reset(const LineBlock* block) {
  Impl& s = *impl_;
  s.block = block;
  s.pos = 0;
  s.line = block->first_line;
  if (block->data.capacity() - block->data.size() >= kParsePadding) {
    s.data = block->data;
  } else {
    s.padded = block->data;
    s.padded.append(kParsePadding, ' ');
    s.data = std::string_view(s.padded.data(), block->data.size());
  }
}

const SkipStats& BlockParser::skips() const { return impl_->skips; }

Result<bool> BlockParser::Next(Record* record) {
  Impl& s = *impl_;
  if (s.block == nullptr) return false;
  const std::string& path = *s.block->path;
  while (s.pos < s.data.size()) {
    const char* base = s.data.data();
    const size_t start = s.pos;
    const void* nl = std::memchr(base + start, '\n', s.data.size() - start);
    const size_t end = nl != nullptr ? static_cast<size_t>(static_cast<const char*>(nl) - base)
                                     : s.data.size();
    s.pos = nl != nullptr ? end + 1 : end;
    const uint64_t line = s.line++;
    std::string_view text(base + start, end - start);
    if (!text.empty() && text.back() == '\r') text.remove_suffix(1);
    const uint64_t record_number = s.block->first_record + (line - s.block->first_line);
    if (IsBlank(text)) {
      TM_RETURN_IF_ERROR(NoteSkip(s.options, SkipReason::kEmptyLine,
                                  WhereLine(path, line) + ": empty line", &s.skips));
      continue;
    }
    record->path = &path;
    record->line = line;
    record->byte_offset = s.block->byte_offset + start;
    record->record_number = record_number;
    if (s.block->format == InputFormat::kText) {
      record->text = text;
      record->fields.assign(1, text);
      record->id = std::to_string(record_number);
      if (!IsValidUtf8(text)) {
        TM_RETURN_IF_ERROR(NoteSkip(s.options, SkipReason::kInvalidUtf8,
                                    SkipMessage(WhereLine(path, line), "invalid UTF-8", text),
                                    &s.skips));
      }
      return true;
    }
    const JsonRecordParser::Outcome o = s.json.Parse(text, record_number, record);
    if (!o.ok) {
      TM_RETURN_IF_ERROR(
          NoteSkip(s.options, o.reason, SkipMessage(WhereLine(path, line), o.what, text),
                   &s.skips));
      continue;
    }
    if (o.repaired_bytes > 0) {
      TM_RETURN_IF_ERROR(NoteSkip(
          s.options, SkipReason::kInvalidUtf8,
          SkipMessage(WhereLine(path, line),
                      "invalid UTF-8 (" + std::to_string(o.repaired_bytes) +
                          " bytes replaced by U+FFFD)",
                      text),
          &s.skips));
    }
    return true;
  }
  return false;
}

}  // namespace tidemark
