// Tokenizer: worked examples of the rules (docs/text_rules.md), the ASCII fast path
// against the cluster path, span properties on real text, and ill-formed input.
#include <catch2/catch.hpp>

#include <cstdint>
#include <random>
#include <string>
#include <tuple>
#include <vector>

#include "normalize/char_class.h"
#include "normalize/normalizer.h"
#include "shingle/tokenizer_testing.h"
#include "test_util.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

struct Tok {
  std::string t;
  uint32_t b, e;
  bool operator==(const Tok&) const = default;
};

std::ostream& operator<<(std::ostream& os, const Tok& t) {
  return os << "{" << t.t << " " << t.b << ".." << t.e << "}";
}

std::vector<Tok> Toks(std::string_view text, const TextOptions& o = TextOptions()) {
  Tokenizer tk(o);
  std::vector<Token> tokens;
  std::vector<std::string> norm;
  tk.TokenizeWithText(text, &tokens, &norm);
  std::vector<Tok> out;
  for (size_t i = 0; i < tokens.size(); ++i) {
    out.push_back({norm[i], tokens[i].begin, tokens[i].end});
    CHECK(tokens[i].hash == HashToken(norm[i], o.seed));
  }
  return out;
}

TEST_CASE("Worked examples of the token rules", "[shingle][tokenize]") {
  using V = std::vector<Tok>;
  // ASCII: letters lower-cased, digits kept, everything else separates.
  CHECK(Toks("Hello, World! x_y 3.14") ==
        V{{"hello", 0, 5}, {"world", 7, 12}, {"x", 14, 15}, {"y", 16, 17}, {"3", 18, 19},
          {"14", 20, 22}});
  // Precomposed and decomposed accents give the same token (NFKC), spans of the
  // original bytes.
  CHECK(Toks("na\xC3\xAFve caf\xC3\xA9") == V{{"na\xC3\xAFve", 0, 6}, {"caf\xC3\xA9", 7, 12}});
  CHECK(Toks("cafe\xCC\x81 x") == V{{"caf\xC3\xA9", 0, 6}, {"x", 7, 8}});
  // Fullwidth letters and ß (CaseFolding.txt: 00DF; F; 0073 0073).
  CHECK(Toks("\xEF\xBC\xB3\xEF\xBC\xB4\xEF\xBC\xB2\xEF\xBC\xA1\xC3\x9F\xEF\xBC\xA5!") ==
        V{{"strasse", 0, 17}});
  // Soft hyphen (default ignorable) is deleted inside the word; its bytes stay in
  // the span.
  CHECK(Toks("co\xC2\xAD" "op") == V{{"coop", 0, 6}});
  // Han, kana, Hangul: one token per character; digits between them form a word.
  CHECK(Toks("\xE6\x9D\xB1\xE4\xBA\xAC" "2024\xE5\xB9\xB4") ==
        V{{"\xE6\x9D\xB1", 0, 3}, {"\xE4\xBA\xAC", 3, 6}, {"2024", 6, 10}, {"\xE5\xB9\xB4", 10, 13}});
  CHECK(Toks("\xED\x95\x9C\xEA\xB5\xAD \xEC\x96\xB4") ==
        V{{"\xED\x95\x9C", 0, 3}, {"\xEA\xB5\xAD", 3, 6}, {"\xEC\x96\xB4", 7, 10}});
  // Halfwidth katakana KA + voiced mark compose to GA (U+30AC) in one cluster.
  CHECK(Toks("\xEF\xBD\xB6\xEF\xBE\x9E") == V{{"\xE3\x82\xAC", 0, 6}});
  // Prolonged sound mark U+30FC is in the Katakana block: its own token.
  CHECK(Toks("\xE3\x82\xB3\xE3\x83\xBC") == V{{"\xE3\x82\xB3", 0, 3}, {"\xE3\x83\xBC", 3, 6}});
  // One cluster can give several tokens that share its span: ½ -> 1 U+2044 2.
  CHECK(Toks("x\xC2\xBDy") == V{{"x1", 0, 3}, {"2y", 1, 4}});
  // A mark after a separator starts a token whose span begins at the separator's
  // cluster.
  CHECK(Toks("a \xCC\x81" "b") == V{{"a", 0, 1}, {"\xCC\x81" "b", 1, 5}});
  // Fullwidth comma U+FF0C -> ',' separates.
  CHECK(Toks("a\xEF\xBC\x8C" "b") == V{{"a", 0, 1}, {"b", 4, 5}});
  // Accent stripping.
  TextOptions strip;
  strip.strip_accents = true;
  CHECK(Toks("Caf\xC3\xA9 cafe\xCC\x81", strip) == V{{"cafe", 0, 5}, {"cafe", 6, 12}});
  CHECK(Toks("").empty());
  CHECK(Toks(" \t\n.,;").empty());
}

