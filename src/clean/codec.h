// Compressed output streams and whole-file decompression for the cleaning and
// evidence stages: a cleaned corpus is written in the compression of its input
// (zstd via ZSTD_compressStream2, gzip via zlib deflate with a gzip wrapper, or
// none), always through an AtomicFileWriter, so a failed or interrupted run leaves
// no half-written file behind.
//
// Output is deterministic: the same input bytes, appended in the same pieces, give
// the same compressed bytes (single-threaded zstd, fixed level; gzip header with
// mtime 0 and no file name).
//
// Thread safety: one CompressedFileWriter per thread. ReadDecompressedFile is pure.
#ifndef TIDEMARK_SRC_CLEAN_CODEC_H_
#define TIDEMARK_SRC_CLEAN_CODEC_H_

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "common/env.h"
#include "tidemark/reader.h"
#include "tidemark/status.h"

namespace tidemark {

/// Compression implied by a file name: .zst/.zstd -> zstd, .gz/.dz -> gzip, else none.
Compression CompressionForPath(const std::string& path);

/// Writes a (possibly compressed) file atomically. Append buffers; Commit flushes,
/// ends the stream, fsyncs and renames into place.
class CompressedFileWriter {
 public:
  /// `level`: zstd 1..19 or gzip 1..9; 0 picks the default (zstd 3, gzip 6).
  /// REQUIRES: compression is kNone, kZstd or kGzip; env outlives the writer.
  CompressedFileWriter(std::string path, Compression compression, int level = 0,
                       Env* env = Env::Default(), FileOptions file_options = {});
  ~CompressedFileWriter();  // abandons an uncommitted file
  CompressedFileWriter(const CompressedFileWriter&) = delete;
  CompressedFileWriter& operator=(const CompressedFileWriter&) = delete;

  Status Open();
  Status Append(std::string_view data);
  Status Commit();
  void Abandon();

  /// Uncompressed bytes appended so far.
  uint64_t bytes_in() const { return bytes_in_; }
  /// Bytes written to disk so far (final after Commit).
  uint64_t bytes_out() const;
  const std::string& path() const { return file_.path(); }

 private:
  struct Codec;
  Status Drain(bool finish);
  Status FlushOut();

  AtomicFileWriter file_;
  Compression compression_;
  int level_;
  std::unique_ptr<Codec> codec_;
  std::string in_;   // pending uncompressed bytes
  std::string out_;  // pending file bytes
  uint64_t bytes_in_ = 0;
  Status status_;
};

/// Reads a whole file and decompresses it (zstd: all frames, skippable frames
/// ignored; gzip: all members). For small inputs (benchmarks). A stream cut short is
/// BadInput naming the file.
Result<std::string> ReadDecompressedFile(const std::string& path, Compression compression);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_CLEAN_CODEC_H_
