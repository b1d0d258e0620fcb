// Readers: corpus and benchmark files -> records with their text and provenance.
//
// Formats by extension and magic bytes: .jsonl/.ndjson (one JSON object a line),
// .json (one array of objects; loaded whole, so meant for benchmarks, size-limited),
// .csv (header row; RFC 4180 quoting), .txt (a whole file is one document, or one
// document a line with ReadOptions::text_lines); each optionally compressed
// (.zst: streaming, multi-frame, skippable frames; .gz). Memory is bounded by the
// block size and the longest record, never by the file size.
//
// Bad records are skipped and counted per SkipReason, with file:line and a clipped
// excerpt for the first few; with ReadOptions::strict the first one is an error.
// A broken stream (truncated .zst/.gz, not really compressed) is always an error
// naming the file and byte offset.
//
// Thread safety: a RecordReader or BlockReader is used by one thread at a time.
// ParseBlock is reentrant given a distinct BlockParser per thread.
#ifndef TIDEMARK_INCLUDE_TIDEMARK_READER_H_
#define TIDEMARK_INCLUDE_TIDEMARK_READER_H_

#include <array>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/status.h"

namespace tidemark {

enum class InputFormat { kAuto, kJsonl, kJsonArray, kCsv, kText };
enum class Compression { kAuto, kNone, kZstd, kGzip };

struct ReadOptions {
  /// Text fields: plain keys ("text") or RFC 6901 JSON Pointers ("/meta/body"). For CSV,
  /// column names. Arrays of strings are joined with `array_joiner`.
  std::vector<std::string> fields = {"text"};
  /// Id field (key or pointer); empty: the record number (1-based) is the id.
  std::string id_field;
  InputFormat format = InputFormat::kAuto;
  Compression compression = Compression::kAuto;
  /// .txt: one document per line instead of one per file.
  bool text_lines = false;
  /// Skips become errors.
  bool strict = false;
  /// Longest accepted record (line) in bytes; longer ones are skipped (kLineTooLong).
  uint64_t max_record_bytes = 64ull << 20;
  /// Joins several fields of one record into Record::text.
  std::string field_joiner = "\n";
  std::string array_joiner = "\n";
  /// A missing field is a skip unless this is set (then it counts as empty text).
  bool allow_missing_fields = false;
};

/// Why a record was skipped (or repaired). Stable names in SkipReasonName.
enum class SkipReason : int {
  kMalformedJson = 0,  ///< the line is not a JSON object
  kMissingField,       ///< a text field is absent
  kNotString,          ///< a text field is not a string / array of strings
  kLineTooLong,        ///< over ReadOptions::max_record_bytes
  kEmptyLine,          ///< blank line in JSONL (counted, not an error)
  kInvalidUtf8,        ///< text had invalid UTF-8 (repaired with U+FFFD, record kept)
  kBadCsvRow,          ///< wrong number of columns / broken quoting
  kCount
};
std::string_view SkipReasonName(SkipReason reason);

/// Counts of skipped/repaired records and the first few examples.
struct SkipStats {
  std::array<uint64_t, static_cast<size_t>(SkipReason::kCount)> counts{};
  /// "file:line: reason: excerpt", the first kMaxExamples.
  std::vector<std::string> examples;
  static constexpr size_t kMaxExamples = 20;