// Tokens of one text through the fast path and the cluster path, compared exactly.
void CheckFastPathIdentical(std::string_view text, const TextOptions& o) {
  Tokenizer tk(o);
  std::vector<Token> fast, slow;
  std::vector<std::string> nf, ns;
  tk.TokenizeWithText(text, &fast, &nf);
  const uint64_t before = tk.invalid_utf8_bytes();
  (void)before;
  shingle::TokenizeWithoutAsciiFastPath(o, text, &slow, &ns);
  REQUIRE(fast.size() == slow.size());
  for (size_t i = 0; i < fast.size(); ++i) {
    CHECK(std::tie(fast[i].begin, fast[i].end, fast[i].hash) ==
          std::tie(slow[i].begin, slow[i].end, slow[i].hash));
    CHECK(nf[i] == ns[i]);
  }
}

TEST_CASE("ASCII fast path is byte-identical to the full path", "[shingle][tokenize]") {
  std::mt19937_64 rng(314159);
  TextOptions o;
  for (int iter = 0; iter < 3000; ++iter) {
    std::string s(rng() % 200, '\0');
    for (auto& c : s) c = static_cast<char>(rng() % 128);  // every ASCII byte, controls too
    CheckFastPathIdentical(s, o);
  }
  // Mixed: ASCII next to non-ASCII, where the fast path must hand its last character
  // to the cluster path (e + U+0301), and ill-formed bytes.
  const std::vector<std::string> pool = {
      "a", "Z", "e", "9", " ", ".", "-", "\t", "\xCC\x81", "\xC2\xAD", "\xC3\xA9", "\xC3\x9F",
      "\xE6\xBC\xA2", "\xE3\x82\x99", "\xC2\xBD", "\xEF\xBC\xA1", "\xFF", "\xE2\x82", "\xCE\xA3",
      "\xE2\x80\x8D", "\xE1\x85\xA1", "\xE3\x83\xBC", "\xF0\x9F\x98\x80", "<", "\xCC\xB8",
      "\xE3\x81\x8C" /*が*/, "\xEA\xB0\x80" /*가*/, "\xE1\x86\xA8" /*T jamo*/, "\xE3\x80\x82" /*。*/,
      "\xE4\xB8\x80" /*一*/, "\xED\x9E\xA3" /*힣*/};
  for (bool strip : {false, true}) {
    o.strip_accents = strip;
    for (int iter = 0; iter < 5000; ++iter) {
      std::string s;
      const size_t len = rng() % 24;
      for (size_t j = 0; j < len; ++j) s += pool[rng() % pool.size()];
      CheckFastPathIdentical(s, o);
    }
  }
  // Text shaped like prose, long enough for the 32-byte windows of the fast path:
  // words of 1 to 40 letters and digits (so some end exactly at a window's end, some
  // run past it, some fill a whole window), one to three separators between them, and
  // now and then a non-ASCII piece right after a word or between words.
  o.strip_accents = false;
  const std::string alnum = "abcdefghijklmnopqrstuvwxyzABCDEFGHIJKLMNOPQRSTUVWXYZ0123456789";
  const std::string seps = " .,;-\n\t'\"()";
  for (int iter = 0; iter < 4000; ++iter) {
    std::string s;
    const size_t words = 1 + rng() % 60;
    for (size_t w = 0; w < words; ++w) {
      const size_t wl = 1 + (rng() % 8 == 0 ? rng() % 40 : rng() % 9);
      for (size_t j = 0; j < wl; ++j) s += alnum[rng() % alnum.size()];
      if (rng() % 16 == 0) s += pool[8 + rng() % (pool.size() - 8)];  // non-ASCII
      const size_t sl = rng() % 3 == 0 ? 0 : 1 + rng() % 3;
      for (size_t j = 0; j < sl; ++j) s += seps[rng() % seps.size()];
      if (sl == 0) s += ' ';
    }
    CheckFastPathIdentical(s, o);
  }
}

TEST_CASE("Ideograph fast path set is stable under the rules", "[shingle][tokenize]") {
  // Every code point that skips the cluster normalizer must be its own NFKC_Casefold,
  // an ideograph-class character, and the start of a cluster.
  size_t checked = 0, bad = 0;
  for (char32_t cp = 0x3000; cp <= 0xD7FF; ++cp) {
    if (!shingle::IsStableIdeograph(cp)) continue;
    ++checked;
    std::string one;
    normalize::AppendUtf8(cp, &one);
    const std::vector<Tok> got = Toks(one + one);
    const bool ok = NormalizeText(one, TextOptions()) == one && got.size() == 2 &&
                    got[0] == Tok{one, 0, 3} && got[1] == Tok{one, 3, 6} &&
                    normalize::ClassifyCodePoint(cp) == normalize::CharClass::kIdeograph;
    if (!ok && ++bad <= 5) FAIL_CHECK("U+" << std::hex << uint32_t(cp));
  }
  CHECK(checked == 0x5200 + 0x19C0 + 11172 + 86 + 90 + 1);
  CHECK(bad == 0);
  // Followed by a joining character, the cluster path decides: 가 + U+11A8 -> 각.
  CHECK(Toks("\xEA\xB0\x80\xE1\x86\xA8") == std::vector<Tok>{{"\xEA\xB0\x81", 0, 6}});
  CHECK(Toks("\xE3\x81\x8B\xE3\x82\x99") == std::vector<Tok>{{"\xE3\x81\x8C", 0, 6}});
  // With accent stripping the voicing mark comes off (Mn), so が -> か.
  TextOptions strip;
  strip.strip_accents = true;
  CHECK(Toks("\xE3\x81\x8C", strip) == std::vector<Tok>{{"\xE3\x81\x8B", 0, 3}});
}

