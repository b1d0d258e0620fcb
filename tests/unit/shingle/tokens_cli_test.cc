// `tidemark tokens`: its JSON Lines, read back with Python's json module (Debian
// /usr/bin/python3), must carry exactly the library's tokens, spans and fingerprints.
#include <catch2/catch.hpp>

#include <algorithm>
#include <sstream>
#include <string>
#include <vector>

#include "common/text_util.h"
#include "test_util.h"
#include "tidemark/tokenizer.h"

namespace tidemark {
namespace {

// Python flattens each JSON line to "R source line id n invalid" + "T t b e" + "F i fp".
const char* kFlatten =
    "import json,sys\n"
    "for l in sys.stdin:\n"
    "  r=json.loads(l)\n"
    "  print('R',r['source'],r['line'],r['id'],r['n'],r['invalid_utf8'])\n"
    "  for t in r['tokens']: print('T',t['t'].encode().hex(),t['b'],t['e'])\n"
    "  for f in r.get('fingerprints',[]): print('F',f['i'],f['fp'])\n";

std::string Expected(const std::string& source, int line, const std::string& id,
                     const std::string& text, const TextOptions& o) {
  Tokenizer tk(o);
  std::vector<Token> tokens;
  std::vector<std::string> norm;
  tk.TokenizeWithText(text, &tokens, &norm);
  std::vector<uint64_t> fps;
  ComputeFingerprints(tokens, o, &fps);
  std::ostringstream out;
  out << "R " << source << " " << line << " " << id << " " << o.ngram << " "
      << tk.invalid_utf8_bytes() << "\n";
  for (size_t i = 0; i < tokens.size(); ++i) {
    static const char* d = "0123456789abcdef";
    std::string hex;
    for (unsigned char c : norm[i]) {
      hex += d[c >> 4];
      hex += d[c & 15];
    }
    out << "T " << hex << " " << tokens[i].begin << " " << tokens[i].end << "\n";
  }
  for (size_t i = 0; i < fps.size(); ++i) out << "F " << i << " " << Hex64(fps[i]) << "\n";
  return out.str();
}

TEST_CASE("tokens CLI output matches the library", "[shingle][cli]") {
  const std::string dir = testing::ScratchDir("tokens_cli");
  testing::WriteFile(dir + "/flatten.py", kFlatten);
  const std::string text1 = "\xEF\xBC\xA8\xEF\xBD\x85llo, na\xC3\xAFve co\xC2\xAD" "op \xC2\xBD \xE6\x9D\xB1\xE4\xBA\xAC" "2024!";
  const std::string text2 = "In the beginning God created the heaven and the earth. bad\xFF" "byte";
  // A JSONL corpus, with a record lacking the field (skipped and counted).
  std::string jsonl = "{\"id\":\"gen1\",\"text\":\"In the beginning God created the heaven and the earth.\"}\n"
                      "{\"id\":\"x\",\"other\":1}\n";
  testing::WriteFile(dir + "/c.jsonl", jsonl);
  testing::WriteFile(dir + "/t1.txt", text1);
  testing::WriteFile(dir + "/t2.txt", text2);
  TextOptions o;
  o.ngram = 3;
  int rc = -1;
  const std::string cli = testing::CliPath() + " -q tokens -n 3 ";
  // --text: source "--text", line = id = position.
  std::string got = testing::RunCommand(cli + "--text \"$(cat " + dir + "/t1.txt)\" | /usr/bin/python3 " +
                                            dir + "/flatten.py",
                                        &rc);
  CHECK(rc == 0);
  CHECK(got == Expected("--text", 1, "1", text1, o));
  // A plain .txt file is one document; ill-formed bytes are counted per record.
  got = testing::RunCommand(cli + dir + "/t2.txt -o " + dir + "/out.jsonl && /usr/bin/python3 " + dir +
                                "/flatten.py < " + dir + "/out.jsonl",
                            &rc);
  CHECK(rc == 0);
  CHECK(got == Expected(dir + "/t2.txt", 1, "1", text2, o));
  // JSONL with an id field.
  got = testing::RunCommand(cli + "--id-field id " + dir + "/c.jsonl | /usr/bin/python3 " + dir +
                                "/flatten.py",
                            &rc);
  CHECK(rc == 0);
  CHECK(got == Expected(dir + "/c.jsonl", 1, "gen1",
                        "In the beginning God created the heaven and the earth.", o));
  // --table: one header line, a line per token and per fingerprint, the same values.
  got = testing::RunCommand(cli + "--table " + dir + "/t2.txt", &rc);
  CHECK(rc == 0);
  {
    Tokenizer tk(o);
    std::vector<Token> tokens;
    std::vector<std::string> norm;
    tk.TokenizeWithText(text2, &tokens, &norm);
    std::vector<uint64_t> fps;
    ComputeFingerprints(tokens, o, &fps);
    CHECK(static_cast<size_t>(std::count(got.begin(), got.end(), '\n')) == 1 + tokens.size() + fps.size());
    CHECK(got.find("  token    2  beginning") != std::string::npos);
    CHECK(got.find("bytes 7..16") != std::string::npos);
    CHECK(got.find("  print    0  " + Hex64(fps[0]) + "  tokens 0..2  in the beginning") != std::string::npos);
    CHECK(got.find(" 1 invalid UTF-8 bytes") != std::string::npos);
  }
  // Usage errors: nothing to tokenize (2); a bad option value (InvalidArgument).
  testing::RunCommand(testing::CliPath() + " tokens 2>/dev/null", &rc);
  CHECK(rc == 2);
  testing::RunCommand(testing::CliPath() + " tokens -n 0 --text x 2>/dev/null", &rc);
  CHECK(rc != 0);
  testing::RunCommand(testing::CliPath() + " tokens " + dir + "/missing.jsonl 2>/dev/null", &rc);
  CHECK(rc == 1);
}

}  // namespace
}  // namespace tidemark