  uint64_t total() const;
  /// Records dropped (everything but kInvalidUtf8, which repairs and keeps).
  uint64_t dropped() const;
  void Add(const SkipStats& other);
};

/// One record. Views are valid until the next call on the reader/parser that made it.
struct Record {
  std::string_view text;                  ///< fields joined with field_joiner
  std::vector<std::string_view> fields;   ///< one text per ReadOptions::fields entry
  std::string id;                         ///< id field value, or the record number
  const std::string* path = nullptr;      ///< source file
  uint64_t line = 0;                      ///< 1-based line (record number for .json)
  uint64_t byte_offset = 0;               ///< of the record start, uncompressed stream
  uint64_t record_number = 0;             ///< 1-based, counting skipped records too
};

/// Expands command-line inputs: files, directories (recursive, sorted, hidden files
/// skipped) and @list files (one path a line). Result is sorted and de-duplicated.
Result<std::vector<std::string>> ExpandInputs(const std::vector<std::string>& args);

/// Detected format and compression of a path (by extension, then magic bytes).
struct DetectedFormat {
  InputFormat format = InputFormat::kJsonl;
  Compression compression = Compression::kNone;
};
Result<DetectedFormat> DetectFormat(const std::string& path, const ReadOptions& options);

/// True for formats BlockReader/BlockParser serve: JSONL, and text with
/// ReadOptions::text_lines. Other formats are read with RecordReader.
bool IsLineOriented(const DetectedFormat& format, const ReadOptions& options);

/// OK, or InvalidArgument naming the bad option (no fields, a JSON Pointer with a
/// bad "~" escape, a zero max_record_bytes). The readers' Open calls it.
Status ValidateReadOptions(const ReadOptions& options);

/// Largest .json (array) input, decompressed: such files are loaded whole, so they
/// are meant for benchmarks; a larger one is a BadInput error (use JSON Lines).
inline constexpr uint64_t kMaxJsonArrayBytes = 1ull << 30;

/// Stable names: "jsonl", "json", "csv", "text", "auto".
std::string_view InputFormatName(InputFormat format);

/// Serial, record-at-a-time reader for any supported format.
class RecordReader {
 public:
  static Result<std::unique_ptr<RecordReader>> Open(const std::string& path,
                                                    const ReadOptions& options);
  virtual ~RecordReader() = default;
  /// Fills *record; returns false at the end of input.
  virtual Result<bool> Next(Record* record) = 0;
  virtual const SkipStats& skips() const = 0;
  /// Bytes of the file on disk consumed so far (compressed), for progress.
  virtual uint64_t disk_bytes_read() const = 0;
  /// XXH3-64 (seed 0) of the file's bytes on disk, once all were read from disk (at
  /// the latest when Next has returned false); nullopt before, or for input that is
  /// not a regular file.
  virtual std::optional<uint64_t> disk_checksum() const = 0;
};

/// A block of whole lines of a line-oriented file (JSONL, text lines), decompressed.
struct LineBlock {
  const std::string* path = nullptr;
  std::string data;           ///< whole lines, each ended by '\n' (the last may lack it at EOF)
  uint64_t first_line = 1;    ///< 1-based line number of data's first line
  uint64_t byte_offset = 0;   ///< uncompressed offset of data[0] in the file
  uint64_t first_record = 1;  ///< record number of the first line
  InputFormat format = InputFormat::kJsonl;
};

/// Splits a line-oriented file into blocks of about `block_bytes`, for parallel
/// parsing. A line longer than max_record_bytes is cut out and counted as a skip.
class BlockReader {
 public:
  static Result<std::unique_ptr<BlockReader>> Open(const std::string& path,
                                                   const ReadOptions& options,
                                                   size_t block_bytes = 4 << 20);
  virtual ~BlockReader() = default;
  /// Fills *block; returns false at the end of input.
  virtual Result<bool> Next(LineBlock* block) = 0;
  virtual const SkipStats& skips() const = 0;
  virtual uint64_t disk_bytes_read() const = 0;
  virtual uint64_t disk_bytes_total() const = 0;
  /// As RecordReader::disk_checksum.
  virtual std::optional<uint64_t> disk_checksum() const = 0;
};

/// Parses the records of a LineBlock. One per thread.
class BlockParser {
 public:
  explicit BlockParser(const ReadOptions& options);
  ~BlockParser();
  BlockParser(const BlockParser&) = delete;
  BlockParser& operator=(const BlockParser&) = delete;

  /// Starts on a block; REQUIRES: block outlives the records.
  void Reset(const LineBlock* block);
  /// Next good record of the block (skips counted in skips()); false at block end;
  /// error only with ReadOptions::strict.
  Result<bool> Next(Record* record);
  const SkipStats& skips() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

}  // namespace tidemark

#endif  // TIDEMARK_INCLUDE_TIDEMARK_READER_H_
