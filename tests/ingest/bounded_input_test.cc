// The limits every TOML and JSON reader applies before parsing (pipeline/common/bounded_input.h):
// nesting counted exactly at the limit, strings and comments skipped, excerpts of foreign
// text, the data-path policy and the refusal of folders and FIFOs. Limits: README "Limits of
// inputs" (32 TOML levels, 64 JSON levels, 128 KiB lines, 60-character excerpts).
#include "pipeline/common/bounded_input.h"

#include <gtest/gtest.h>
#include <sys/stat.h>

#include <filesystem>
#include <fstream>
#include <string>

#include "pipeline/common/diagnostics.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

std::string Repeat(const std::string& piece, int times) {
  std::string out;
  for (int i = 0; i < times; ++i) out += piece;
  return out;
}

// The location of the InputError `check` throws, or {"", -1, -1} when it throws none.
template <typename Check>
SourceLocation RefusedAt(Check check) {
  try {
    check();
  } catch (const InputError& error) {
    return error.diagnostic().where;
  }
  return {"", -1, -1};
}

TEST(BoundedInputTest, TomlNestingOfThirtyTwoLevelsPassesAndThirtyThreeIsRefusedWhereReached) {
  // Top-level key: level 1; the n-th '[' of its value level 1 + n (31 arrays: level 32).
  EXPECT_NO_THROW(CheckTomlLimits("x = " + Repeat("[", 31) + Repeat("]", 31) + "\n", "a.toml"));
  const SourceLocation at = RefusedAt(
      [] { CheckTomlLimits("x = " + Repeat("[", 32) + Repeat("]", 32) + "\n", "a.toml"); });
  EXPECT_EQ(at.file, "a.toml");
  EXPECT_EQ(at.line, 1);
  EXPECT_EQ(at.column, 4 + 32);  // the 32nd '[' (level 33)
  // Dotted key of 32 parts passes, 33 parts is refused at the 32nd dot (column 2 * 32).
  EXPECT_NO_THROW(CheckTomlLimits("a" + Repeat(".a", 31) + " = 1\n", "a.toml"));
  EXPECT_EQ(RefusedAt([] { CheckTomlLimits("a" + Repeat(".a", 32) + " = 1\n", "a.toml"); }).column,
            64);
  // A header of 32 parts passes; its keys add one more level each part.
  const std::string header = "[h" + Repeat(".h", 31) + "]\n";
  EXPECT_NO_THROW(CheckTomlLimits(header, "a.toml"));
  EXPECT_EQ(RefusedAt([&] { CheckTomlLimits(header + "k = 1\n", "a.toml"); }).line, 2);
  // After the header, a new header resets the level.
  EXPECT_NO_THROW(CheckTomlLimits(header + "[short]\nk.l = [[1]]\n", "a.toml"));
}

TEST(BoundedInputTest, BracketsAndDotsInStringsAndCommentsDoNotCount) {
  const std::string brackets = Repeat("[{.", 100);
  EXPECT_NO_THROW(CheckTomlLimits("a = \"" + brackets + "\" # " + brackets + "\n", "a.toml"));
  EXPECT_NO_THROW(CheckTomlLimits("a = '" + brackets + "'\n", "a.toml"));
  EXPECT_NO_THROW(CheckTomlLimits(
      "a = \"\"\"\n" + brackets + "\n\\\"\"\"\n" + brackets + "\"\"\"\nb = 1\n", "a.toml"));
  EXPECT_NO_THROW(CheckTomlLimits("a = '''" + brackets + "\n" + brackets + "'''\n", "a.toml"));
  EXPECT_NO_THROW(CheckTomlLimits("\"" + Repeat("a.", 100) + "\" = 1\n", "a.toml"));
  EXPECT_NO_THROW(
      CheckTomlLimits("x = 1.5\ny = [1.5, 2.5e3, 1979-05-27T07:32:00.999]\n", "a.toml"));
  // Multi-line arrays keep their level across lines; the line count goes on inside strings.
  const SourceLocation at = RefusedAt(
      [] { CheckTomlLimits("s = \"\"\"\none\ntwo\"\"\"\nx = [\n" + Repeat("[\n", 40), "a.toml"); });
  EXPECT_EQ(at.line, 35);  // line 4 holds the first '[' (level 2), line 4 + k level 2 + k
  EXPECT_EQ(at.column, 1);
  // JSON: escaped quotes stay inside the string.
  EXPECT_NO_THROW(CheckJsonLimits("{\"a\": \"\\\"" + Repeat("[", 100) + "\"}", "r.json"));
}

