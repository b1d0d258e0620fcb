#include "common/env.h"

#include <dirent.h>
#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <algorithm>
#include <condition_variable>
#include <mutex>
#include <thread>
#include <filesystem>
#include <system_error>
#include <vector>

namespace tidemark {
namespace {

Status PosixError(const std::string& context, int err) {
  std::string msg = context + ": " + std::strerror(err);
  return Status::IOError(std::move(msg));
}

class PosixWritableFile final : public WritableFile {
 public:
  PosixWritableFile(std::string path, int fd) : path_(std::move(path)), fd_(fd) {}
  ~PosixWritableFile() override {
    if (fd_ >= 0) ::close(fd_);
  }
  Status Append(std::string_view data) override {
    const char* p = data.data();
    size_t left = data.size();
    while (left > 0) {
      const ssize_t n = ::write(fd_, p, left);
      if (n < 0) {
        if (errno == EINTR) continue;
        return PosixError(path_ + "@" + std::to_string(size_) + ": write", errno);
      }
      p += n;
      left -= static_cast<size_t>(n);
      size_ += static_cast<uint64_t>(n);
    }
    return Status::Ok();
  }
  Status Sync() override {
    if (::fdatasync(fd_) != 0) return PosixError(path_ + ": fsync", errno);
    return Status::Ok();
  }
  Status StartWriteback() override {
#ifdef SYNC_FILE_RANGE_WRITE
    if (::sync_file_range(fd_, 0, 0, SYNC_FILE_RANGE_WRITE) != 0 && errno != ENOSYS) {
      return PosixError(path_ + ": sync_file_range", errno);
    }
#endif
    return Status::Ok();
  }
  Status Close() override {
    if (fd_ < 0) return Status::Ok();
    const int rc = ::close(fd_);
    fd_ = -1;
    if (rc != 0) return PosixError(path_ + ": close", errno);
    return Status::Ok();
  }
  uint64_t size() const override { return size_; }

 private:
  std::string path_;
  int fd_;
  uint64_t size_ = 0;
};

// 4 MiB page-aligned staging buffers for O_DIRECT files, mmap'ed and kept in a small
// process-wide free list. Not from malloc: allocated and freed by short-lived writer
// threads, 4 MiB aligned blocks fragmented malloc's arenas (a spilling index build's
// peak RSS rose by 0.5 GB); not mmap'ed per file either: the page faults of fresh
// buffers for each of 256 shard files cost more CPU than the writes.
class StagingBuffers {
 public:
  static constexpr size_t kBytes = size_t{4} << 20;
  static constexpr size_t kKeep = 8;  // at most 32 MiB kept between files
  static char* Get() {
    {
      std::lock_guard<std::mutex> lock(mu());
      if (!pool().empty()) {
        char* b = pool().back();
        pool().pop_back();
        return b;
      }
    }
    void* p = ::mmap(nullptr, kBytes, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    return p == MAP_FAILED ? nullptr : static_cast<char*>(p);
  }
  static void Put(char* b) {
    if (b == nullptr) return;
    {
      std::lock_guard<std::mutex> lock(mu());
      if (pool().size() < kKeep) {
        pool().push_back(b);
        return;
      }
    }
    ::munmap(b, kBytes);
  }

 private:
  // Never destroyed: files may be closed during static destruction.
  static std::mutex& mu() {
    static std::mutex* m = new std::mutex;
    return *m;
  }
  static std::vector<char*>& pool() {
    static std::vector<char*>* v = new std::vector<char*>;
    return *v;
  }
};

// O_DIRECT writes: data is staged in an aligned buffer and written in whole
// multiples of kAlign at aligned offsets, by a helper thread while the caller fills
// the other buffer (write-behind); Sync and Close write the zero-padded tail block
// and truncate the file to its real size. If the kernel refuses an O_DIRECT write
// (EINVAL: a filesystem without direct I/O, or a short write that broke alignment),
// the file switches to ordinary writes and the write is retried.
class DirectWritableFile final : public WritableFile {
 public:
  static constexpr size_t kAlign = 4096;
  static constexpr size_t kBuffer = StagingBuffers::kBytes;

