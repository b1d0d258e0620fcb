// An Env for fault-injection tests: writes fail once `budget` bytes have gone out
// (disk full), renames onto a path ending in `fail_rename` fail, and with
// `fail_syncfs` so does making a filesystem durable (an I/O error at the final flush).
#ifndef TIDEMARK_TESTS_FAULTY_ENV_H_
#define TIDEMARK_TESTS_FAULTY_ENV_H_

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "common/env.h"

namespace tidemark::testing {

class FaultyEnv : public Env {
 public:
  uint64_t budget = ~uint64_t{0};
  std::string fail_rename;  // a suffix of the rename target; empty: none fail
  bool fail_syncfs = false;
  int syncfs_calls = 0;
  int syncdir_calls = 0;
  int file_sync_calls = 0;  // WritableFile::Sync

  Result<std::unique_ptr<WritableFile>> NewWritableFile(const std::string& path,
                                                        FileOptions options) override {
    TM_ASSIGN_OR_RETURN(auto f, Env::NewWritableFile(path, options));
    return std::unique_ptr<WritableFile>(new File(std::move(f), this));
  }
  Status Rename(const std::string& from, const std::string& to) override {
    if (!fail_rename.empty() && to.size() >= fail_rename.size() &&
        to.compare(to.size() - fail_rename.size(), fail_rename.size(), fail_rename) == 0) {
      return Status::IOError("rename " + from + ": injected failure");
    }
    return Env::Rename(from, to);
  }
  Status SyncDir(const std::string& path) override {
    ++syncdir_calls;
    return Env::SyncDir(path);
  }
  Status SyncFilesystem(const std::string& path) override {
    ++syncfs_calls;
    if (fail_syncfs) return Status::IOError(path + ": syncfs: Input/output error (injected)");
    return Env::SyncFilesystem(path);
  }

 private:
  class File : public WritableFile {
   public:
    File(std::unique_ptr<WritableFile> f, FaultyEnv* env) : f_(std::move(f)), env_(env) {}
    Status Append(std::string_view data) override {
      if (data.size() > env_->budget) return Status::IOError("write: No space left on device");
      env_->budget -= data.size();
      return f_->Append(data);
    }
    Status Sync() override {
      ++env_->file_sync_calls;
      return f_->Sync();
    }
    Status Close() override { return f_->Close(); }
    uint64_t size() const override { return f_->size(); }

   private:
    std::unique_ptr<WritableFile> f_;
    FaultyEnv* env_;
  };
};

}  // namespace tidemark::testing

#endif  // TIDEMARK_TESTS_FAULTY_ENV_H_
