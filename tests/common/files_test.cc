#include "pipeline/common/files.h"

#include <gtest/gtest.h>

#include <filesystem>

#include "pipeline/common/diagnostics.h"

namespace sorbtrace {
namespace {

// FIPS 180-2, Appendix B.1: SHA-256("abc").
TEST(Sha256Test, MatchesFips180Example) {
  EXPECT_EQ(Sha256Hex("abc"), "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad");
}

// FIPS 180-2: SHA-256 of the empty message.
TEST(Sha256Test, EmptyMessage) {
  EXPECT_EQ(Sha256Hex(""), "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855");
}

TEST(AtomicWriteTest, WritesAndReplacesWithoutLeavingTemporaries) {
  const auto dir = std::filesystem::temp_directory_path() / "sorbtrace_files_test";
  std::filesystem::remove_all(dir);
  std::filesystem::create_directories(dir);
  const auto path = dir / "out.txt";
  WriteFileAtomically(path, "first");
  WriteFileAtomically(path, "second");
  EXPECT_EQ(ReadWholeFile(path), "second");
  EXPECT_EQ(Sha256HexOfFile(path), Sha256Hex("second"));
  int entries = 0;
  for ([[maybe_unused]] const auto& entry : std::filesystem::directory_iterator(dir)) ++entries;
  EXPECT_EQ(entries, 1);
  std::filesystem::remove_all(dir);
}

TEST(DiagnosticTest, FormatsFileLineColumnAndExpectation) {
  const InputError error(SourceLocation{"data/w.csv", 12, 3}, "mass is negative",
                         "a positive mass in g");
  EXPECT_STREQ(error.what(), "data/w.csv:12:3: error: mass is negative; expected a positive mass in g");
}

TEST(DiagnosticTest, MissingFileNamesTheFile) {
  try {
    ReadWholeFile("/nonexistent/dir/x.csv");
    FAIL() << "no exception";
  } catch (const InputError& error) {
    EXPECT_EQ(error.diagnostic().where.file, "/nonexistent/dir/x.csv");
  }
}

}  // namespace
}  // namespace sorbtrace