  DirectWritableFile(std::string path, int fd) : path_(std::move(path)), fd_(fd) {
    for (char*& b : buf_) b = StagingBuffers::Get();
  }
  ~DirectWritableFile() override {
    StopHelper();
    if (fd_ >= 0) ::close(fd_);
    for (char* b : buf_) StagingBuffers::Put(b);
  }
  Status Append(std::string_view data) override {
    if (buf_[0] == nullptr || buf_[1] == nullptr) return Status::IOError(path_ + ": out of memory");
    while (!data.empty()) {
      const size_t n = std::min(data.size(), kBuffer - used_);
      std::memcpy(buf_[active_] + used_, data.data(), n);
      used_ += n;
      data.remove_prefix(n);
      if (used_ == kBuffer) TM_RETURN_IF_ERROR(Submit());
    }
    return Status::Ok();
  }
  Status Sync() override {
    TM_RETURN_IF_ERROR(FlushTail());
    if (::fdatasync(fd_) != 0) return PosixError(path_ + ": fsync", errno);
    return Status::Ok();
  }
  Status Close() override {
    if (fd_ < 0) return Status::Ok();
    Status st = FlushTail();
    StopHelper();
    const int rc = ::close(fd_);
    fd_ = -1;
    if (!st.ok()) return st;
    if (rc != 0) return PosixError(path_ + ": close", errno);
    return Status::Ok();
  }
  uint64_t size() const override { return written_ + used_; }

 private:
  // pwrite of an aligned buffer at an aligned offset; on EINVAL, once, without O_DIRECT.
  Status WriteAt(const char* p, size_t len, uint64_t off) {
    bool retried = false;
    while (len > 0) {
      const ssize_t n = ::pwrite(fd_, p, len, static_cast<off_t>(off));
      if (n < 0) {
        if (errno == EINTR) continue;
        if (errno == EINVAL && !retried) {
          retried = true;
          const int flags = ::fcntl(fd_, F_GETFL);
          if (flags >= 0 && ::fcntl(fd_, F_SETFL, flags & ~O_DIRECT) == 0) continue;
          errno = EINVAL;
        }
        return PosixError(path_ + "@" + std::to_string(off) + ": write", errno);
      }
      p += n;
      len -= static_cast<size_t>(n);
      off += static_cast<uint64_t>(n);
    }
    return Status::Ok();
  }
  // Hands the full active buffer to the helper (after the previous one is written).
  Status Submit() {
    TM_RETURN_IF_ERROR(WaitForHelper());
    if (!helper_.joinable()) helper_ = std::thread([this] { HelperLoop(); });
    {
      std::lock_guard<std::mutex> lock(mu_);
      job_buf_ = buf_[active_];
      job_len_ = used_;
      job_off_ = written_;
      job_pending_ = true;
    }
    cv_.notify_all();
    written_ += used_;
    used_ = 0;
    active_ ^= 1;
    return Status::Ok();
  }
  Status WaitForHelper() {
    std::unique_lock<std::mutex> lock(mu_);
    cv_.wait(lock, [&] { return !job_pending_; });
    return job_status_;
  }
  void HelperLoop() {
    std::unique_lock<std::mutex> lock(mu_);
    while (true) {
      cv_.wait(lock, [&] { return job_pending_ || stop_; });
      if (!job_pending_) return;
      const char* p = job_buf_;
      const size_t len = job_len_;
      const uint64_t off = job_off_;
      lock.unlock();
      Status st = WriteAt(p, len, off);
      lock.lock();
      if (!st.ok() && job_status_.ok()) job_status_ = st;
      job_pending_ = false;
      cv_.notify_all();
    }
  }
  void StopHelper() {
    if (!helper_.joinable()) return;
    {
      std::unique_lock<std::mutex> lock(mu_);
      cv_.wait(lock, [&] { return !job_pending_; });
      stop_ = true;
    }
    cv_.notify_all();
    helper_.join();
  }
  // Writes what is staged: the whole blocks and the zero-padded partial last block,
  // then truncates to the real size. Staged bytes stay in the buffer (a later Append
  // continues after them, rewriting the padded block).
  Status FlushTail() {
    TM_RETURN_IF_ERROR(WaitForHelper());
    if (used_ == 0) return Status::Ok();
    const size_t padded = (used_ + kAlign - 1) / kAlign * kAlign;
    std::memset(buf_[active_] + used_, 0, padded - used_);
    TM_RETURN_IF_ERROR(WriteAt(buf_[active_], padded, written_));
    const uint64_t end = written_ + used_;
    if (::ftruncate(fd_, static_cast<off_t>(end)) != 0) return PosixError(path_ + ": truncate", errno);
    // Keep the bytes of the last partial block staged; drop the whole blocks.
    const size_t whole = used_ / kAlign * kAlign;
    std::memmove(buf_[active_], buf_[active_] + whole, used_ - whole);
    written_ += whole;
    used_ -= whole;
    return Status::Ok();
  }

