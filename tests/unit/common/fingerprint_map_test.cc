#include <catch2/catch.hpp>

#include <random>
#include <unordered_map>

#include "common/fingerprint_map.h"

namespace tidemark {
namespace {

TEST_CASE("FingerprintMap agrees with std::unordered_map on random keys", "[common]") {
  std::mt19937_64 rng(7);
  FingerprintMap<uint32_t> map;
  std::unordered_map<uint64_t, uint32_t> ref;
  for (int i = 0; i < 100000; ++i) {
    // Small key space so that repeats happen; key 0 is an ordinary key.
    const uint64_t k = rng() % 50000;
    ++map[k];
    ++ref[k];
  }
  CHECK(map.size() == ref.size());
  for (const auto& [k, v] : ref) {
    const uint32_t* got = map.Find(k);
    REQUIRE(got != nullptr);
    CHECK(*got == v);
  }
  CHECK(map.Find(50001) == nullptr);
  size_t seen = 0;
  map.ForEach([&](uint64_t, uint32_t) { ++seen; });
  CHECK(seen == ref.size());
}

}  // namespace
}  // namespace tidemark
