// Token hashes and n-gram fingerprints checked against the xxHash reference: the
// upstream sanity vectors (xxHash cli/xsum_sanity_check.c, quoted in REFERENCES.md)
// and the xxhsum program of Debian package xxhash 0.8.1, run at test time.
#include <catch2/catch.hpp>

#include <cstdint>
#include <random>
#include <string>
#include <vector>

#include "test_util.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

constexpr uint64_t kPrime64 = 11400714785074694797ull;  // XXH_PRIME64_1

// The sanity buffer: buf[i] = g >> 56, g = 2654435761 at the start and g *= PRIME64
// (mod 2^64) after each byte (xxHash cli/xsum_sanity_check.c).
std::string SanityBuffer(size_t len) {
  std::string buf(len, '\0');
  uint64_t g = 2654435761u;
  for (size_t i = 0; i < len; ++i) {
    buf[i] = static_cast<char>(g >> 56);
    g *= kPrime64;
  }
  return buf;
}

// XXH3-64 of `bytes` by `xxhsum -H3` (testing::XxhsumH3).
uint64_t Xxhsum(const std::string& bytes) {
  const std::string path = testing::ScratchDir("xxhsum") + "/in.bin";
  testing::WriteFile(path, bytes);
  return testing::XxhsumH3(path);
}

TEST_CASE("HashToken reproduces the XXH3-64 sanity vectors", "[shingle][xxh3]") {
  // Values from xxHash cli/xsum_sanity_check.c (REFERENCES.md), seed 0.
  const std::vector<std::pair<size_t, uint64_t>> seed0 = {
      {0, 0x2D06800538D394C2ull},    {1, 0xC44BDFF4074EECDBull},    {6, 0x27B56A84CD2D7325ull},
      {12, 0xA713DAF0DFBB77E7ull},   {24, 0xA3FE70BF9D3510EBull},   {48, 0x397DA259ECBA1F11ull},
      {80, 0xBCDEFBBB2C47C90Aull},   {195, 0xCD94217EE362EC3Aull},  {403, 0xCDEB804D65C6DEA4ull},
      {512, 0x617E49599013CB6Bull},  {2048, 0xDD59E2C3A5F038E0ull}, {2240, 0x6E73A90539CF2948ull},
      {2367, 0xCB37AEB9E5D361EDull}};
  for (const auto& [len, want] : seed0) {
    INFO("len " << len);
    CHECK(HashToken(SanityBuffer(len), 0) == want);
  }
  // Seed PRIME64 (same source).
  CHECK(HashToken(SanityBuffer(0), kPrime64) == 0xA8A6B918B2F0364Aull);
  CHECK(HashToken(SanityBuffer(2367), kPrime64) == 0xD2DB3415B942B42Aull);
  // Plain strings (REFERENCES.md).
  CHECK(HashToken("", 0) == 0x2d06800538d394c2ull);
  CHECK(HashToken("a", 0) == 0xe6c632b61e964e1full);
  CHECK(HashToken("abc", 0) == 0x78af5f94892f3950ull);
  std::string mod251(1024, '\0');
  for (size_t i = 0; i < mod251.size(); ++i) mod251[i] = static_cast<char>(i % 251);
  CHECK(HashToken(mod251, 0) == 0xe5d78bafa45b2aa5ull);
}

TEST_CASE("HashToken equals xxhsum -H3 on the same bytes", "[shingle][xxh3]") {
  // Debian's xxhsum 0.8.1 computes XXH3-64 with seed 0 (there is no seed option).
  const std::vector<std::string> tokens = {"", "the", "strasse", "\xCF\x83\xCE\xB1\xCF\x83",
                                           "\xE6\xBC\xA2", std::string(17, 'x'),
                                           std::string(129, 'q'), std::string(241, 'z'),
                                           SanityBuffer(1000)};
  for (const auto& t : tokens) {
    INFO("size " << t.size());
    CHECK(HashToken(t, 0) == Xxhsum(t));
  }
}

// The definition in docs/text_rules.md, computed the long way: every power of B
// separately (no Horner, no rolling), then the MurmurHash3 fmix64 finalizer written out
// from Appleby's MurmurHash3.cpp (public domain; constants from memory, and checked
// against the Python reference in tests/reference/index, which shares no code).
uint64_t NgramByDefinition(const std::vector<uint64_t>& h, uint64_t seed) {
  const uint64_t b = 0x9E3779B97F4A7C15ull;
  const size_t n = h.size();
  uint64_t p = 0;
  for (size_t j = 0; j < n; ++j) {
    uint64_t power = 1;
    for (size_t e = 0; e < n - 1 - j; ++e) power *= b;
    p += h[j] * power;
  }
  uint64_t k = p ^ seed;
  k ^= k >> 33;
  k *= 0xff51afd7ed558ccdull;
  k ^= k >> 33;
  k *= 0xc4ceb9fe1a85ec53ull;
  k ^= k >> 33;
  return k;
}