  std::string path_;
  int fd_;
  char* buf_[2] = {nullptr, nullptr};
  int active_ = 0;
  size_t used_ = 0;       // bytes staged in buf_[active_]
  uint64_t written_ = 0;  // file offset of buf_[active_][0] (a multiple of kAlign)
  std::thread helper_;
  std::mutex mu_;
  std::condition_variable cv_;
  bool job_pending_ = false, stop_ = false;
  const char* job_buf_ = nullptr;
  size_t job_len_ = 0;
  uint64_t job_off_ = 0;
  Status job_status_;
};

}  // namespace

Env* Env::Default() {
  static Env* env = new Env();
  return env;
}

Result<std::unique_ptr<WritableFile>> Env::NewWritableFile(const std::string& path,
                                                          FileOptions options) {
  if (options.direct) {
    const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC | O_DIRECT, 0644);
    if (fd >= 0) return std::unique_ptr<WritableFile>(new DirectWritableFile(path, fd));
    if (errno != EINVAL) return PosixError(path + ": cannot create", errno);
    // The filesystem has no O_DIRECT: write through the page cache.
  }
  const int fd = ::open(path.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) return PosixError(path + ": cannot create", errno);
  return std::unique_ptr<WritableFile>(new PosixWritableFile(path, fd));
}

Status Env::Rename(const std::string& from, const std::string& to) {
  if (::rename(from.c_str(), to.c_str()) != 0) {
    return PosixError("rename " + from + " -> " + to, errno);
  }
  return Status::Ok();
}

Status Env::RemoveFile(const std::string& path) {
  if (::unlink(path.c_str()) != 0 && errno != ENOENT) return PosixError(path + ": remove", errno);
  return Status::Ok();
}

Status Env::RemoveTree(const std::string& path) {
  std::error_code ec;
  std::filesystem::remove_all(path, ec);
  if (ec) return Status::IOError(path + ": remove: " + ec.message());
  return Status::Ok();
}

Status Env::CreateDirs(const std::string& path) {
  std::error_code ec;
  std::filesystem::create_directories(path, ec);
  if (ec) return Status::IOError(path + ": cannot create directory: " + ec.message());
  return Status::Ok();
}

namespace {
// Opens `path` read-only with `flags`, calls sync(fd), closes it.
Status SyncPath(const std::string& path, int flags, int (*sync)(int), const char* what) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC | flags);
  if (fd < 0) return PosixError(path + (flags & O_DIRECTORY ? ": open directory" : ": open"), errno);
  const int rc = sync(fd);
  const int err = errno;
  ::close(fd);
  if (rc != 0) return PosixError(path + ": " + what, err);
  return Status::Ok();
}

// A file of NoSyncEnv: writes go through, flushes do not.
class NoSyncFile final : public WritableFile {
 public:
  explicit NoSyncFile(std::unique_ptr<WritableFile> f) : f_(std::move(f)) {}
  Status Append(std::string_view data) override { return f_->Append(data); }
  Status Sync() override { return Status::Ok(); }
  Status StartWriteback() override { return Status::Ok(); }
  Status Close() override { return f_->Close(); }
  uint64_t size() const override { return f_->size(); }

 private:
  std::unique_ptr<WritableFile> f_;
};

}  // namespace

