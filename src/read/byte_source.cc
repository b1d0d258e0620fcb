#include "read/byte_source.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>
#include <zlib.h>
#include <zstd.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <vector>

namespace tidemark {
namespace {

Status PosixError(const std::string& context, int err) {
  std::string msg = context + ": " + std::strerror(err);
  if (err == ENOENT) return Status::NotFound(std::move(msg));
  return Status::IOError(std::move(msg));
}

std::string MagicHex(const unsigned char* p, size_t n) {
  std::string out;
  for (size_t i = 0; i < n; ++i) {
    char b[4];
    std::snprintf(b, sizeof(b), i ? " %02X" : "%02X", p[i]);
    out += b;
  }
  return out;
}

class FileSource final : public ByteSource {
 public:
  FileSource(std::string path, int fd, uint64_t size, bool regular)
      : path_(std::move(path)), fd_(fd), size_(size), regular_(regular),
        hash_(XXH3_createState()) {
    if (hash_ != nullptr) XXH3_64bits_reset(hash_);
  }
  ~FileSource() override {
    ::close(fd_);
    XXH3_freeState(hash_);
  }

  Result<size_t> Read(char* buf, size_t n) override {
    while (true) {
      const ssize_t got = ::read(fd_, buf, n);
      if (got < 0) {
        if (errno == EINTR) continue;
        return PosixError(path_ + "@" + std::to_string(read_) + ": read", errno);
      }
      read_ += static_cast<uint64_t>(got);
      if (hash_ != nullptr) {
        if (got > 0) {
          XXH3_64bits_update(hash_, buf, static_cast<size_t>(got));
        } else if (n > 0 && regular_ && read_ == size_) {
          at_end_ = true;
        }
      }
      return static_cast<size_t>(got);
    }
  }
  uint64_t disk_bytes_read() const override { return read_; }
  uint64_t disk_bytes_total() const override { return size_; }
  std::optional<uint64_t> disk_checksum() const override {
    if (!at_end_) return std::nullopt;
    return XXH3_64bits_digest(hash_);
  }
  const std::string& path() const override { return path_; }

 private:
  std::string path_;
  int fd_;
  uint64_t size_;
  bool regular_;
  uint64_t read_ = 0;
  XXH3_state_t* hash_;  // nullptr if it could not be allocated: no checksum then
  bool at_end_ = false;
};

Result<std::unique_ptr<FileSource>> OpenFile(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return PosixError(path + ": cannot open", errno);
  struct stat st;
  if (::fstat(fd, &st) != 0) {
    const int err = errno;
    ::close(fd);
    return PosixError(path + ": cannot stat", err);
  }
  if (S_ISDIR(st.st_mode)) {
    ::close(fd);
    return Status::IOError(path + ": is a directory, not a file");
  }
  ::posix_fadvise(fd, 0, 0, POSIX_FADV_SEQUENTIAL);
  const bool regular = S_ISREG(st.st_mode);
  return std::make_unique<FileSource>(path, fd, regular ? st.st_size : 0, regular);
}

// Base for the decompressors: owns the file and an input buffer.
class CompressedSource : public ByteSource {
 public:
  explicit CompressedSource(std::unique_ptr<FileSource> file)
      : file_(std::move(file)), in_(kDiskReadBytes) {}
  uint64_t disk_bytes_read() const override { return file_->disk_bytes_read(); }
  uint64_t disk_bytes_total() const override { return file_->disk_bytes_total(); }
  std::optional<uint64_t> disk_checksum() const override { return file_->disk_checksum(); }
  const std::string& path() const override { return file_->path(); }

 protected:
  // Refills in_ from the file; sets eof_ when the file is exhausted. Returns the count.
  Result<size_t> Fill() {
    TM_ASSIGN_OR_RETURN(const size_t got, ReadFully(file_.get(), in_.data(), in_.size()));
    if (got == 0) eof_ = true;
    return got;
  }
  // Compressed bytes handed to the decoder so far, minus what it has not consumed.
  uint64_t ConsumedOffset(size_t unconsumed) const {
    return file_->disk_bytes_read() - unconsumed;
  }

  std::unique_ptr<FileSource> file_;
  std::vector<char> in_;
  bool eof_ = false;
  bool checked_magic_ = false;
};

// zstd streaming decoder (RFC 8878). ZSTD_decompressStream walks over frame
// boundaries and skippable frames by itself; its return value is 0 exactly when the
// last frame is complete, which is how a truncated stream is told from a finished one.
class ZstdSource final : public CompressedSource {
 public:
  explicit ZstdSource(std::unique_ptr<FileSource> file)
      : CompressedSource(std::move(file)), dctx_(ZSTD_createDCtx()) {}
  ~ZstdSource() override { ZSTD_freeDCtx(dctx_); }

  Result<size_t> Read(char* buf, size_t n) override {
    if (dctx_ == nullptr) return Status::IOError(path() + ": cannot allocate a zstd context");
    ZSTD_outBuffer out{buf, n, 0};
    while (true) {
      if (input_.pos == input_.size && !eof_) {
        TM_ASSIGN_OR_RETURN(const size_t got, Fill());
        input_ = ZSTD_inBuffer{in_.data(), got, 0};
        if (!checked_magic_ && got > 0) {
          checked_magic_ = true;
          const auto* head = reinterpret_cast<const unsigned char*>(in_.data());
          if (CompressionFromMagic(head, got) != Compression::kZstd) {
            return Status::BadInput(path() + "@0: not a zstd stream (starts with " +
                                    MagicHex(head, got < 4 ? got : 4) + ")");
          }
        }
      }
      if (input_.pos == input_.size && eof_ && frame_done_) return size_t{0};
      const size_t out_before = out.pos;
      const size_t ret = ZSTD_decompressStream(dctx_, &out, &input_);
      if (ZSTD_isError(ret)) {
        const uint64_t at = ConsumedOffset(input_.size - input_.pos);
        return Status::BadInput(path() + "@" + std::to_string(at) + ": corrupt zstd data: " +
                                ZSTD_getErrorName(ret));
      }
      frame_done_ = (ret == 0);
      if (out.pos > 0) return out.pos;
      if (input_.pos == input_.size && eof_ && out.pos == out_before && !frame_done_) {
        return Status::BadInput(path() + "@" + std::to_string(ConsumedOffset(0)) +
                                ": premature end of zstd stream (file truncated?)");
      }
    }
  }

