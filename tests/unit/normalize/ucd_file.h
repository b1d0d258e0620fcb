// Reading Unicode Character Database files (package unicode-data, Unicode 15.0.0,
// /usr/share/unicode) for the normalization tests.
#ifndef TIDEMARK_TESTS_UNIT_NORMALIZE_UCD_FILE_H_
#define TIDEMARK_TESTS_UNIT_NORMALIZE_UCD_FILE_H_

#include <cstdint>
#include <cstdio>
#include <fstream>
#include <functional>
#include <sstream>
#include <stdexcept>
#include <string>
#include <vector>

#include "normalize/normalizer.h"

namespace tidemark::testing {

inline const std::string kUcdDir = "/usr/share/unicode/";

inline std::string Trim(const std::string& s) {
  size_t b = s.find_first_not_of(" \t");
  if (b == std::string::npos) return "";
  size_t e = s.find_last_not_of(" \t\r");
  return s.substr(b, e - b + 1);
}

/// Splits a UCD data line (comment removed) at ';' into trimmed fields.
inline std::vector<std::string> UcdFields(std::string line) {
  const size_t hash = line.find('#');
  if (hash != std::string::npos) line.resize(hash);
  std::vector<std::string> out;
  if (Trim(line).empty()) return out;
  std::stringstream ss(line);
  std::string f;
  while (std::getline(ss, f, ';')) out.push_back(Trim(f));
  if (!line.empty() && line.back() == ';') out.push_back("");
  return out;
}

/// "0041..005A" or "00C0" -> [first, last].
inline std::pair<char32_t, char32_t> UcdRange(const std::string& f) {
  const size_t dots = f.find("..");
  if (dots == std::string::npos) {
    const auto v = static_cast<char32_t>(std::stoul(f, nullptr, 16));
    return {v, v};
  }
  return {static_cast<char32_t>(std::stoul(f.substr(0, dots), nullptr, 16)),
          static_cast<char32_t>(std::stoul(f.substr(dots + 2), nullptr, 16))};
}

/// "0044 0307" -> UTF-8.
inline std::string HexSequenceToUtf8(const std::string& f) {
  std::stringstream ss(f);
  std::string h;
  std::string out;
  while (ss >> h) normalize::AppendUtf8(static_cast<char32_t>(std::stoul(h, nullptr, 16)), &out);
  return out;
}

inline std::string Utf8Of(char32_t cp) {
  std::string s;
  normalize::AppendUtf8(cp, &s);
  return s;
}

/// Calls fn(fields) for each data line of a UCD text file.
inline void ForEachUcdLine(const std::string& path,
                           const std::function<void(const std::vector<std::string>&)>& fn) {
  std::ifstream in(path);
  if (!in) throw std::runtime_error("cannot read " + path);
  std::string line;
  while (std::getline(in, line)) {
    auto f = UcdFields(line);
    if (!f.empty()) fn(f);
  }
}

/// General_Category per code point from extracted/DerivedGeneralCategory.txt
/// (unlisted code points are Cn).
inline std::vector<std::string> LoadGeneralCategories() {
  std::vector<std::string> gc(0x110000, "Cn");
  ForEachUcdLine(kUcdDir + "extracted/DerivedGeneralCategory.txt", [&](const auto& f) {
    const auto [a, b] = UcdRange(f[0]);
    for (char32_t c = a; c <= b; ++c) gc[c] = f[1];
  });
  return gc;
}

/// Code points with a binary property from a property file (e.g. DerivedCoreProperties.txt).
inline std::vector<bool> LoadBinaryProperty(const std::string& file, const std::string& name) {
  std::vector<bool> v(0x110000, false);
  ForEachUcdLine(kUcdDir + file, [&](const auto& f) {
    if (f.size() >= 2 && f[1] == name) {
      const auto [a, b] = UcdRange(f[0]);
      for (char32_t c = a; c <= b; ++c) v[c] = true;
    }
  });
  return v;
}

}  // namespace tidemark::testing

#endif  // TIDEMARK_TESTS_UNIT_NORMALIZE_UCD_FILE_H_