Result<std::unique_ptr<WritableFile>> NoSyncEnv::NewWritableFile(const std::string& path,
                                                                 FileOptions options) {
  TM_ASSIGN_OR_RETURN(auto f, base_->NewWritableFile(path, options));
  return std::unique_ptr<WritableFile>(new NoSyncFile(std::move(f)));
}

Status Env::SyncDir(const std::string& path) {
  return SyncPath(path, O_DIRECTORY, ::fsync, "fsync directory");
}

Status Env::SyncFilesystem(const std::string& path) {
  return SyncPath(path, 0, ::syncfs, "syncfs");
}

bool Env::FileExists(const std::string& path) {
  struct stat st;
  return ::stat(path.c_str(), &st) == 0;
}

Result<std::vector<std::string>> Env::ListDir(const std::string& path) {
  DIR* d = ::opendir(path.c_str());
  if (d == nullptr) return PosixError(path + ": cannot list directory", errno);
  std::vector<std::string> names;
  while (const dirent* e = ::readdir(d)) {
    const std::string name = e->d_name;
    if (name != "." && name != "..") names.push_back(name);
  }
  ::closedir(d);
  return names;
}

Result<std::string> ReadFileToString(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return PosixError(path + ": cannot open", errno);
  std::string out;
  char buf[1 << 16];
  while (true) {
    const ssize_t n = ::read(fd, buf, sizeof(buf));
    if (n < 0) {
      if (errno == EINTR) continue;
      const int err = errno;
      ::close(fd);
      return PosixError(path + "@" + std::to_string(out.size()) + ": read", err);
    }
    if (n == 0) break;
    out.append(buf, static_cast<size_t>(n));
  }
  ::close(fd);
  return out;
}

AtomicFileWriter::AtomicFileWriter(std::string path, Env* env, FileOptions options)
    : path_(std::move(path)),
      temp_path_(path_ + ".tmp." + std::to_string(::getpid())),
      env_(env),
      options_(options) {}

AtomicFileWriter::~AtomicFileWriter() {
  if (!done_) Abandon();
}

Status AtomicFileWriter::Open() {
  auto file = env_->NewWritableFile(temp_path_, options_);
  if (!file.ok()) {
    status_ = file.status();
    return status_;
  }
  file_ = std::move(file).value();
  return Status::Ok();
}

Status AtomicFileWriter::Append(std::string_view data) {
  if (!status_.ok()) return status_;
  assert(file_ && "AtomicFileWriter::Open must succeed before Append");
  status_ = file_->Append(data);
  return status_;
}

uint64_t AtomicFileWriter::size() const { return file_ ? file_->size() : 0; }

Status AtomicFileWriter::Commit() {
  if (!status_.ok()) {
    Abandon();
    return status_;
  }
  assert(file_);
  Status s = file_->Sync();
  if (s.ok()) s = file_->Close();
  if (s.ok()) s = env_->Rename(temp_path_, path_);
  if (s.ok()) s = env_->SyncDir(DirName(path_));
  if (!s.ok()) {
    status_ = s;
    Abandon();
    return s;
  }
  file_.reset();
  done_ = true;
  return Status::Ok();
}

void AtomicFileWriter::Abandon() {
  if (done_) return;
  if (file_) {
    (void)file_->Close();
    file_.reset();
  }
  (void)env_->RemoveFile(temp_path_);
  done_ = true;
}

Status WriteFileAtomically(const std::string& path, std::string_view contents, Env* env) {
  AtomicFileWriter w(path, env);
  TM_RETURN_IF_ERROR(w.Open());
  TM_RETURN_IF_ERROR(w.Append(contents));
  return w.Commit();
}

std::string DirName(const std::string& path) {
  const size_t slash = path.find_last_of('/');
  if (slash == std::string::npos) return ".";
  if (slash == 0) return "/";
  return path.substr(0, slash);
}

std::string BaseName(const std::string& path) {
  const size_t slash = path.find_last_of('/');
  return slash == std::string::npos ? path : path.substr(slash + 1);
}

std::string JoinPath(std::string_view a, std::string_view b) {
  if (a.empty()) return std::string(b);
  std::string out(a);
  if (out.back() != '/') out += '/';
  out += b;
  return out;
}

}  // namespace tidemark
