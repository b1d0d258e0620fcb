// Normalization checked against the Unicode 15.0 data files (package unicode-data) and
// against utf8proc's own whole-string functions.
#include "normalize/normalizer.h"

#include <utf8proc.h>

#include <catch2/catch.hpp>

#include <cstdio>
#include <cstdlib>
#include <map>
#include <random>
#include <string>
#include <vector>

#include "normalize/char_class.h"
#include "normalize/utf8.h"
#include "test_util.h"
#include "tidemark/tokenizer.h"
#include "ucd_file.h"

namespace tidemark::normalize {
namespace {

using testing::ForEachUcdLine;
using testing::HexSequenceToUtf8;
using testing::kUcdDir;
using testing::UcdFields;
using testing::UcdRange;
using testing::Utf8Of;

// utf8proc_NFKC_Casefold / utf8proc_NFKC on a whole string: the library's reference
// for our cluster-by-cluster route.
std::string Utf8procMap(const std::string& s, bool casefold) {
  utf8proc_uint8_t* out = nullptr;
  int options = UTF8PROC_STABLE | UTF8PROC_COMPOSE | UTF8PROC_COMPAT;
  if (casefold) options |= UTF8PROC_CASEFOLD | UTF8PROC_IGNORE;
  const utf8proc_ssize_t n =
      utf8proc_map(reinterpret_cast<const utf8proc_uint8_t*>(s.data()),
                   static_cast<utf8proc_ssize_t>(s.size()), &out,
                   static_cast<utf8proc_option_t>(options));
  REQUIRE(n >= 0);
  std::string r(reinterpret_cast<char*>(out), static_cast<size_t>(n));
  std::free(out);
  return r;
}

std::string Hex(const std::string& s) {
  std::string out;
  char tmp[8];
  for (unsigned char c : s) {
    std::snprintf(tmp, sizeof tmp, "%02X ", c);
    out += tmp;
  }
  return out;
}

TEST_CASE("NFKC conformance: NormalizationTest.txt c4 == NFKC(c1..c5)", "[normalize][unicode]") {
  // Source: Unicode 15.0.0 NormalizationTest.txt (package unicode-data), conformance
  // rule for NFKC: c4 == toNFKC(c1) == toNFKC(c2) == toNFKC(c3) == toNFKC(c4) == toNFKC(c5).
  const std::string path = kUcdDir + "NormalizationTest.txt.bz2";
  REQUIRE(testing::PathExists(path));
  FILE* pipe = ::popen(("bzcat " + path).c_str(), "r");
  REQUIRE(pipe != nullptr);
  Normalizer nfkc(NormalForm::kNfkc, false);
  Normalizer nfkc_cf(NormalForm::kNfkcCasefold, false);
  std::vector<bool> in_part1(0x110000, false);
  int part = -1;
  size_t lines = 0, failures = 0, cf_failures = 0;
  char buf[4096];
  while (std::fgets(buf, sizeof buf, pipe) != nullptr) {
    std::string line(buf);
    if (line.rfind("@Part", 0) == 0) {
      part = std::atoi(line.c_str() + 5);
      continue;
    }
    const auto f = UcdFields(line);
    if (f.size() < 5) continue;
    ++lines;
    std::string c[5];
    for (int k = 0; k < 5; ++k) c[k] = HexSequenceToUtf8(f[k]);
    if (part == 1) in_part1[std::stoul(f[0], nullptr, 16)] = true;
    for (int k = 0; k < 5; ++k) {
      std::string got;
      nfkc.AppendNormalized(c[k], &got);
      if (got != c[3]) {
        if (++failures <= 10) FAIL_CHECK("line " << f[0] << " c" << k + 1 << ": " << Hex(got));
      }
      // The NFKC_Casefold form, cluster by cluster, against utf8proc's whole-string
      // utf8proc_NFKC_Casefold on the same input.
      std::string got_cf;
      nfkc_cf.AppendNormalized(c[k], &got_cf);
      if (got_cf != Utf8procMap(c[k], true)) {
        if (++cf_failures <= 10) FAIL_CHECK("NFKC_CF line " << f[0] << " c" << k + 1);
      }
    }
  }
  ::pclose(pipe);
  // 19074 test lines in Unicode 15.0.0 (REFERENCES.md).
  CHECK(lines == 19074);
  CHECK(failures == 0);
  CHECK(cf_failures == 0);

  // "For every code point X assigned in this version of Unicode that is not
  // specifically listed in Part 1, the following invariants must be true for all
  // conformant implementations: X == toNFKC(X)" (NormalizationTest.txt header). We
  // check it for all scalar values not in Part 1.
  size_t identity_failures = 0, checked = 0;
  for (char32_t cp = 0; cp < 0x110000; ++cp) {
    if (cp >= 0xD800 && cp <= 0xDFFF) continue;
    if (in_part1[cp]) continue;
    const std::string x = Utf8Of(cp);
    std::string got;
    nfkc.AppendNormalized(x, &got);
    ++checked;
    if (got != x && ++identity_failures <= 10) FAIL_CHECK("U+" << std::hex << uint32_t(cp));
  }
  CHECK(checked > 1000000);
  CHECK(identity_failures == 0);
}

TEST_CASE("Full case folding: CaseFolding.txt status C and F", "[normalize][unicode]") {
  // Source: Unicode 15.0.0 CaseFolding.txt; full case folding = mappings with status
  // C (common) and F (full); 1530 of them (REFERENCES.md).
  size_t mappings = 0, failures = 0;
  ForEachUcdLine(kUcdDir + "CaseFolding.txt", [&](const std::vector<std::string>& f) {
    if (f.size() < 3 || (f[1] != "C" && f[1] != "F")) return;
    ++mappings;
    const std::string from = HexSequenceToUtf8(f[0]);
    const std::string want = HexSequenceToUtf8(f[2]);
    if (CaseFold(from) != want && ++failures <= 10) FAIL_CHECK("U+" << f[0]);
  });
  CHECK(mappings == 1530);
  CHECK(failures == 0);
  // Code points without a C/F line fold to themselves (spot values from the file's
  // absence of lines: digits, CJK, already lower case).
  CHECK(CaseFold("a1\xE6\xBC\xA2") == "a1\xE6\xBC\xA2");
}

TEST_CASE("NFKC_Casefold: DerivedNormalizationProps.txt NFKC_CF", "[normalize][unicode]") {
  // Source: Unicode 15.0.0 DerivedNormalizationProps.txt, property NFKC_CF (the
  // standard's NFKC_Casefold mapping; code points not listed map to themselves),
  // assigned code points per extracted/DerivedGeneralCategory.txt.
  std::vector<std::string> mapping(0x110000);
  std::vector<bool> listed(0x110000, false);
  size_t listed_count = 0;
  ForEachUcdLine(kUcdDir + "DerivedNormalizationProps.txt", [&](const std::vector<std::string>& f) {
    if (f.size() < 3 || f[1] != "NFKC_CF") return;
    const auto [a, b] = UcdRange(f[0]);
    const std::string m = HexSequenceToUtf8(f[2]);
    for (char32_t c = a; c <= b; ++c) {
      mapping[c] = m;
      listed[c] = true;
      ++listed_count;
    }
  });
  CHECK(listed_count == 10491);  // REFERENCES.md: NFKC_CF lists 10491 code points
  const auto gc = testing::LoadGeneralCategories();
  const auto ignorable =
      testing::LoadBinaryProperty("DerivedCoreProperties.txt", "Default_Ignorable_Code_Point");
  Normalizer n(NormalForm::kNfkcCasefold, false);
  size_t assigned = 0, failures = 0, unassigned_differences = 0, unassigned_not_ignorable = 0;
  for (char32_t cp = 0; cp < 0x110000; ++cp) {
    if (cp >= 0xD800 && cp <= 0xDFFF) continue;  // surrogates have no UTF-8 form
    const std::string x = Utf8Of(cp);
    const std::string want = listed[cp] ? mapping[cp] : x;
    std::string got;
    n.AppendNormalized(x, &got);
    if (gc[cp] != "Cn") {
      ++assigned;
      if (got != want && ++failures <= 10) FAIL_CHECK("U+" << std::hex << uint32_t(cp));
    } else if (got != want) {
      // Documented exception (REFERENCES.md, docs/text_rules.md): utf8proc keeps
      // unassigned default-ignorable code points that NFKC_CF deletes.
      ++unassigned_differences;
      if (!ignorable[cp]) ++unassigned_not_ignorable;
    }
  }
  CHECK(assigned > 280000);
  CHECK(failures == 0);
  CHECK(unassigned_not_ignorable == 0);
  // Bound: exactly the unassigned Default_Ignorable_Code_Points (3769 in Unicode 15.0:
  // DerivedCoreProperties.txt minus the assigned ones), none of which can occur in
  // text written with Unicode 15.0.
  size_t unassigned_ignorable = 0;
  for (char32_t cp = 0; cp < 0x110000; ++cp) {
    if (ignorable[cp] && gc[cp] == "Cn") ++unassigned_ignorable;
  }
  CHECK(unassigned_ignorable == 3769);
  CHECK(unassigned_differences == unassigned_ignorable);

  // Why NFKC_Casefold and not "NFKC, then full case folding" (docs/text_rules.md): the
  // two differ on about 430 assigned code points (REFERENCES.md), mostly
  // default-ignorables that NFKC keeps (U+00AD SOFT HYPHEN, U+200B ZERO WIDTH SPACE).
  size_t differ = 0, differ_ignorable = 0;
  for (char32_t cp = 0; cp < 0x110000; ++cp) {
    if ((cp >= 0xD800 && cp <= 0xDFFF) || gc[cp] == "Cn") continue;
    const std::string two_step = NormalizeNfkc(CaseFold(NormalizeNfkc(Utf8Of(cp))));
    const std::string want = listed[cp] ? mapping[cp] : Utf8Of(cp);
    if (two_step != want) {
      ++differ;
      if (ignorable[cp]) ++differ_ignorable;
    }
  }
  INFO("NFKC+casefold differs from NFKC_CF on " << differ << " assigned code points, "
                                                << differ_ignorable << " default-ignorable");
  CHECK(differ > 350);
  CHECK(differ < 500);
  CHECK(differ_ignorable * 2 > differ);  // mostly default-ignorables
  CHECK(NormalizeNfkc(CaseFold(NormalizeNfkc("co\xC2\xAD" "op"))) == "co\xC2\xAD" "op");
}

TEST_CASE("NFKC_Casefold worked values", "[normalize]") {
  TextOptions o;
  // Source: REFERENCES.md small worked values.
  CHECK(NormalizeText("\xEF\xBC\xB3\xEF\xBC\xB4\xEF\xBC\xB2\xEF\xBC\xA1\xC3\x9F\xEF\xBC\xA5", o) ==
        "strasse");                                             // ＳＴＲＡßＥ
  CHECK(NormalizeText("\xEF\xAC\x81", o) == "fi");              // U+FB01 ﬁ
  CHECK(NormalizeText("\xE2\x84\xA2", o) == "tm");              // U+2122 ™
  CHECK(NormalizeText("\xE2\x91\xA0", o) == "1");               // U+2460 ①
  CHECK(NormalizeText("\xCE\xA3\xCE\x91\xCE\xA3", o) == "\xCF\x83\xCE\xB1\xCF\x83");  // ΣΑΣ -> σασ
  CHECK(NormalizeText("\xEF\xBC\x8C", o) == ",");               // U+FF0C -> ,
  // U+00AD SOFT HYPHEN is Default_Ignorable (DerivedCoreProperties.txt): deleted.
  CHECK(NormalizeText("co\xC2\xAD" "op", o) == "coop");
  // Accent stripping: canonical decomposition, drop Mn, recompose (é -> e, but
  // U+00DF ß still folds to ss and Ω-with-tonos to ω).
  TextOptions strip;
  strip.strip_accents = true;
  CHECK(NormalizeText("Caf\xC3\xA9 Stra\xC3\x9F" "e \xCE\x8F", strip) == "cafe strasse \xCF\x89");
  CHECK(NormalizeText("Caf\xC3\xA9", o) == "caf\xC3\xA9");
  // Composition across the fast path boundary: e + U+0301 -> U+00E9.
  CHECK(NormalizeText("e\xCC\x81", o) == "\xC3\xA9");
}

TEST_CASE("Cluster rule premises hold in UnicodeData.txt", "[normalize][unicode]") {
  // The cluster boundary rule (normalizer.h) relies on two facts of the Unicode 15.0
  // data, checked here from UnicodeData.txt: (1) every code point with a non-zero
  // canonical combining class is a mark (M*); (2) the second code point of every
  // two-code-point canonical decomposition (a composition pair) is a mark. Hangul
  // L+V and LV+T pairs are algorithmic (section 3.12) and covered by the jamo rule.
  size_t nonzero_ccc = 0, pairs = 0, bad = 0;
  std::map<char32_t, std::string> category;
  std::vector<std::pair<char32_t, char32_t>> second;
  ForEachUcdLine(kUcdDir + "UnicodeData.txt", [&](const std::vector<std::string>& f) {
    const auto cp = static_cast<char32_t>(std::stoul(f[0], nullptr, 16));
    category[cp] = f[2];
    if (f[3] != "0") {
      ++nonzero_ccc;
      if (f[2][0] != 'M' && ++bad <= 5) FAIL_CHECK("ccc>0 non-mark U+" << f[0]);
    }
    if (!f[5].empty() && f[5][0] != '<') {
      std::stringstream ss(f[5]);
      std::string a, b, extra;
      ss >> a >> b;
      if (!b.empty() && !(ss >> extra)) {
        ++pairs;
        second.emplace_back(cp, static_cast<char32_t>(std::stoul(b, nullptr, 16)));
      }
    }
  });
  for (const auto& [cp, s] : second) {
    if (category[s][0] != 'M' && ++bad <= 10) FAIL_CHECK("pair second non-mark for U+" << std::hex << uint32_t(cp));
  }
  CHECK(nonzero_ccc > 900);
  CHECK(pairs > 900);
  CHECK(bad == 0);
}

TEST_CASE("Ideographic blocks cover the Han, Hiragana, Katakana and Hangul scripts",
          "[normalize][unicode]") {
  // Source: Unicode 15.0.0 Scripts.txt. Every letter or number of these four scripts
  // that NFKC_Casefold leaves unchanged is a single-character token (kIdeograph), or a
  // Hangul medial/final jamo (kAttach).
  const auto gc = testing::LoadGeneralCategories();
  Normalizer n(NormalForm::kNfkcCasefold, false);
  size_t checked = 0, bad = 0;
  ForEachUcdLine(kUcdDir + "Scripts.txt", [&](const std::vector<std::string>& f) {
    if (f[1] != "Han" && f[1] != "Hiragana" && f[1] != "Katakana" && f[1] != "Hangul") return;
    const auto [a, b] = UcdRange(f[0]);
    for (char32_t c = a; c <= b; ++c) {
      const char g = gc[c][0];
      if (g != 'L' && g != 'N') continue;
      std::string got;
      n.AppendNormalized(Utf8Of(c), &got);
      if (got != Utf8Of(c)) continue;  // not stable: its normalization is classified
      ++checked;
      const CharClass cc = ClassifyCodePoint(c);
      const bool ok = cc == CharClass::kIdeograph ||
                      (cc == CharClass::kAttach && IsHangulMedialOrFinal(c));
      if (!ok && ++bad <= 10) FAIL_CHECK(f[1] << " U+" << std::hex << uint32_t(c));
    }
  });
  CHECK(checked > 90000);
  CHECK(bad == 0);
  // And the ranges hold no Latin, Greek or Cyrillic letters (Scripts.txt: those
  // scripts lie below U+1100 or in U+1D00..U+1FFF, U+2C00.., U+A640.., U+FF21..).
  CHECK(ClassifyCodePoint(U'a') == CharClass::kWord);
  CHECK(ClassifyCodePoint(0x0436) == CharClass::kWord);   // Cyrillic zhe
  CHECK(ClassifyCodePoint(0xFF41) == CharClass::kWord);   // fullwidth a (before NFKC)
  CHECK(ClassifyCodePoint(0x3002) == CharClass::kSeparator);  // 。 Po
  CHECK(ClassifyCodePoint(0x0301) == CharClass::kAttach);     // Mn
}

TEST_CASE("Ill-formed UTF-8 becomes U+FFFD per maximal subpart", "[normalize]") {
  // Unicode 15.0 section 3.9, Table 3-8 example: 61 F1 80 80 E1 80 C2 62 80 63 80 BF 64
  // -> a FFFD FFFD FFFD b FFFD c FFFD FFFD d.
  const std::string in = "\x61\xF1\x80\x80\xE1\x80\xC2\x62\x80\x63\x80\xBF\x64";
  const std::string r = "\xEF\xBF\xBD";
  CHECK(NormalizeNfkc(in) == "a" + r + r + r + "b" + r + "c" + r + r + "d");
  Normalizer n(NormalForm::kNfkcCasefold, false);
  std::string out;
  CHECK(n.AppendNormalized(in, &out) == 9);  // 3 + 2 + 1 + 1 + 1 + 1 bytes replaced
  // Surrogates, overlongs, beyond U+10FFFF (Table 3-7).
  CHECK(NormalizeNfkc("\xED\xA0\x80") == r + r + r);
  CHECK(NormalizeNfkc("\xC0\xAF") == r + r);
  CHECK(NormalizeNfkc("\xF4\x90\x80\x80") == r + r + r + r);
  CHECK(NormalizeNfkc("\xF0\x9F\x98") == r);  // truncated at the end: one subpart
}

TEST_CASE("Cluster route equals utf8proc whole-string on random mixed text", "[normalize]") {
  // Random strings from a pool that stresses cluster boundaries (marks before and
  // after starters, Hangul jamo, ignorables, compatibility characters), compared
  // with utf8proc_NFKC_Casefold / utf8proc_NFKC on the whole string.
  const std::vector<std::string> pool = {
      "a", "E", " ", "e", "\xCC\x81" /*U+0301*/, "\xCC\xA3" /*U+0323*/, "\xCD\x85" /*U+0345*/,
      "\xC2\xAD" /*SHY*/, "\xCD\x8F" /*CGJ*/, "\xE2\x80\x8D" /*ZWJ*/, "\xE1\x84\x80" /*L*/,
      "\xE1\x85\xA1" /*V*/, "\xE1\x86\xA8" /*T*/, "\xEA\xB0\x80" /*가*/, "\xEF\xBD\xB6" /*ｶ*/,
      "\xEF\xBE\x9E" /*ﾞ*/, "\xE3\x82\x99" /*U+3099*/, "\xC2\xBD" /*½*/, "\xEF\xAC\x81" /*ﬁ*/,
      "\xE0\xAD\x87" /*U+0B47*/, "\xE0\xAC\xBE" /*U+0B3E*/, "\xE0\xAD\x96" /*U+0B56*/,
      "\xCE\xA3", "\xE1\xBE\xBE", "\xE6\xBC\xA2", "\xF0\x9F\x98\x80", "\xFF", "\xE2\x82"};
  std::mt19937_64 rng(20240601);
  Normalizer cf(NormalForm::kNfkcCasefold, false);
  Normalizer k(NormalForm::kNfkc, false);
  size_t failures = 0;
  for (int iter = 0; iter < 20000; ++iter) {
    std::string s;
    const int len = 1 + static_cast<int>(rng() % 12);
    for (int j = 0; j < len; ++j) s += pool[rng() % pool.size()];
    std::string got_cf, got_k;
    cf.AppendNormalized(s, &got_cf);
    k.AppendNormalized(s, &got_k);
    // utf8proc_map rejects ill-formed input, so it gets our U+FFFD repair first.
    std::string valid;
    {
      const auto* p = reinterpret_cast<const unsigned char*>(s.data());
      const auto* e = p + s.size();
      while (p < e) {
        const Decoded d = DecodeUtf8(p, e);
        AppendUtf8(d.cp, &valid);
        p += d.len;
      }
    }
    if (got_cf != Utf8procMap(valid, true) && ++failures <= 10) FAIL_CHECK("cf: " << Hex(s));
    if (got_k != Utf8procMap(valid, false) && ++failures <= 10) FAIL_CHECK("nfkc: " << Hex(s));
  }
  CHECK(failures == 0);
}

}  // namespace
}  // namespace tidemark::normalize
