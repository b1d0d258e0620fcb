// CSV reader (RFC 4180): a header row names the columns; fields may be quoted with
// '"', a quote inside a quoted field is written twice, and quoted fields may hold
// commas and line breaks. Rows end with CRLF or LF. A row with the wrong number of
// fields, a stray quote in an unquoted field, text after a closing quote or a
// quoted field that never closes is a kBadCsvRow skip. Memory is bounded by
// max_record_bytes: a longer row is dropped (kLineTooLong) while still being
// scanned to its end.
#include <unordered_map>
#include <vector>

#include "common/text_util.h"
#include "read/byte_source.h"
#include "read/read_util.h"
#include "tidemark/reader.h"

namespace tidemark {
namespace {

constexpr std::string_view kBom = "\xEF\xBB\xBF";

class CsvReader final : public RecordReader {
 public:
  CsvReader(std::string path, std::unique_ptr<ByteSource> source, const ReadOptions& options)
      : path_(std::move(path)), source_(std::move(source)), options_(options),
        chunk_(kDiskReadBytes) {}

  // Reads the header and maps the requested columns.
  Status Init() {
    Row row;
    while (true) {
      TM_ASSIGN_OR_RETURN(const bool got, ReadRow(&row));
      if (!got) {
        empty_ = true;  // no header: an empty file, zero records
        return Status::Ok();
      }
      if (!row.blank) break;
    }
    if (!row.problem.empty()) {
      return Status::BadInput(SkipMessage(WhereLine(path_, row.line),
                                          "bad CSV header: " + row.problem, RowExcerpt(row)));
    }
    std::unordered_map<std::string, size_t> by_name;
    std::string names;
    for (size_t i = 0; i < row.ends.size(); ++i) {
      const std::string name(FieldOf(row, i));
      by_name.emplace(name, i);
      if (i > 0) names += ", ";
      names += name;
    }
    columns_ = row.ends.size();
    auto find = [&](const std::string& name, size_t* index) -> Status {
      const auto it = by_name.find(name);
      if (it != by_name.end()) {
        *index = it->second;
        return Status::Ok();
      }
      if (options_.allow_missing_fields) {
        *index = kNoColumn;
        return Status::Ok();
      }
      return Status::BadInput(WhereLine(path_, row.line) + ": no column \"" + name +
                              "\" in the CSV header (columns: " + ClipExcerpt(names, 200) +
                              ")");
    };
    field_columns_.resize(options_.fields.size());
    for (size_t i = 0; i < options_.fields.size(); ++i) {
      TM_RETURN_IF_ERROR(find(options_.fields[i], &field_columns_[i]));
    }
    if (!options_.id_field.empty()) TM_RETURN_IF_ERROR(find(options_.id_field, &id_column_));
    return Status::Ok();
  }

  Result<bool> Next(Record* record) override {
    if (empty_) return false;
    while (true) {
      TM_ASSIGN_OR_RETURN(const bool got, ReadRow(&row_));
      if (!got) return false;
      ++record_number_;
      const std::string where = WhereLine(path_, row_.line);
      if (row_.blank) {
        TM_RETURN_IF_ERROR(
            NoteSkip(options_, SkipReason::kEmptyLine, where + ": empty line", &skips_));
        continue;
      }
      if (row_.too_long) {
        TM_RETURN_IF_ERROR(NoteSkip(options_, SkipReason::kLineTooLong,
                                    SkipMessage(where,
                                                "CSV row too long (limit " +
                                                    std::to_string(options_.max_record_bytes) +
                                                    " bytes)",
                                                RowExcerpt(row_)),
                                    &skips_));
        continue;
      }
      if (row_.problem.empty() && row_.ends.size() != columns_) {
        row_.problem = "expected " + std::to_string(columns_) + " fields, got " +
                       std::to_string(row_.ends.size());
      }
      if (!row_.problem.empty()) {
        TM_RETURN_IF_ERROR(NoteSkip(options_, SkipReason::kBadCsvRow,
                                    SkipMessage(where, "bad CSV row: " + row_.problem, RowExcerpt(row_)),
                                    &skips_));
        continue;
      }
      record->fields.resize(field_columns_.size());
      for (size_t i = 0; i < field_columns_.size(); ++i) {
        record->fields[i] =
            field_columns_[i] == kNoColumn ? std::string_view() : FieldOf(row_, field_columns_[i]);
      }
      if (record->fields.size() == 1) {
        record->text = record->fields[0];
      } else {
        text_.clear();
        for (size_t i = 0; i < record->fields.size(); ++i) {
          if (i > 0) text_ += options_.field_joiner;
          text_ += record->fields[i];
        }
        record->text = text_;
      }
      record->id = id_column_ == kNoColumn ? std::to_string(record_number_)
                                           : std::string(FieldOf(row_, id_column_));
      record->path = &path_;
      record->line = row_.line;
      record->byte_offset = row_.offset;
      record->record_number = record_number_;
      if (!IsValidUtf8(record->text)) {
        TM_RETURN_IF_ERROR(NoteSkip(options_, SkipReason::kInvalidUtf8,
                                    SkipMessage(where, "invalid UTF-8", record->text), &skips_));
      }
      return true;
    }
  }

  const SkipStats& skips() const override { return skips_; }
  uint64_t disk_bytes_read() const override { return source_->disk_bytes_read(); }
  std::optional<uint64_t> disk_checksum() const override { return source_->disk_checksum(); }

 private:
  static constexpr size_t kNoColumn = static_cast<size_t>(-1);

