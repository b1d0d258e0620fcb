// Helpers shared by the readers: skip bookkeeping, error message shape, UTF-8
// repair, option checks.
//
// Thread safety: pure functions, or functions on caller-owned objects.
#ifndef TIDEMARK_SRC_READ_READ_UTIL_H_
#define TIDEMARK_SRC_READ_READ_UTIL_H_

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "tidemark/reader.h"
#include "tidemark/status.h"

namespace tidemark {

/// Bytes kept readable (and initialised) after LineBlock::data and whole-file
/// buffers, so simdjson can parse in place (SIMDJSON_PADDING is 64 in 3.0.1;
/// block_parser.cc checks it with a static_assert).
inline constexpr size_t kParsePadding = 64;

/// "path:line: what: 'excerpt'" (excerpt clipped with ClipExcerpt).
std::string SkipMessage(std::string_view where, std::string_view what,
                        std::string_view excerpt);
/// "path:line".
std::string WhereLine(const std::string& path, uint64_t line);

/// Whether ReadOptions::strict turns this reason into an error: every reason that
/// drops a record except blank lines. kInvalidUtf8 repairs and keeps the record, so
/// it is counted only.
bool IsStrictError(SkipReason reason);

/// Counts a skip in *stats and keeps `message` among the first examples. Returns
/// BadInput(message) if `options.strict` and IsStrictError(reason), else OK.
Status NoteSkip(const ReadOptions& options, SkipReason reason, std::string message,
                SkipStats* stats);

/// Copies `in` to *out with every byte that is not part of a valid UTF-8 sequence
/// (RFC 3629) replaced by U+FFFD. Returns the number of replaced bytes.
size_t RepairUtf8(std::string_view in, std::string* out);

/// True if all of `s` is valid UTF-8 (simdjson::validate_utf8).
bool IsValidUtf8(std::string_view s);

/// Line-oriented input: JSONL, or text with ReadOptions::text_lines.
bool IsLineFormat(InputFormat format, const ReadOptions& options);

class ByteSource;

/// The CSV reader (csv_reader.cc), for RecordReader::Open.
Result<std::unique_ptr<RecordReader>> OpenCsvReader(const std::string& path,
                                                    std::unique_ptr<ByteSource> source,
                                                    const ReadOptions& options);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_READ_READ_UTIL_H_
