// BlockReader: a line-oriented file -> blocks of whole lines.
//
// Bytes come from a ByteSource in kDiskReadBytes chunks and are copied line by line
// into the block, so memory is bounded by block_bytes + max_record_bytes whatever
// the file size. A line longer than max_record_bytes is never buffered: once its
// length passes the limit the bytes seen so far are dropped and the rest is skipped
// up to the next '\n'. A block ends early before such a line, so the lines of a
// block are always consecutive.
#include <cstring>
#include <vector>

#include "common/text_util.h"
#include "read/byte_source.h"
#include "read/read_util.h"
#include "tidemark/reader.h"

namespace tidemark {
namespace {

class BlockReaderImpl final : public BlockReader {
 public:
  BlockReaderImpl(std::string path, std::unique_ptr<ByteSource> source, InputFormat format,
                  const ReadOptions& options, size_t block_bytes)
      : path_(std::move(path)),
        source_(std::move(source)),
        format_(format),
        options_(options),
        block_bytes_(block_bytes),
        chunk_(kDiskReadBytes) {}

  Result<bool> Next(LineBlock* b) override {
    b->path = &path_;
    b->format = format_;
    b->data.clear();
    b->data.reserve(block_bytes_ + kDiskReadBytes + kParsePadding);
    b->first_line = line_;
    b->first_record = line_;
    b->byte_offset = offset_;
    std::string& data = b->data;
    while (true) {
      if (pos_ == len_) {
        if (eof_) break;
        TM_ASSIGN_OR_RETURN(len_, ReadFully(source_.get(), chunk_.data(), chunk_.size()));
        pos_ = 0;
        if (len_ == 0) {
          eof_ = true;
          break;
        }
        if (at_start_) {
          at_start_ = false;
          // A UTF-8 byte order mark at the start of the file is not content; offsets
          // still count its 3 bytes.
          if (len_ >= 3 && std::memcmp(chunk_.data(), "\xEF\xBB\xBF", 3) == 0) {
            pos_ = 3;
            offset_ = 3;
            if (data.empty()) b->byte_offset = offset_;
          }
        }
        continue;
      }
      const char* p = chunk_.data() + pos_;
      const size_t avail = len_ - pos_;
      const char* nl = static_cast<const char*>(std::memchr(p, '\n', avail));
      const size_t piece = nl != nullptr ? static_cast<size_t>(nl - p) : avail;
      if (!skipping_ && line_len_ + piece > options_.max_record_bytes) {
        // The current line is too long: keep an excerpt, drop what was buffered.
        std::string_view head = line_len_ > 0
                                    ? std::string_view(data).substr(data.size() - line_len_)
                                    : std::string_view(p, piece);
        skip_excerpt_ = std::string(head.substr(0, 64));
        data.resize(data.size() - line_len_);
        skip_len_ = line_len_;
        line_len_ = 0;
        skipping_ = true;
        if (!data.empty()) return Emit(b);
        b->first_line = line_;
        b->first_record = line_;
      }
      const size_t take = piece + (nl != nullptr ? 1 : 0);
      if (skipping_) {
        skip_len_ += piece;
      } else {
        data.append(p, take);
        line_len_ += piece;
      }
      pos_ += take;
      offset_ += take;
      if (nl != nullptr) {
        if (skipping_) TM_RETURN_IF_ERROR(FinishSkip());
        ++line_;
        line_len_ = 0;
        if (data.empty()) {
          b->first_line = line_;
          b->first_record = line_;
          b->byte_offset = offset_;
        }
        if (data.size() >= block_bytes_) return Emit(b);
      }
    }
    // End of input.
    if (skipping_) TM_RETURN_IF_ERROR(FinishSkip());
    if (data.empty()) return false;
    return Emit(b);
  }

  const SkipStats& skips() const override { return skips_; }
  uint64_t disk_bytes_read() const override { return source_->disk_bytes_read(); }
  std::optional<uint64_t> disk_checksum() const override { return source_->disk_checksum(); }
  uint64_t disk_bytes_total() const override { return source_->disk_bytes_total(); }

 private:
  // Pads the block so that simdjson may parse its lines in place.
  static Result<bool> Emit(LineBlock* b) {
    const size_t n = b->data.size();
    b->data.append(kParsePadding, ' ');
    b->data.resize(n);
    return true;
  }

  Status FinishSkip() {
    skipping_ = false;
    const std::string what = "line too long (" + std::to_string(skip_len_) +
                             " bytes, limit " + std::to_string(options_.max_record_bytes) + ")";
    skip_len_ = 0;
    return NoteSkip(options_, SkipReason::kLineTooLong,
                    SkipMessage(WhereLine(path_, line_), what, skip_excerpt_), &skips_);
  }

  const std::string path_;
  std::unique_ptr<ByteSource> source_;
  const InputFormat format_;
  const ReadOptions options_;
  const size_t block_bytes_;
  std::vector<char> chunk_;
  size_t pos_ = 0;
  size_t len_ = 0;
  bool eof_ = false;
  bool at_start_ = true;
  uint64_t line_ = 1;      // line number of the line being read
  uint64_t offset_ = 0;    // uncompressed offset of chunk_[pos_]
  uint64_t line_len_ = 0;  // bytes of the current line already in the block
  bool skipping_ = false;
  uint64_t skip_len_ = 0;
  std::string skip_excerpt_;
  SkipStats skips_;
};

}  // namespace

Result<std::unique_ptr<BlockReader>> BlockReader::Open(const std::string& path,
                                                       const ReadOptions& options,
                                                       size_t block_bytes) {
  TM_RETURN_IF_ERROR(ValidateReadOptions(options));
  TM_ASSIGN_OR_RETURN(const DetectedFormat detected, DetectFormat(path, options));
  if (!IsLineFormat(detected.format, options)) {
    return Status::InvalidArgument(path + ": format " +
                                   std::string(InputFormatName(detected.format)) +
                                   " is not line-oriented; read it with RecordReader");
  }
  TM_ASSIGN_OR_RETURN(auto source, OpenByteSource(path, detected.compression));
  if (block_bytes == 0) block_bytes = 1;
  return std::unique_ptr<BlockReader>(
      new BlockReaderImpl(path, std::move(source), detected.format, options, block_bytes));
}

}  // namespace tidemark
