#include "clean/json_locate.h"

#include <simdjson.h>

#include "common/text_util.h"

namespace tidemark {
namespace {

namespace od = simdjson::ondemand;

int HexValue(char c) {
  if (c >= '0' && c <= '9') return c - '0';
  if (c >= 'a' && c <= 'f') return c - 'a' + 10;
  if (c >= 'A' && c <= 'F') return c - 'A' + 10;
  return -1;
}

bool ReadHex4(std::string_view s, size_t i, uint32_t* out) {
  if (i + 4 > s.size()) return false;
  uint32_t v = 0;
  for (size_t k = 0; k < 4; ++k) {
    const int h = HexValue(s[i + k]);
    if (h < 0) return false;
    v = v * 16 + static_cast<uint32_t>(h);
  }
  *out = v;
  return true;
}

void AppendUtf8(std::string* out, uint32_t cp) {
  if (cp < 0x80) {
    out->push_back(static_cast<char>(cp));
  } else if (cp < 0x800) {
    out->push_back(static_cast<char>(0xC0 | (cp >> 6)));
    out->push_back(static_cast<char>(0x80 | (cp & 0x3F)));
  } else if (cp < 0x10000) {
    out->push_back(static_cast<char>(0xE0 | (cp >> 12)));
    out->push_back(static_cast<char>(0x80 | ((cp >> 6) & 0x3F)));
    out->push_back(static_cast<char>(0x80 | (cp & 0x3F)));
  } else {
    out->push_back(static_cast<char>(0xF0 | (cp >> 18)));
    out->push_back(static_cast<char>(0x80 | ((cp >> 12) & 0x3F)));
    out->push_back(static_cast<char>(0x80 | ((cp >> 6) & 0x3F)));
    out->push_back(static_cast<char>(0x80 | (cp & 0x3F)));
  }
}

// Decodes one escape starting at token[i] == '\\'. Appends to *out (if not null)
// and returns the escape's length, or 0 when malformed.
size_t DecodeEscape(std::string_view token, size_t i, std::string* out) {
  if (i + 1 >= token.size()) return 0;
  char c = token[i + 1];
  char simple = 0;
  switch (c) {
    case '"': simple = '"'; break;
    case '\\': simple = '\\'; break;
    case '/': simple = '/'; break;
    case 'b': simple = '\b'; break;
    case 'f': simple = '\f'; break;
    case 'n': simple = '\n'; break;
    case 'r': simple = '\r'; break;
    case 't': simple = '\t'; break;
    case 'u': break;
    default: return 0;
  }
  if (simple != 0) {
    if (out != nullptr) out->push_back(simple);
    return 2;
  }
  uint32_t cp;
  if (!ReadHex4(token, i + 2, &cp)) return 0;
  size_t len = 6;
  if (cp >= 0xD800 && cp <= 0xDBFF) {
    uint32_t lo;
    if (i + 7 < token.size() && token[i + 6] == '\\' && token[i + 7] == 'u' &&
        ReadHex4(token, i + 8, &lo) && lo >= 0xDC00 && lo <= 0xDFFF) {
      cp = 0x10000 + ((cp - 0xD800) << 10) + (lo - 0xDC00);
      len = 12;
    } else {
      cp = 0xFFFD;
    }
  } else if (cp >= 0xDC00 && cp <= 0xDFFF) {
    cp = 0xFFFD;
  }
  if (out != nullptr) AppendUtf8(out, cp);
  return len;
}

// Decoded length of one escape (without materializing more than 4 bytes).
size_t EscapeDecodedLength(std::string_view token, size_t i, size_t* raw_len) {
  std::string tmp;
  *raw_len = DecodeEscape(token, i, &tmp);
  return tmp.size();
}

// End (one past the closing quote) of the string token starting at s[begin] == '"'.
size_t StringTokenEnd(std::string_view s, size_t begin) {
  size_t i = begin + 1;
  while (i < s.size()) {
    if (s[i] == '\\') {
      i += 2;
    } else if (s[i] == '"') {
      return i + 1;
    } else {
      ++i;
    }
  }
  return std::string_view::npos;
}

std::string FieldPointer(const std::string& field) {
  if (!field.empty() && field[0] == '/') return field;
  std::string p = "/";
  for (char c : field) {
    if (c == '~') {
      p += "~0";
    } else if (c == '/') {
      p += "~1";
    } else {
      p.push_back(c);
    }
  }
  return p;
}

}  // namespace

Status DecodeJsonString(std::string_view token, std::string* out) {
  out->clear();
  if (token.size() < 2 || token.front() != '"' || token.back() != '"') {
    return Status::BadInput("not a JSON string token: " + ClipExcerpt(token));
  }
  size_t i = 1;
  const size_t end = token.size() - 1;
  while (i < end) {
    const char c = token[i];
    if (c == '\\') {
      const size_t len = DecodeEscape(token, i, out);
      if (len == 0) return Status::BadInput("bad escape in JSON string: " + ClipExcerpt(token.substr(i)));
      i += len;
    } else {
      out->push_back(c);
      ++i;
    }
  }
  return Status::Ok();
}

size_t RawOffsetInJsonString(std::string_view token, size_t decoded_offset) {
  size_t i = 1, decoded = 0;
  const size_t end = token.size() >= 1 ? token.size() - 1 : 0;
  while (i < end && decoded < decoded_offset) {
    if (token[i] == '\\') {
      size_t raw_len;
      const size_t dlen = EscapeDecodedLength(token, i, &raw_len);
      if (raw_len == 0) return i;
      if (decoded + dlen > decoded_offset) return i;  // inside this escape's output
      decoded += dlen;
      i += raw_len;
    } else {
      ++decoded;
      ++i;
    }
  }
  return i;
}

struct JsonFieldLocator::Impl {
  ReadOptions options;
  std::vector<std::string> pointers;
  od::parser parser;
  std::string buf;
};

JsonFieldLocator::JsonFieldLocator(const ReadOptions& options) : impl_(std::make_unique<Impl>()) {
  impl_->options = options;
  for (const std::string& f : options.fields) impl_->pointers.push_back(FieldPointer(f));
}

JsonFieldLocator::~JsonFieldLocator() = default;

Status JsonFieldLocator::Locate(std::string_view line, LocatedText* out) {
  out->pieces.clear();
  out->text.clear();
  Impl& m = *impl_;
  m.buf.assign(line);
  m.buf.resize(line.size() + simdjson::SIMDJSON_PADDING, ' ');
  const char* base = m.buf.data();
  od::document doc;
  if (m.parser.iterate(base, line.size(), m.buf.size()).get(doc) != simdjson::SUCCESS) {
    return Status::BadInput("malformed JSON: " + ClipExcerpt(line));
  }
  // Offsets are uint32_t; JSONL lines are limited far below 4 GiB by max_record_bytes.
  auto add_piece = [&](std::string_view raw) -> Status {
    const size_t begin = static_cast<size_t>(raw.data() - base);
    if (begin >= line.size() || line[begin] != '"') {
      return Status::BadInput("field value is not a string: " + ClipExcerpt(raw));
    }
    const size_t end = StringTokenEnd(line, begin);
    if (end == std::string_view::npos) return Status::BadInput("unterminated string: " + ClipExcerpt(raw));
    JsonStringPiece piece;
    piece.raw_begin = static_cast<uint32_t>(begin);
    piece.raw_end = static_cast<uint32_t>(end);
    TM_RETURN_IF_ERROR(DecodeJsonString(line.substr(begin, end - begin), &piece.decoded));
    piece.text_begin = static_cast<uint32_t>(out->text.size());
    out->text += piece.decoded;
    out->pieces.push_back(std::move(piece));
    return Status::Ok();
  };
  for (size_t f = 0; f < m.pointers.size(); ++f) {
    if (f > 0) out->text += m.options.field_joiner;
    od::value v;
    const auto err = doc.at_pointer(m.pointers[f]).get(v);
    if (err == simdjson::NO_SUCH_FIELD || err == simdjson::INDEX_OUT_OF_BOUNDS) {
      if (m.options.allow_missing_fields) continue;
      return Status::BadInput("missing field " + m.options.fields[f]);
    }
    if (err != simdjson::SUCCESS) {
      return Status::BadInput("field " + m.options.fields[f] + ": " + simdjson::error_message(err));
    }
    od::json_type type;
    if (v.type().get(type) != simdjson::SUCCESS) return Status::BadInput("malformed JSON: " + ClipExcerpt(line));
    if (type == od::json_type::string) {
      TM_RETURN_IF_ERROR(add_piece(v.raw_json_token()));
    } else if (type == od::json_type::array) {
      od::array arr;
      if (v.get_array().get(arr) != simdjson::SUCCESS) return Status::BadInput("malformed JSON");
      bool first = true;
      for (auto element : arr) {
        od::value ev;
        if (element.get(ev) != simdjson::SUCCESS) return Status::BadInput("malformed JSON");
        if (!first) out->text += m.options.array_joiner;
        first = false;
        TM_RETURN_IF_ERROR(add_piece(ev.raw_json_token()));
      }
    } else {
      return Status::BadInput("field " + m.options.fields[f] + " is not a string or array of strings");
    }
  }
  return Status::Ok();
}

}  // namespace tidemark
