// Env: the thin seam through which tidemark makes the OS calls that write files
// (create, append, fsync, rename, remove, mkdir), so that tests can inject
// failures (disk full, a rename that fails mid-build) and check that no
// half-written output ever becomes visible.
//
// Thread safety: Env::Default() is thread-safe. A WritableFile is used by one
// thread at a time.
#ifndef TIDEMARK_SRC_COMMON_ENV_H_
#define TIDEMARK_SRC_COMMON_ENV_H_

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "tidemark/status.h"

namespace tidemark {

class WritableFile {
 public:
  virtual ~WritableFile() = default;
  virtual Status Append(std::string_view data) = 0;
  virtual Status Sync() = 0;
  /// Starts writing the file's dirty pages to disk without waiting (no-op where
  /// nothing is cached), so that a later Env::SyncFilesystem finds little left to do.
  virtual Status StartWriteback() { return Status::Ok(); }
  virtual Status Close() = 0;
  virtual uint64_t size() const = 0;
};

/// How a file is to be written.
struct FileOptions {
  /// Write around the page cache (O_DIRECT) where the filesystem allows it, else
  /// fall back to ordinary writes. For large outputs written once and not read back
  /// soon (index shards, cleaned corpus copies): it saves the kernel's copy into the page cache, which on a
  /// 2-core machine costs as much CPU as a third of the index build, and it does not
  /// evict the corpus from the cache. The bytes on disk are the same either way.
  bool direct = false;
};

class Env {
 public:
  virtual ~Env() = default;
  /// The process-wide POSIX implementation. Never deleted.
  static Env* Default();

  /// Creates or truncates `path` for writing.
  virtual Result<std::unique_ptr<WritableFile>> NewWritableFile(const std::string& path,
                                                                FileOptions options = {});
  virtual Status Rename(const std::string& from, const std::string& to);
  virtual Status RemoveFile(const std::string& path);
  /// Removes a directory tree; OK if it does not exist.
  virtual Status RemoveTree(const std::string& path);
  /// mkdir -p.
  virtual Status CreateDirs(const std::string& path);
  /// fsync on a directory, so a rename inside it survives a crash.
  virtual Status SyncDir(const std::string& path);
  /// Makes everything written so far on the filesystem holding `path` durable (Linux
  /// syncfs(2): file data, sizes and directory entries): one flush for many files
  /// instead of an fsync each, each of which is a journal commit and a cache flush.
  virtual Status SyncFilesystem(const std::string& path);
  virtual bool FileExists(const std::string& path);
  virtual Result<std::vector<std::string>> ListDir(const std::string& path);
};

/// An Env that forwards everything to `base` except the calls that make data durable
/// (WritableFile::Sync and StartWriteback, SyncDir, SyncFilesystem), which succeed
/// without doing anything. For outputs the user chose not to flush (`--no-sync`):
/// renames stay atomic, so a crash of the process still leaves old or new files,
/// never a mix; only a power failure or OS crash soon after can lose written data.
class NoSyncEnv final : public Env {
 public:
  /// REQUIRES: `base` outlives this Env.
  explicit NoSyncEnv(Env* base) : base_(base) {}
  Result<std::unique_ptr<WritableFile>> NewWritableFile(const std::string& path,
                                                        FileOptions options = {}) override;
  Status Rename(const std::string& from, const std::string& to) override {
    return base_->Rename(from, to);
  }
  Status RemoveFile(const std::string& path) override { return base_->RemoveFile(path); }
  Status RemoveTree(const std::string& path) override { return base_->RemoveTree(path); }
  Status CreateDirs(const std::string& path) override { return base_->CreateDirs(path); }
  Status SyncDir(const std::string&) override { return Status::Ok(); }
  Status SyncFilesystem(const std::string&) override { return Status::Ok(); }
  bool FileExists(const std::string& path) override { return base_->FileExists(path); }
  Result<std::vector<std::string>> ListDir(const std::string& path) override {
    return base_->ListDir(path);
  }

 private:
  Env* base_;
};

/// Reads a whole (small) file. Errors name the path.
Result<std::string> ReadFileToString(const std::string& path);

/// Writes `path` atomically: a temp file `<path>.tmp.<pid>` in the same directory is
/// written, fsync'ed and renamed over `path`; the directory is then fsync'ed. On any
/// failure (or if Commit is never called) the temp file is removed and `path` is
/// untouched.
class AtomicFileWriter {
 public:
  /// REQUIRES: `env` outlives the writer.
  explicit AtomicFileWriter(std::string path, Env* env = Env::Default(), FileOptions options = {});
  ~AtomicFileWriter();  // Abandons an uncommitted file.
  AtomicFileWriter(const AtomicFileWriter&) = delete;
  AtomicFileWriter& operator=(const AtomicFileWriter&) = delete;

  Status Open();
  Status Append(std::string_view data);
  uint64_t size() const;
  Status Commit();
  void Abandon();

  const std::string& path() const { return path_; }
  const std::string& temp_path() const { return temp_path_; }

 private:
  std::string path_;
  std::string temp_path_;
  Env* env_;
  FileOptions options_;
  std::unique_ptr<WritableFile> file_;
  Status status_;
  bool done_ = false;
};

/// Convenience: atomically replaces `path` with `contents`.
Status WriteFileAtomically(const std::string& path, std::string_view contents,
                           Env* env = Env::Default());

/// Directory part of a path ("." when there is none).
std::string DirName(const std::string& path);
/// Last component of a path.
std::string BaseName(const std::string& path);
/// a + "/" + b without doubling slashes.
std::string JoinPath(std::string_view a, std::string_view b);

}  // namespace tidemark

#endif  // TIDEMARK_SRC_COMMON_ENV_H_
