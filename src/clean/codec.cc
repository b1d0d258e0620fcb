#include "clean/codec.h"

#include <zlib.h>
#include <zstd.h>

#include <cstring>

namespace tidemark {
namespace {

constexpr size_t kInChunk = 1 << 20;   // compress in 1 MiB pieces
constexpr size_t kOutChunk = 1 << 20;  // write to disk in 1 MiB pieces
constexpr size_t kDirectPiece = 64 << 10;  // uncompressed pieces this large skip in_

bool EndsWith(std::string_view s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.substr(s.size() - suffix.size()) == suffix;
}

}  // namespace

Compression CompressionForPath(const std::string& path) {
  if (EndsWith(path, ".zst") || EndsWith(path, ".zstd")) return Compression::kZstd;
  if (EndsWith(path, ".gz") || EndsWith(path, ".dz")) return Compression::kGzip;
  return Compression::kNone;
}

struct CompressedFileWriter::Codec {
  ZSTD_CCtx* zstd = nullptr;
  z_stream gz{};
  bool gz_open = false;
  ~Codec() {
    if (zstd != nullptr) ZSTD_freeCCtx(zstd);
    if (gz_open) deflateEnd(&gz);
  }
};

CompressedFileWriter::CompressedFileWriter(std::string path, Compression compression, int level,
                                           Env* env, FileOptions file_options)
    : file_(std::move(path), env, file_options), compression_(compression), level_(level) {
  if (level_ == 0) level_ = compression_ == Compression::kGzip ? 6 : 3;
}

CompressedFileWriter::~CompressedFileWriter() = default;

uint64_t CompressedFileWriter::bytes_out() const { return file_.size() + out_.size(); }

Status CompressedFileWriter::Open() {
  if (compression_ != Compression::kNone && compression_ != Compression::kZstd &&
      compression_ != Compression::kGzip) {
    return Status::InvalidArgument(file_.path() + ": output compression must be resolved");
  }
  codec_ = std::make_unique<Codec>();
  if (compression_ == Compression::kZstd) {
    codec_->zstd = ZSTD_createCCtx();
    if (codec_->zstd == nullptr) return Status::IOError("zstd: out of memory");
    // Single-threaded (nbWorkers 0, the default) so that the output is reproducible.
    const size_t rc = ZSTD_CCtx_setParameter(codec_->zstd, ZSTD_c_compressionLevel, level_);
    if (ZSTD_isError(rc)) {
      return Status::InvalidArgument("zstd level " + std::to_string(level_) + ": " +
                                     ZSTD_getErrorName(rc));
    }
    (void)ZSTD_CCtx_setParameter(codec_->zstd, ZSTD_c_checksumFlag, 1);
  } else if (compression_ == Compression::kGzip) {
    if (level_ < 1 || level_ > 9) {
      return Status::InvalidArgument("gzip level must be 1..9, got " + std::to_string(level_));
    }
    // windowBits 15 + 16: gzip wrapper with the default header (mtime 0, no name),
    // RFC 1952; memLevel 8 is zlib's default.
    if (deflateInit2(&codec_->gz, level_, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY) != Z_OK) {
      return Status::IOError("zlib: deflateInit2 failed");
    }
    codec_->gz_open = true;
  }
  status_ = file_.Open();
  return status_;
}

Status CompressedFileWriter::FlushOut() {
  if (!out_.empty()) {
    status_ = file_.Append(out_);
    out_.clear();
  }
  return status_;
}

Status CompressedFileWriter::Drain(bool finish) {
  if (compression_ == Compression::kNone) {
    if (!in_.empty()) status_ = file_.Append(in_);
    in_.clear();
    if (!status_.ok()) return status_;
  } else if (compression_ == Compression::kZstd) {
    ZSTD_inBuffer in{in_.data(), in_.size(), 0};
    const ZSTD_EndDirective mode = finish ? ZSTD_e_end : ZSTD_e_continue;
    std::string buf(ZSTD_CStreamOutSize(), '\0');
    while (true) {
      ZSTD_outBuffer out{buf.data(), buf.size(), 0};
      const size_t left = ZSTD_compressStream2(codec_->zstd, &out, &in, mode);
      if (ZSTD_isError(left)) {
        status_ = Status::IOError(file_.path() + ": zstd: " + ZSTD_getErrorName(left));
        return status_;
      }
      out_.append(buf.data(), out.pos);
      if (finish ? left == 0 : in.pos == in.size) break;
    }
    in_.clear();
  } else {
    z_stream& z = codec_->gz;
    z.next_in = reinterpret_cast<Bytef*>(in_.data());
    z.avail_in = static_cast<uInt>(in_.size());
    std::string buf(1 << 16, '\0');
    while (true) {
      z.next_out = reinterpret_cast<Bytef*>(buf.data());
      z.avail_out = static_cast<uInt>(buf.size());
      const int rc = deflate(&z, finish ? Z_FINISH : Z_NO_FLUSH);
      if (rc == Z_STREAM_ERROR) {
        status_ = Status::IOError(file_.path() + ": zlib deflate failed");
        return status_;
      }
      out_.append(buf.data(), buf.size() - z.avail_out);
      if (finish ? rc == Z_STREAM_END : (z.avail_in == 0 && z.avail_out != 0)) break;
    }
    in_.clear();
  }
  if (out_.size() >= kOutChunk || finish) return FlushOut();
  return status_;
}

Status CompressedFileWriter::Append(std::string_view data) {
  if (!status_.ok()) return status_;
  bytes_in_ += data.size();
  if (compression_ == Compression::kNone && data.size() >= kDirectPiece) {
    // Uncompressed pieces of some size go straight to the file, without the two
    // copies through in_ and out_ (the file stages or writes them itself).
    if (!in_.empty()) {
      status_ = file_.Append(in_);  // what is pending goes first
      in_.clear();
      if (!status_.ok()) return status_;
    }
    status_ = file_.Append(data);
    return status_;
  }
  in_.append(data);
  if (in_.size() >= kInChunk) return Drain(false);
  return Status::Ok();
}

Status CompressedFileWriter::Commit() {
  if (status_.ok()) (void)Drain(true);
  if (!status_.ok()) {
    file_.Abandon();
    return status_;
  }
  status_ = file_.Commit();
  return status_;
}

void CompressedFileWriter::Abandon() { file_.Abandon(); }

Result<std::string> ReadDecompressedFile(const std::string& path, Compression compression) {
  TM_ASSIGN_OR_RETURN(std::string raw, ReadFileToString(path));
  if (compression == Compression::kNone) return raw;
  std::string out;
  if (compression == Compression::kZstd) {
    ZSTD_DCtx* d = ZSTD_createDCtx();
    if (d == nullptr) return Status::IOError("zstd: out of memory");
    ZSTD_inBuffer in{raw.data(), raw.size(), 0};
    std::string buf(ZSTD_DStreamOutSize(), '\0');
    size_t last = 0;
    while (in.pos < in.size) {
      ZSTD_outBuffer o{buf.data(), buf.size(), 0};
      last = ZSTD_decompressStream(d, &o, &in);
      if (ZSTD_isError(last)) {
        const std::string msg = path + "@" + std::to_string(in.pos) + ": zstd: " +
                                ZSTD_getErrorName(last);
        ZSTD_freeDCtx(d);
        return Status::BadInput(msg);
      }
      out.append(buf.data(), o.pos);
      if (o.pos == 0 && in.pos == in.size) break;
    }
    // Flush what the decoder still holds.
    while (last != 0) {
      ZSTD_outBuffer o{buf.data(), buf.size(), 0};
      last = ZSTD_decompressStream(d, &o, &in);
      if (ZSTD_isError(last) || o.pos == 0) break;
      out.append(buf.data(), o.pos);
    }
    ZSTD_freeDCtx(d);
    if (last != 0) {
      return Status::BadInput(path + "@" + std::to_string(raw.size()) +
                              ": zstd stream ends before its frame is complete");
    }
    return out;
  }
  if (compression != Compression::kGzip) {
    return Status::InvalidArgument(path + ": compression must be resolved");
  }
  size_t pos = 0;
  std::string buf(1 << 16, '\0');
  while (pos < raw.size()) {  // one iteration per gzip member (RFC 1952 2.2)
    z_stream z{};
    if (inflateInit2(&z, 15 + 16) != Z_OK) return Status::IOError("zlib: inflateInit2 failed");
    z.next_in = reinterpret_cast<Bytef*>(raw.data() + pos);
    z.avail_in = static_cast<uInt>(raw.size() - pos);
    int rc = Z_OK;
    while (rc != Z_STREAM_END) {
      z.next_out = reinterpret_cast<Bytef*>(buf.data());
      z.avail_out = static_cast<uInt>(buf.size());
      rc = inflate(&z, Z_NO_FLUSH);
      out.append(buf.data(), buf.size() - z.avail_out);
      if (rc == Z_STREAM_END) break;
      if (rc != Z_OK || (z.avail_in == 0 && z.avail_out != 0)) {
        const size_t at = pos + (raw.size() - pos - z.avail_in);
        inflateEnd(&z);
        return Status::BadInput(path + "@" + std::to_string(at) +
                                (rc == Z_OK || rc == Z_BUF_ERROR
                                     ? std::string(": gzip stream ends before its member is complete")
                                     : std::string(": gzip: corrupt data")));
      }
    }
    pos = raw.size() - z.avail_in;
    inflateEnd(&z);
  }
  return out;
}

}  // namespace tidemark