// Span properties: in order, inside the text, overlapping only where one cluster gave
// several tokens; re-tokenizing a token's original bytes gives that token back.
struct SpanReport {
  size_t tokens = 0, shared = 0, retokenize_mismatch = 0;
};

SpanReport CheckSpans(std::string_view text, const TextOptions& o) {
  Tokenizer tk(o), again(o);
  std::vector<Token> tokens, sub;
  std::vector<std::string> norm, sub_norm;
  tk.TokenizeWithText(text, &tokens, &norm);
  SpanReport r;
  r.tokens = tokens.size();
  for (size_t i = 0; i < tokens.size(); ++i) {
    const Token& t = tokens[i];
    REQUIRE(t.begin < t.end);
    REQUIRE(t.end <= text.size());
    bool shared = false;
    if (i > 0) {
      REQUIRE(t.begin >= tokens[i - 1].begin);
      REQUIRE(t.end >= tokens[i - 1].end);
      shared |= t.begin < tokens[i - 1].end;
    }
    if (i + 1 < tokens.size()) shared |= tokens[i + 1].begin < t.end;
    if (shared) {
      ++r.shared;
      continue;
    }
    again.TokenizeWithText(text.substr(t.begin, t.end - t.begin), &sub, &sub_norm);
    if (sub.size() != 1 || sub_norm[0] != norm[i] || sub[0].hash != t.hash) {
      ++r.retokenize_mismatch;
    }
  }
  return r;
}

TEST_CASE("Token spans on real text", "[shingle][tokenize]") {
  // Real text from Debian packages (REFERENCES.md): German fortunes (fortunes-de),
  // Tang poems with ANSI escapes (fortunes-zh), WordNet glosses (wordnet-base).
  const std::vector<std::string> files = {"/usr/share/games/fortunes/de/witze",
                                          "/usr/share/games/fortunes/tang300",
                                          "/usr/share/wordnet/data.adv"};
  for (const auto& f : files) {
    if (!testing::PathExists(f)) {
      WARN("missing " << f << " (scripts/setup.sh installs it)");
      continue;
    }
    const std::string text = testing::ReadFile(f);
    for (bool strip : {false, true}) {
      TextOptions o;
      o.strip_accents = strip;
      const SpanReport r = CheckSpans(text, o);
      INFO(f << ": " << r.tokens << " tokens, " << r.shared << " shared spans");
      CHECK(r.tokens > 10000);
      CHECK(r.retokenize_mismatch == 0);
      // Shared spans come only from clusters such as ½ that split; these texts have
      // few or none.
      CHECK(r.shared * 1000 <= r.tokens);
    }
  }
  // Synthetic mix exercising splitting clusters: every non-shared token re-tokenizes
  // to itself; the shared ones are exactly those from ½ and U+337F (株式会社).
  const std::string mix = "a\xC2\xBD" "b \xE3\x8D\xBF x co\xC2\xAD" "op e\xCC\x81 \xCC\x81z";
  const SpanReport r = CheckSpans(mix, TextOptions());
  CHECK(r.retokenize_mismatch == 0);
  CHECK(r.shared == 6);  // a1, 2b, and the four ideographs of U+337F
}

TEST_CASE("Ill-formed UTF-8 never crashes and is counted", "[shingle][tokenize][fuzz]") {
  std::mt19937_64 rng(2718281828);
  TextOptions o;
  Tokenizer tk(o);
  std::vector<Token> tokens;
  std::vector<std::string> norm;
  uint64_t expected_min = 0;
  for (int iter = 0; iter < 20000; ++iter) {
    std::string s(rng() % 64, '\0');
    for (auto& c : s) c = static_cast<char>(rng() & 0xFF);
    for (unsigned char c : s) expected_min += (c >= 0xF8 || c == 0xC0 || c == 0xC1) ? 1 : 0;
    tk.TokenizeWithText(s, &tokens, &norm);
    for (size_t i = 0; i < tokens.size(); ++i) {
      REQUIRE(tokens[i].begin < tokens[i].end);
      REQUIRE(tokens[i].end <= s.size());
      if (i > 0) REQUIRE(tokens[i].begin >= tokens[i - 1].begin);
    }
  }
  // Bytes that never occur in UTF-8 (C0, C1, F8..FF; Table 3-7) are each counted;
  // continuation bytes out of place add more.
  CHECK(tk.invalid_utf8_bytes() > expected_min);
  const uint64_t before = tk.invalid_utf8_bytes();
  tk.Tokenize("valid \xC3\xA9 text \xE6\xBC\xA2", &tokens);
  CHECK(tk.invalid_utf8_bytes() == before);
  tk.Tokenize("bad\xFF" "byte \xE2\x82", &tokens);
  CHECK(tk.invalid_utf8_bytes() == before + 3);
  CHECK(tokens.size() == 2);
}

}  // namespace
}  // namespace tidemark