 private:
  ZSTD_DCtx* dctx_;
  ZSTD_inBuffer input_{nullptr, 0, 0};
  bool frame_done_ = true;  // nothing started: an empty file is an empty stream
};

// gzip via zlib (RFC 1952). windowBits 15 + 32 accepts gzip and zlib headers; after
// Z_STREAM_END the decoder is reset so that concatenated members (gzip -c a >> f)
// decode as one stream, as gzip(1) does.
class GzipSource final : public CompressedSource {
 public:
  explicit GzipSource(std::unique_ptr<FileSource> file) : CompressedSource(std::move(file)) {
    std::memset(&strm_, 0, sizeof(strm_));
    init_ok_ = inflateInit2(&strm_, 15 + 32) == Z_OK;
  }
  ~GzipSource() override {
    if (init_ok_) inflateEnd(&strm_);
  }

  Result<size_t> Read(char* buf, size_t n) override {
    if (!init_ok_) return Status::IOError(path() + ": cannot initialise zlib");
    strm_.next_out = reinterpret_cast<Bytef*>(buf);
    // zlib counts in uInt; large requests are served in parts.
    strm_.avail_out = static_cast<uInt>(n > (1u << 30) ? (1u << 30) : n);
    const uInt want = strm_.avail_out;
    while (strm_.avail_out == want) {
      if (strm_.avail_in == 0 && !eof_) {
        TM_ASSIGN_OR_RETURN(const size_t got, Fill());
        strm_.next_in = reinterpret_cast<Bytef*>(in_.data());
        strm_.avail_in = static_cast<uInt>(got);
        if (!checked_magic_ && got > 0) {
          checked_magic_ = true;
          const auto* head = reinterpret_cast<const unsigned char*>(in_.data());
          if (CompressionFromMagic(head, got) != Compression::kGzip) {
            return Status::BadInput(path() + "@0: not a gzip stream (starts with " +
                                    MagicHex(head, got < 2 ? got : 2) + ")");
          }
        }
      }
      if (strm_.avail_in == 0 && eof_) {
        if (in_member_) {
          return Status::BadInput(path() + "@" + std::to_string(ConsumedOffset(0)) +
                                  ": premature end of gzip stream (file truncated?)");
        }
        break;
      }
      in_member_ = true;
      const int ret = inflate(&strm_, Z_NO_FLUSH);
      if (ret == Z_STREAM_END) {
        in_member_ = false;
        inflateReset(&strm_);
      } else if (ret != Z_OK && ret != Z_BUF_ERROR) {
        const uint64_t at = ConsumedOffset(strm_.avail_in);
        std::string what = strm_.msg != nullptr ? strm_.msg : "error " + std::to_string(ret);
        return Status::BadInput(path() + "@" + std::to_string(at) + ": corrupt gzip data: " +
                                what);
      }
    }
    return static_cast<size_t>(want - strm_.avail_out);
  }

 private:
  z_stream strm_;
  bool init_ok_ = false;
  bool in_member_ = false;
};

}  // namespace

Compression CompressionFromMagic(const unsigned char* head, size_t n) {
  if (n >= 4 && head[0] == 0x28 && head[1] == 0xB5 && head[2] == 0x2F && head[3] == 0xFD) {
    return Compression::kZstd;
  }
  if (n >= 4 && (head[0] & 0xF0) == 0x50 && head[1] == 0x2A && head[2] == 0x4D &&
      head[3] == 0x18) {
    return Compression::kZstd;
  }
  if (n >= 2 && head[0] == 0x1F && head[1] == 0x8B) return Compression::kGzip;
  return Compression::kNone;
}

Result<size_t> ReadFully(ByteSource* source, char* buf, size_t n) {
  size_t total = 0;
  while (total < n) {
    TM_ASSIGN_OR_RETURN(const size_t got, source->Read(buf + total, n - total));
    if (got == 0) break;
    total += got;
  }
  return total;
}

Result<std::unique_ptr<ByteSource>> OpenByteSource(const std::string& path,
                                                   Compression compression) {
  TM_ASSIGN_OR_RETURN(std::unique_ptr<FileSource> file, OpenFile(path));
  if (compression == Compression::kAuto) {
    unsigned char head[4];
    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    ssize_t got = 0;
    if (fd >= 0) {
      got = ::pread(fd, head, sizeof(head), 0);
      ::close(fd);
    }
    compression = CompressionFromMagic(head, got > 0 ? static_cast<size_t>(got) : 0);
  }
  switch (compression) {
    case Compression::kZstd: return std::unique_ptr<ByteSource>(new ZstdSource(std::move(file)));
    case Compression::kGzip: return std::unique_ptr<ByteSource>(new GzipSource(std::move(file)));
    default: return std::unique_ptr<ByteSource>(std::move(file));
  }
}

}  // namespace tidemark