TEST(BoundedInputTest, JsonNestingOfSixtyFourPassesAndSixtyFiveIsRefused) {
  EXPECT_NO_THROW(CheckJsonLimits(Repeat("[", 64) + Repeat("]", 64), "r.json"));
  const SourceLocation at =
      RefusedAt([] { CheckJsonLimits("\n " + Repeat("[", 65) + Repeat("]", 65), "r.json"); });
  EXPECT_EQ(at.line, 2);
  EXPECT_EQ(at.column, 66);
  EXPECT_NO_THROW(ParseJsonText("{\"a\": [1, 2, {\"b\": null}]}", "r.json", "JSON"));
  const SourceLocation syntax =
      RefusedAt([] { ParseJsonText("{\n\"a\": [1, 2,, 3]}", "r.json", "JSON"); });
  EXPECT_EQ(syntax.line, 2);
  EXPECT_EQ(syntax.column, 12);  // the second comma
  // A number beyond a double is refused (not an escaping exception), at the number.
  const SourceLocation overflow =
      RefusedAt([] { ParseJsonText("{\"a\": [1,\n 2, 1e400]}", "r.json", "JSON"); });
  EXPECT_EQ(overflow.line, 2);
  EXPECT_EQ(overflow.column, 5);
}

TEST(BoundedInputTest, TomlLinesOfOneHundredTwentyEightKibibytesPass) {
  const std::string limit(std::size_t{128} << 10, 'x');
  EXPECT_NO_THROW(CheckTomlLimits("# " + limit.substr(2) + "\nx = 1\n", "a.toml"));
  const SourceLocation at = RefusedAt([&] { CheckTomlLimits("\n# " + limit + "\n", "a.toml"); });
  EXPECT_EQ(at.line, 2);
  EXPECT_EQ(at.column, (128 << 10) + 1);
}

TEST(BoundedInputTest, ExcerptCutsEscapesAndKeepsWholeCharacters) {
  EXPECT_EQ(Excerpt("plain"), "plain");
  EXPECT_EQ(Excerpt(std::string(61, 'a')), std::string(60, 'a') + "... (61 bytes)");
  EXPECT_EQ(Excerpt(std::string("a\0b\x1b", 4)), "a\\x00b\\x1b");
  EXPECT_EQ(Excerpt("\xff\xfe"), "\\xff\\xfe");  // not UTF-8
  EXPECT_EQ(Excerpt("25 \xc2\xb0"
                    "C"),
            "25 \xc2\xb0"
            "C");  // "25 °C" is kept
  // 60 characters of two bytes each: the cut falls between characters, never inside one.
  const std::string degrees = Repeat("\xc2\xb0", 61);
  EXPECT_EQ(Excerpt(degrees), Repeat("\xc2\xb0", 60) + "... (122 bytes)");
}

TEST(BoundedInputTest, DataPathPolicyKeepsFilesInsideTheFolderTree) {
  const fs::path root = fs::temp_directory_path() / "sorbtrace_bounded_policy";
  fs::remove_all(root);
  fs::create_directories(root / "job" / "data");
  fs::create_directories(root / "other");
  fs::create_directory_symlink(root / "other", root / "job" / "out_link");
  fs::create_directory_symlink(root / "job" / "data", root / "job" / "in_link");
  EXPECT_TRUE(LiesInsideFolder("data/a.csv", root / "job"));
  EXPECT_TRUE(LiesInsideFolder("a.csv", root / "job"));
  EXPECT_TRUE(LiesInsideFolder("data/../a.csv", root / "job"));
  EXPECT_TRUE(LiesInsideFolder("in_link/a.csv", root / "job"));
  EXPECT_FALSE(LiesInsideFolder("../other/a.csv", root / "job"));
  EXPECT_FALSE(LiesInsideFolder("data/../../other/a.csv", root / "job"));
  EXPECT_FALSE(LiesInsideFolder("/etc/passwd", root / "job"));
  EXPECT_FALSE(LiesInsideFolder("out_link/a.csv", root / "job"));
  EXPECT_FALSE(LiesInsideFolder("", root / "job"));
  EXPECT_FALSE(LiesInsideFolder(".", root / "job"));
  fs::remove_all(root);
}

TEST(BoundedInputTest, OnlyRegularFilesWithinTheSizeAreRead) {
  const fs::path root = fs::temp_directory_path() / "sorbtrace_bounded_files";
  fs::remove_all(root);
  fs::create_directories(root / "folder.toml");
  ASSERT_EQ(::mkfifo((root / "fifo.toml").c_str(), 0600), 0);
  std::ofstream(root / "ten.toml") << "0123456789";
  EXPECT_THROW(ReadBoundedFile(root / "folder.toml", "folder.toml", 100, "a file"), InputError);
  EXPECT_THROW(ReadBoundedFile(root / "fifo.toml", "fifo.toml", 100, "a file"), InputError);
  EXPECT_THROW(ReadBoundedFile(root / "missing.toml", "missing.toml", 100, "a file"), InputError);
  EXPECT_EQ(ReadBoundedFile(root / "ten.toml", "ten.toml", 10, "a file"), "0123456789");
  const SourceLocation at =
      RefusedAt([&] { ReadBoundedFile(root / "ten.toml", "ten.toml", 9, "a file"); });
  EXPECT_EQ(at.line, 1);
  EXPECT_EQ(at.column, 10);  // the 10th byte is past a 9-byte limit
  fs::remove_all(root);
}

}  // namespace
}  // namespace sorbtrace
