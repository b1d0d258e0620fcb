#include <catch2/catch.hpp>

#include "tidemark/status.h"
#include "tidemark/text_options.h"

namespace tidemark {
namespace {

Result<int> Half(int x) {
  if (x % 2 != 0) return Status::InvalidArgument("odd: " + std::to_string(x));
  return x / 2;
}

Status Quarter(int x, int* out) {
  TM_ASSIGN_OR_RETURN(const int h, Half(x));
  TM_ASSIGN_OR_RETURN(*out, Half(h));
  return Status::Ok();
}

TEST_CASE("Status carries code and message", "[common]") {
  const Status s = Status::Corruption("shard-003.tms@4096: checksum mismatch");
  CHECK_FALSE(s.ok());
  CHECK(s.code() == StatusCode::kCorruption);
  CHECK(s.ToString() == "corruption: shard-003.tms@4096: checksum mismatch");
  CHECK(s.WithContext("index /x").message() == "index /x: shard-003.tms@4096: checksum mismatch");
  CHECK(Status::Ok().ToString() == "ok");
}

TEST_CASE("TM_ASSIGN_OR_RETURN propagates the first error", "[common]") {
  int out = 0;
  CHECK(Quarter(8, &out).ok());
  CHECK(out == 2);
  const Status s = Quarter(6, &out);
  CHECK(s.code() == StatusCode::kInvalidArgument);
  CHECK(s.message() == "odd: 3");
}

TEST_CASE("TextOptions text form round-trips and rejects bad values", "[common]") {
  TextOptions o;
  CHECK(o.ToString() == "rules=2 n=13 seed=0 accents=keep");
  o.ngram = 8;
  o.seed = 42;
  o.strip_accents = true;
  auto parsed = TextOptions::Parse(o.ToString());
  REQUIRE(parsed.ok());
  CHECK(*parsed == o);
  CHECK(TextOptions::Parse("rules=2 n=0").status().code() == StatusCode::kInvalidArgument);
  CHECK(TextOptions::Parse("rules=2 n=65").status().code() == StatusCode::kInvalidArgument);
  // Version 1 (XXH3 over the token hashes) and an unknown future version.
  CHECK(TextOptions::Parse("rules=1 n=13").status().code() == StatusCode::kUnsupported);
  CHECK(TextOptions::Parse("rules=3 n=13").status().code() == StatusCode::kUnsupported);
  CHECK(TextOptions::Parse("n=13").status().code() == StatusCode::kBadInput);
  CHECK(TextOptions::Parse("rules=2 colour=red").status().code() == StatusCode::kBadInput);
  CHECK(TextOptions::Parse("rules=2 n=x").status().code() == StatusCode::kBadInput);
}

}  // namespace
}  // namespace tidemark
