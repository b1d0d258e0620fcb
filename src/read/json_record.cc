#include "read/json_record.h"

#include <charconv>

#include "read/read_util.h"

namespace tidemark {
namespace {

static_assert(kParsePadding >= simdjson::SIMDJSON_PADDING);

std::string_view TypeName(simdjson::dom::element_type t) {
  using T = simdjson::dom::element_type;
  switch (t) {
    case T::ARRAY: return "an array";
    case T::OBJECT: return "an object";
    case T::INT64:
    case T::UINT64:
    case T::DOUBLE: return "a number";
    case T::STRING: return "a string";
    case T::BOOL: return "a boolean";
    case T::NULL_VALUE: return "null";
  }
  return "unknown";
}

JsonRecordParser::Outcome Fail(SkipReason reason, std::string what) {
  JsonRecordParser::Outcome o;
  o.ok = false;
  o.reason = reason;
  o.what = std::move(what);
  return o;
}

// The type was checked before each get(); its error code carries nothing new.
void Ignore(simdjson::error_code) {}

std::string Quoted(const std::string& s) { return "\"" + s + "\""; }

}  // namespace

JsonRecordParser::JsonRecordParser(const ReadOptions& options)
    : options_(options), field_scratch_(options.fields.size()) {}

simdjson::simdjson_result<simdjson::dom::element> JsonRecordParser::Lookup(
    simdjson::dom::element root, const std::string& field) {
  if (!field.empty() && field[0] == '/') return root.at_pointer(field);
  return root.at_key(field);
}

JsonRecordParser::Outcome JsonRecordParser::Parse(std::string_view json,
                                                  uint64_t record_number, Record* record) {
  auto parsed = parser_.parse(json.data(), json.size(), /*realloc_if_needed=*/false);
  size_t repaired = 0;
  if (parsed.error() == simdjson::UTF8_ERROR) {
    repaired = RepairUtf8(json, &repaired_);
    const size_t n = repaired_.size();
    repaired_.append(kParsePadding, ' ');
    parsed = parser_.parse(repaired_.data(), n, false);
  }
  if (parsed.error()) {
    return Fail(SkipReason::kMalformedJson,
                std::string("malformed JSON (") + simdjson::error_message(parsed.error()) + ")");
  }
  simdjson::dom::element root;
  Ignore(std::move(parsed).get(root));
  Outcome o = Extract(root, record_number, record);
  o.repaired_bytes = repaired;
  return o;
}

JsonRecordParser::Outcome JsonRecordParser::FieldText(simdjson::dom::element root,
                                                      const std::string& field,
                                                      std::string* scratch,
                                                      std::string_view* out) {
  auto v = Lookup(root, field);
  if (v.error()) {
    if (options_.allow_missing_fields) {
      *out = std::string_view();
      return Outcome{};
    }
    return Fail(SkipReason::kMissingField, "missing field " + Quoted(field));
  }
  simdjson::dom::element e;
  Ignore(std::move(v).get(e));
  if (e.is_string()) {
    Ignore(e.get_string().get(*out));
    return Outcome{};
  }
  if (e.is_array()) {
    scratch->clear();
    bool first = true;
    simdjson::dom::array array;
    if (e.get_array().get(array) != simdjson::SUCCESS) return Fail(SkipReason::kNotString, field);
    for (simdjson::dom::element item : array) {
      if (!item.is_string()) {
        return Fail(SkipReason::kNotString, "field " + Quoted(field) +
                                                ": expected a string or an array of strings, "
                                                "got an array holding " +
                                                std::string(TypeName(item.type())));
      }
      if (!first) *scratch += options_.array_joiner;
      first = false;
      std::string_view piece;
      Ignore(item.get_string().get(piece));
      *scratch += piece;
    }
    *out = *scratch;
    return Outcome{};
  }
  return Fail(SkipReason::kNotString, "field " + Quoted(field) + ": expected a string, got " +
                                          std::string(TypeName(e.type())));
}

JsonRecordParser::Outcome JsonRecordParser::Extract(simdjson::dom::element root,
                                                    uint64_t record_number, Record* record) {
  if (!root.is_object()) {
    return Fail(SkipReason::kMalformedJson,
                "not a JSON object (got " + std::string(TypeName(root.type())) + ")");
  }
  const size_t nf = options_.fields.size();
  record->fields.resize(nf);
  for (size_t i = 0; i < nf; ++i) {
    Outcome o = FieldText(root, options_.fields[i], &field_scratch_[i], &record->fields[i]);
    if (!o.ok) return o;
  }
  if (nf == 1) {
    record->text = record->fields[0];
  } else {
    text_.clear();
    for (size_t i = 0; i < nf; ++i) {
      if (i > 0) text_ += options_.field_joiner;
      text_ += record->fields[i];
    }
    record->text = text_;
  }

  if (options_.id_field.empty()) {
    record->id = std::to_string(record_number);
    return Outcome{};
  }
  auto v = Lookup(root, options_.id_field);
  if (v.error()) {
    if (options_.allow_missing_fields) {
      record->id = std::to_string(record_number);
      return Outcome{};
    }
    return Fail(SkipReason::kMissingField, "missing id field " + Quoted(options_.id_field));
  }
  simdjson::dom::element e;
  Ignore(std::move(v).get(e));
  using T = simdjson::dom::element_type;
  char buf[64];
  std::string_view sv;
  int64_t i64 = 0;
  uint64_t u64 = 0;
  double dbl = 0;
  switch (e.type()) {
    case T::STRING:
      Ignore(e.get_string().get(sv));
      record->id = std::string(sv);
      break;
    case T::INT64:
      Ignore(e.get_int64().get(i64));
      record->id = std::to_string(i64);
      break;
    case T::UINT64:
      Ignore(e.get_uint64().get(u64));
      record->id = std::to_string(u64);
      break;
    case T::DOUBLE: {
      // Shortest representation that reads back as the same double.
      Ignore(e.get_double().get(dbl));
      const auto r = std::to_chars(buf, buf + sizeof(buf), dbl);
      record->id.assign(buf, r.ptr);
      break;
    }
    default:
      return Fail(SkipReason::kNotString, "id field " + Quoted(options_.id_field) +
                                              ": expected a string or a number, got " +
                                              std::string(TypeName(e.type())));
  }
  return Outcome{};
}

}  // namespace tidemark
