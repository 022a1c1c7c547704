#include "pipeline/run/audit.h"

#include <gtest/gtest.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "pipeline/common/diagnostics.h"

namespace sorbtrace::run {
namespace {

TEST(AuditCompareTest, IdenticalDocumentsPassEveryLeaf) {
  const auto doc = nlohmann::json::parse(R"({"a": 1.5, "b": {"c": [1, 2, "x"]}, "d": true})");
  const auto lines = CompareResults(doc, doc);
  ASSERT_EQ(lines.size(), 5u);
  for (const auto& line : lines) EXPECT_TRUE(line.passed) << line.pointer;
}

TEST(AuditCompareTest, ChangedNumberFailsAndNamesItsPointer) {
  const auto reported = nlohmann::json::parse(R"({"fits": [{"value": 0.0523}]})");
  const auto recomputed = nlohmann::json::parse(R"({"fits": [{"value": 0.0524}]})");
  const auto lines = CompareResults(reported, recomputed);
  ASSERT_EQ(lines.size(), 1u);
  EXPECT_FALSE(lines[0].passed);
  EXPECT_EQ(lines[0].pointer, "/fits/0/value");
  EXPECT_EQ(lines[0].reported, "0.0523");
}

TEST(AuditCompareTest, DifferenceInsideToleranceVersusOutside) {
  const double x = 0.123456789;
  const auto a = nlohmann::json{{"v", x}};
  const auto inside = nlohmann::json{{"v", x * (1 + 0.5 * kAuditRelativeTolerance)}};
  const auto outside = nlohmann::json{{"v", x * (1 + 10 * kAuditRelativeTolerance)}};
  EXPECT_TRUE(CompareResults(a, inside)[0].passed);
  EXPECT_FALSE(CompareResults(a, outside)[0].passed);
}

TEST(AuditCompareTest, MissingAndExtraKeysFail) {
  const auto a = nlohmann::json::parse(R"({"x": 1, "y": [1, 2]})");
  const auto b = nlohmann::json::parse(R"({"x": 1, "y": [1], "z": "new"})");
  int failed = 0;
  for (const auto& line : CompareResults(a, b)) failed += line.passed ? 0 : 1;
  EXPECT_EQ(failed, 2);  // /y/1 missing, /z extra
}

TEST(AuditCompareTest, ChangedTextFails) {
  const auto a = nlohmann::json{{"class", "hygroscopic"}};
  const auto b = nlohmann::json{{"class", "slightly hygroscopic"}};
  EXPECT_FALSE(CompareResults(a, b)[0].passed);
}

// The manifest is sha256sum's format (GNU coreutils: "<hex>  <name>"); SHA-256 of "abc" is
// ba7816bf...15ad (FIPS 180-2, appendix B.1).
TEST(OutputManifestTest, WritesAndReadsSha256sumLines) {
  const std::string text = OutputManifestText({{"a.txt", "abc"}, {"b.csv", ""}});
  EXPECT_EQ(text.substr(0, 72),
            "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad  a.txt\n");
  const auto entries = ParseOutputManifest("outputs.sha256", text);
  ASSERT_EQ(entries.size(), 2u);
  EXPECT_EQ(entries[0].file_name, "a.txt");
  EXPECT_EQ(entries[1].file_name, "b.csv");
  EXPECT_EQ(entries[1].sha256_hex,
            "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");  // empty input
}

TEST(OutputManifestTest, RefusesFoldersAndMalformedLinesAtTheirLine) {
  const std::string good =
      "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad  a.txt\n";
  for (const std::string& bad :
       {std::string("ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad  ../x\n"),
        std::string("BA7816BF8F01CFEA414140DE5DAE2223B00361A396177A9CB410FF61F20015AD  a\n"),
        std::string("ba78  a.txt\n"), std::string("\n")}) {
    try {
      ParseOutputManifest("outputs.sha256", good + bad);
      ADD_FAILURE() << "accepted: " << bad;
    } catch (const InputError& error) {
      EXPECT_EQ(error.diagnostic().where.line, 2) << bad;
    }
  }
}

// verify reads the manifest within kMaxOutputManifestBytes: a file at the cap is read, one byte
// more (or a folder) is refused with an InputError before any parsing.
TEST(OutputManifestTest, ReadingIsBoundedToTheCap) {
  namespace fs = std::filesystem;
  const fs::path dir = fs::temp_directory_path() / "sorbtrace_audit_manifest";
  fs::remove_all(dir);
  fs::create_directories(dir);
  const fs::path manifest = dir / "outputs.sha256";
  const auto write = [&](const std::string& bytes) {
    std::ofstream(manifest, std::ios::binary) << bytes;
  };
  const std::string line =
      "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad  a.txt\n";
  std::string lines;
  while (lines.size() + 2 * line.size() <= kMaxOutputManifestBytes) lines += line;
  write(lines);
  EXPECT_EQ(ReadOutputManifest(manifest).size(), lines.size() / line.size());
  // Exactly at the cap: read to its end, the last line refused by the parser.
  const std::string at_cap =
      lines + std::string(kMaxOutputManifestBytes - lines.size() - 1, 'x') + "\n";
  ASSERT_EQ(at_cap.size(), kMaxOutputManifestBytes);
  write(at_cap);
  try {
    ReadOutputManifest(manifest);
    ADD_FAILURE() << "the 'x' line is no manifest line";
  } catch (const InputError& error) {
    EXPECT_NE(error.diagnostic().message.find("not a manifest line"), std::string::npos)
        << error.what();
  }
  // One byte past the cap: refused before any parsing.
  write(at_cap + "y");
  try {
    ReadOutputManifest(manifest);
    ADD_FAILURE() << "a manifest past the cap was read";
  } catch (const InputError& error) {
    EXPECT_NE(error.diagnostic().message.find("goes on past 65536 bytes"), std::string::npos)
        << error.what();
  }
  EXPECT_THROW(ReadOutputManifest(dir), InputError);  // a folder
  fs::remove_all(dir);
}

}  // namespace
}  // namespace sorbtrace::run