TEST_CASE("FingerprintNgram is the finalized polynomial of the token hashes", "[shingle]") {
  std::mt19937_64 rng(7);
  for (int n : {1, 2, 5, 8, 13, 16, 30, 31, 64}) {
    std::vector<uint64_t> hashes(static_cast<size_t>(n));
    for (auto& h : hashes) h = rng();
    INFO("n " << n);
    CHECK(FingerprintNgram(hashes.data(), n, 0) == NgramByDefinition(hashes, 0));
    CHECK(FingerprintNgram(hashes.data(), n, 12345) == NgramByDefinition(hashes, 12345));
    CHECK(FingerprintNgram(hashes.data(), n, 12345) != FingerprintNgram(hashes.data(), n, 0));
  }
  // fmix64 is a bijection with fmix64(0) == 0 (MurmurHash3.cpp): the all-zero n-gram
  // at seed 0 prints as 0, which the index stores like any other key.
  const std::vector<uint64_t> zeros(13, 0);
  CHECK(FingerprintNgram(zeros.data(), 13, 0) == 0);
  // Order matters: swapping two tokens changes the fingerprint.
  std::vector<uint64_t> a = {rng(), rng(), rng()}, b = {a[1], a[0], a[2]};
  CHECK(FingerprintNgram(a.data(), 3, 0) != FingerprintNgram(b.data(), 3, 0));
}

TEST_CASE("ComputeFingerprints covers every window", "[shingle]") {
  std::vector<Token> tokens;
  std::mt19937_64 rng(11);
  for (uint32_t i = 0; i < 40; ++i) tokens.push_back(Token{i * 2, i * 2 + 1, rng()});
  TextOptions o;
  o.seed = 99;
  std::vector<uint64_t> fps;
  for (int n : {1, 3, 13, 40}) {
    o.ngram = n;
    ComputeFingerprints(tokens, o, &fps);
    REQUIRE(fps.size() == tokens.size() - static_cast<size_t>(n) + 1);
    std::vector<uint64_t> h;
    for (const auto& t : tokens) h.push_back(t.hash);
    for (size_t i = 0; i < fps.size(); ++i) {
      INFO("n " << n << " i " << i);
      CHECK(fps[i] == FingerprintNgram(h.data() + i, n, o.seed));
    }
  }
  o.ngram = 41;
  fps.assign(3, 1);
  ComputeFingerprints(tokens, o, &fps);
  CHECK(fps.empty());  // fewer tokens than n: no n-grams
  ComputeFingerprints({}, o, &fps);
  CHECK(fps.empty());
}

TEST_CASE("TokenizeHashes and FingerprintsInPlace equal Tokenize and ComputeFingerprints",
          "[shingle]") {
  // The index build's path (hashes only, fingerprints written over them) against the
  // path of the probe and the evidence pass, on prose-shaped and random text.
  std::mt19937_64 rng(23);
  const std::vector<std::string> pieces = {"In", "the", "beginning", "GOD", "created", " ", ", ",
                                           ". ", "\xC3\xA9t\xC3\xA9", "\xE6\xBC\xA2\xE5\xAD\x97",
                                           "e\xCC\x81", "x1234567890abcdefghijklmnopqrstuvwxyz", "\xFF"};
  for (const int n : {1, 2, 5, 13}) {
    TextOptions o;
    o.ngram = n;
    o.seed = static_cast<uint64_t>(n) * 77;
    Tokenizer a(o), b(o);
    for (int iter = 0; iter < 500; ++iter) {
      std::string text;
      const size_t len = rng() % 80;
      for (size_t j = 0; j < len; ++j) {
        text += pieces[rng() % pieces.size()];
        if (rng() % 2) text += ' ';
      }
      std::vector<Token> tokens;
      std::vector<uint64_t> want;
      a.Tokenize(text, &tokens);
      ComputeFingerprints(tokens, o, &want);
      const std::span<uint64_t> h = b.TokenizeHashes(text);
      REQUIRE(h.size() == tokens.size());
      for (size_t i = 0; i < h.size(); ++i) REQUIRE(h[i] == tokens[i].hash);
      const size_t count = FingerprintsInPlace(h, o);
      REQUIRE(count == want.size());
      for (size_t i = 0; i < count; ++i) REQUIRE(h[i] == want[i]);
    }
  }
}

TEST_CASE("Fingerprints of text: same words, same prints, whatever the case and spacing",
          "[shingle]") {
  TextOptions o;
  o.ngram = 3;
  Tokenizer t(o);
  std::vector<Token> a, b;
  std::vector<uint64_t> fa, fb;
  t.Tokenize("In the beginning God created the heaven and the earth.", &a);
  t.Tokenize("IN THE BEGINNING\tGod  created -- the heaven and the earth", &b);
  ComputeFingerprints(a, o, &fa);
  ComputeFingerprints(b, o, &fb);
  REQUIRE(fa.size() == 8);  // 10 tokens, 3-grams
  CHECK(fa == fb);
  // Token hashes are HashToken of the normalized token.
  CHECK(a[0].hash == HashToken("in", 0));
  CHECK(a[9].hash == HashToken("earth", 0));
}

}  // namespace
}  // namespace tidemark