  struct Row {
    std::string buf;           // field contents, unescaped, back to back
    std::vector<size_t> ends;  // end of each field in buf
    std::string problem;       // why the row is malformed, empty if fine
    bool blank = false;
    bool too_long = false;
    uint64_t line = 0;
    uint64_t offset = 0;
  };

  // The row's fields joined with ',' again (unescaped), for messages.
  static std::string RowExcerpt(const Row& row) {
    std::string out;
    for (size_t i = 0; i < row.ends.size() && out.size() < 100; ++i) {
      if (i > 0) out += ',';
      out += FieldOf(row, i).substr(0, 100);
    }
    return out;
  }

  static std::string_view FieldOf(const Row& row, size_t i) {
    const size_t begin = i == 0 ? 0 : row.ends[i - 1];
    return std::string_view(row.buf).substr(begin, row.ends[i] - begin);
  }

  // Next byte, or -1 at the end of input.
  Result<int> Get() {
    if (pos_ == len_) {
      if (eof_) return -1;
      TM_ASSIGN_OR_RETURN(len_, ReadFully(source_.get(), chunk_.data(), chunk_.size()));
      pos_ = 0;
      if (len_ == 0) {
        eof_ = true;
        return -1;
      }
      if (at_start_) {
        at_start_ = false;
        if (len_ >= 3 && std::string_view(chunk_.data(), 3) == kBom) {
          pos_ = 3;
          offset_ = 3;
          return Get();
        }
      }
    }
    ++offset_;
    return static_cast<unsigned char>(chunk_[pos_++]);
  }
  Result<int> Peek() {
    if (pos_ == len_) {
      TM_ASSIGN_OR_RETURN(const int c, Get());
      if (c < 0) return -1;
      --pos_;
      --offset_;
      return c;
    }
    return static_cast<unsigned char>(chunk_[pos_]);
  }

  void Append(Row* row, char c) {
    if (row->buf.size() >= options_.max_record_bytes) {
      row->too_long = true;
      return;
    }
    row->buf.push_back(c);
  }

  // Reads one row (several lines when a quoted field holds line breaks). False at
  // the end of input.
  Result<bool> ReadRow(Row* row) {
    row->buf.clear();
    row->ends.clear();
    row->problem.clear();
    row->blank = false;
    row->too_long = false;
    row->line = line_;
    TM_ASSIGN_OR_RETURN(int c, Get());
    row->offset = offset_ - 1;
    if (c < 0) return false;
    enum class State { kFieldStart, kUnquoted, kQuoted, kAfterQuote };
    State state = State::kFieldStart;
    bool any = false;
    while (true) {
      if (c < 0) {
        if (state == State::kQuoted && row->problem.empty()) {
          row->problem = "quoted field not closed before the end of the file";
        }
        break;
      }
      if (c == '\n' && state != State::kQuoted) {
        ++line_;
        break;
      }
      if (c == '\r' && state != State::kQuoted) {
        TM_ASSIGN_OR_RETURN(const int d, Peek());
        if (d == '\n') {
          TM_ASSIGN_OR_RETURN(c, Get());
          ++line_;
          break;
        }
      }
      any = true;
      const char ch = static_cast<char>(c);
      switch (state) {
        case State::kFieldStart:
          if (ch == '"') {
            state = State::kQuoted;
          } else if (ch == ',') {
            row->ends.push_back(row->buf.size());
          } else {
            Append(row, ch);
            state = State::kUnquoted;
          }
          break;
        case State::kUnquoted:
          if (ch == ',') {
            row->ends.push_back(row->buf.size());
            state = State::kFieldStart;
          } else {
            if (ch == '"' && row->problem.empty()) {
              row->problem = "quote inside an unquoted field";
            }
            Append(row, ch);
          }
          break;
        case State::kQuoted:
          if (ch == '"') {
            TM_ASSIGN_OR_RETURN(const int d, Peek());
            if (d == '"') {
              TM_ASSIGN_OR_RETURN(c, Get());
              Append(row, '"');
            } else {
              state = State::kAfterQuote;
            }
          } else {
            if (ch == '\n') ++line_;
            Append(row, ch);
          }
          break;
        case State::kAfterQuote:
          if (ch == ',') {
            row->ends.push_back(row->buf.size());
            state = State::kFieldStart;
          } else {
            if (row->problem.empty()) row->problem = "text after a closing quote";
            Append(row, ch);
          }
          break;
      }
      TM_ASSIGN_OR_RETURN(c, Get());
    }
    if (!any) {
      row->blank = true;
      return true;
    }
    row->ends.push_back(row->buf.size());
    return true;
  }

  std::string path_;
  std::unique_ptr<ByteSource> source_;
  const ReadOptions options_;
  std::vector<char> chunk_;
  size_t pos_ = 0;
  size_t len_ = 0;
  bool eof_ = false;
  bool at_start_ = true;
  uint64_t offset_ = 0;  // uncompressed offset of the next byte Get returns
  uint64_t line_ = 1;
  bool empty_ = false;
  size_t columns_ = 0;
  std::vector<size_t> field_columns_;
  size_t id_column_ = kNoColumn;
  uint64_t record_number_ = 0;
  Row row_;
  std::string text_;
  SkipStats skips_;
};

}  // namespace

Result<std::unique_ptr<RecordReader>> OpenCsvReader(const std::string& path,
                                                    std::unique_ptr<ByteSource> source,
                                                    const ReadOptions& options) {
  auto reader = std::make_unique<CsvReader>(path, std::move(source), options);
  TM_RETURN_IF_ERROR(reader->Init());
  return std::unique_ptr<RecordReader>(std::move(reader));
}

}  // namespace tidemark
