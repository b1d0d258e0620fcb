// DetectFormat, ValidateReadOptions and ExpandInputs.
#include <fcntl.h>
#include <unistd.h>

#include <algorithm>
#include <cctype>
#include <cerrno>
#include <cstring>
#include <filesystem>
#include <system_error>

#include "common/env.h"
#include "read/byte_source.h"
#include "read/read_util.h"
#include "tidemark/reader.h"

namespace tidemark {
namespace {

bool EndsWith(std::string_view s, std::string_view suffix) {
  return s.size() >= suffix.size() && s.substr(s.size() - suffix.size()) == suffix;
}

std::string Lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

// Format named by the file extension (after any compression extension), or kAuto.
InputFormat FormatFromName(std::string_view name) {
  if (EndsWith(name, ".jsonl") || EndsWith(name, ".ndjson")) return InputFormat::kJsonl;
  if (EndsWith(name, ".json")) return InputFormat::kJsonArray;
  if (EndsWith(name, ".csv")) return InputFormat::kCsv;
  if (EndsWith(name, ".txt") || EndsWith(name, ".text")) return InputFormat::kText;
  return InputFormat::kAuto;
}

Status ValidatePointer(const std::string& p, std::string_view what) {
  for (size_t i = 0; i < p.size(); ++i) {
    if (p[i] != '~') continue;
    if (i + 1 >= p.size() || (p[i + 1] != '0' && p[i + 1] != '1')) {
      return Status::InvalidArgument(std::string(what) + " \"" + p +
                                     "\": bad JSON Pointer escape: '~' must be followed by "
                                     "0 or 1 (RFC 6901 section 3)");
    }
  }
  return Status::Ok();
}

}  // namespace

std::string_view InputFormatName(InputFormat format) {
  switch (format) {
    case InputFormat::kAuto: return "auto";
    case InputFormat::kJsonl: return "jsonl";
    case InputFormat::kJsonArray: return "json";
    case InputFormat::kCsv: return "csv";
    case InputFormat::kText: return "text";
  }
  return "unknown";
}

Status ValidateReadOptions(const ReadOptions& options) {
  if (options.fields.empty()) return Status::InvalidArgument("no text field given");
  for (const std::string& f : options.fields) {
    if (f.empty()) return Status::InvalidArgument("empty text field name");
    if (f[0] == '/') TM_RETURN_IF_ERROR(ValidatePointer(f, "text field"));
  }
  if (!options.id_field.empty() && options.id_field[0] == '/') {
    TM_RETURN_IF_ERROR(ValidatePointer(options.id_field, "id field"));
  }
  if (options.max_record_bytes == 0) {
    return Status::InvalidArgument("max_record_bytes must be positive");
  }
  return Status::Ok();
}

bool IsLineOriented(const DetectedFormat& format, const ReadOptions& options) {
  return IsLineFormat(format.format, options);
}

Result<DetectedFormat> DetectFormat(const std::string& path, const ReadOptions& options) {
  std::string name = Lower(BaseName(path));
  DetectedFormat out;
  Compression by_name = Compression::kAuto;
  if (EndsWith(name, ".zst") || EndsWith(name, ".zstd")) {
    by_name = Compression::kZstd;
    name.resize(name.rfind('.'));
  } else if (EndsWith(name, ".gz")) {
    by_name = Compression::kGzip;
    name.resize(name.rfind('.'));
  }
  Compression compression = options.compression != Compression::kAuto ? options.compression
                                                                       : by_name;
  if (compression == Compression::kAuto) {
    // No compression extension: the magic bytes decide (a compressed file may be
    // named plainly).
    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
      const int err = errno;
      std::string m = path + ": cannot open: " + std::strerror(err);
      return err == ENOENT ? Status::NotFound(std::move(m)) : Status::IOError(std::move(m));
    }
    unsigned char head[4];
    const ssize_t got = ::pread(fd, head, sizeof(head), 0);
    ::close(fd);
    compression = CompressionFromMagic(head, got > 0 ? static_cast<size_t>(got) : 0);
  }
  out.compression = compression;

