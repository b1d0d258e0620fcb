// Byte sources: the decompressed byte stream of one input file.
//
// A ByteSource hands out the (decompressed) bytes of a file in large chunks without
// ever loading the whole file: plain files with read(2), zstd with
// ZSTD_decompressStream (multi-frame, skippable frames skipped), gzip with zlib's
// inflate (multi-member). A stream cut short or not really compressed is a BadInput
// error naming the file and the compressed byte offset, never a quiet end of input.
//
// Thread safety: a ByteSource is used by one thread at a time.
#ifndef TIDEMARK_SRC_READ_BYTE_SOURCE_H_
#define TIDEMARK_SRC_READ_BYTE_SOURCE_H_

#include <cstddef>
#include <cstdint>
#include <memory>
#include <optional>
#include <string>

#include "tidemark/reader.h"
#include "tidemark/status.h"

namespace tidemark {

class ByteSource {
 public:
  virtual ~ByteSource() = default;
  /// Reads up to `n` bytes into `buf`; 0 only at the end of the stream.
  virtual Result<size_t> Read(char* buf, size_t n) = 0;
  /// Bytes of the file on disk consumed so far.
  virtual uint64_t disk_bytes_read() const = 0;
  /// Size of the file on disk (0 when unknown, e.g. a pipe).
  virtual uint64_t disk_bytes_total() const = 0;
  /// XXH3-64 (seed 0) of the file's bytes on disk, once they have all been read (the
  /// stream reached its end and the byte count equals the size of a regular file);
  /// nullopt before that. Saves the index build a second read of each input.
  virtual std::optional<uint64_t> disk_checksum() const = 0;
  virtual const std::string& path() const = 0;
};

/// Chunk size of read(2) calls on the underlying file.
inline constexpr size_t kDiskReadBytes = 1 << 20;

/// Opens `path` decoded as `compression` (kAuto: by magic bytes). Missing file:
/// NotFound; other open/read failures and directories: IOError; the path is named.
Result<std::unique_ptr<ByteSource>> OpenByteSource(const std::string& path,
                                                   Compression compression);

/// Reads until `n` bytes or the end of the stream; returns the count.
Result<size_t> ReadFully(ByteSource* source, char* buf, size_t n);

/// Compression named by the magic bytes at the start of `head` (kNone if none):
/// zstd frame 28 B5 2F FD, zstd skippable frame 5? 2A 4D 18 (0x184D2A50..5F, little
/// endian; RFC 8878 section 3.1.2), gzip 1F 8B (RFC 1952 section 2.3.1).
Compression CompressionFromMagic(const unsigned char* head, size_t n);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_READ_BYTE_SOURCE_H_