  InputFormat format = options.format != InputFormat::kAuto ? options.format
                                                            : FormatFromName(name);
  if (format == InputFormat::kAuto) {
    // Unknown extension: look at the first non-blank byte of the decoded content.
    TM_ASSIGN_OR_RETURN(auto source, OpenByteSource(path, compression));
    char buf[4096];
    TM_ASSIGN_OR_RETURN(const size_t n, ReadFully(source.get(), buf, sizeof(buf)));
    std::string_view head(buf, n);
    if (head.substr(0, 3) == "\xEF\xBB\xBF") head.remove_prefix(3);
    const size_t first = head.find_first_not_of(" \t\r\n");
    if (first == std::string_view::npos) {
      format = InputFormat::kJsonl;  // empty: zero records in any format
    } else if (head[first] == '{') {
      format = InputFormat::kJsonl;
    } else if (head[first] == '[') {
      format = InputFormat::kJsonArray;
    } else {
      return Status::InvalidArgument(
          path + ": cannot tell the input format from the name or the content; name it "
                 ".jsonl, .json, .csv or .txt, or give the format explicitly");
    }
  }
  out.format = format;
  return out;
}

Result<std::vector<std::string>> ExpandInputs(const std::vector<std::string>& args) {
  namespace fs = std::filesystem;
  std::vector<std::string> out;
  // Expands one path (file or directory) into `out`.
  auto expand_path = [&out](const std::string& path, const std::string& origin) -> Status {
    std::error_code ec;
    const fs::file_status st = fs::status(path, ec);
    if (ec || !fs::exists(st)) {
      return Status::NotFound(origin + path + ": no such file or directory");
    }
    if (!fs::is_directory(st)) {
      out.push_back(fs::path(path).lexically_normal().string());
      return Status::Ok();
    }
    fs::recursive_directory_iterator it(path, fs::directory_options::follow_directory_symlink,
                                        ec);
    if (ec) return Status::IOError(path + ": cannot list directory: " + ec.message());
    for (const fs::recursive_directory_iterator end; it != end; it.increment(ec)) {
      if (ec) return Status::IOError(path + ": cannot list directory: " + ec.message());
      const std::string base = it->path().filename().string();
      if (!base.empty() && base[0] == '.') {
        if (it->is_directory(ec)) it.disable_recursion_pending();
        continue;
      }
      if (it->is_directory(ec)) continue;
      if (!it->is_regular_file(ec)) continue;
      out.push_back(it->path().lexically_normal().string());
    }
    if (ec) return Status::IOError(path + ": cannot list directory: " + ec.message());
    return Status::Ok();
  };

  for (const std::string& arg : args) {
    if (arg.size() > 1 && arg[0] == '@') {
      const std::string list = arg.substr(1);
      std::error_code ec;
      if (!fs::exists(list, ec)) return Status::NotFound(list + ": list file not found");
      auto contents = ReadFileToString(list);
      if (!contents.ok()) return contents.status();
      const std::string dir = DirName(list);
      size_t line_no = 0;
      size_t pos = 0;
      const std::string& text = *contents;
      while (pos < text.size()) {
        size_t nl = text.find('\n', pos);
        if (nl == std::string::npos) nl = text.size();
        std::string line = text.substr(pos, nl - pos);
        pos = nl + 1;
        ++line_no;
        while (!line.empty() && (line.back() == '\r' || line.back() == ' ' ||
                                 line.back() == '\t')) {
          line.pop_back();
        }
        const size_t start = line.find_first_not_of(" \t");
        if (start == std::string::npos || line[start] == '#') continue;
        line = line.substr(start);
        if (line[0] != '/') line = JoinPath(dir, line);
        TM_RETURN_IF_ERROR(expand_path(line, list + ":" + std::to_string(line_no) + ": "));
      }
      continue;
    }
    TM_RETURN_IF_ERROR(expand_path(arg, ""));
  }
  std::sort(out.begin(), out.end());
  out.erase(std::unique(out.begin(), out.end()), out.end());
  return out;
}

}  // namespace tidemark
