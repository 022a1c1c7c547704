// ResolvedPath / IsSameOrInside (pipeline/common/paths.h): the path rules of the data-safety
// checks (README, "Data safety"), on a scratch folder with a symbolic link.
#include "pipeline/common/paths.h"

#include <gtest/gtest.h>

#include <filesystem>

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;

TEST(PathsTest, SameOrInsideComparesWholeComponents) {
  EXPECT_TRUE(IsSameOrInside("/a/b", "/a/b"));
  EXPECT_TRUE(IsSameOrInside("/a/b/c", "/a/b"));
  EXPECT_FALSE(IsSameOrInside("/a/bc", "/a/b"));  // a sibling with a longer name
  EXPECT_FALSE(IsSameOrInside("/a", "/a/b"));
  EXPECT_FALSE(IsSameOrInside("/x/b", "/a/b"));
}

TEST(PathsTest, ResolvedPathFollowsLinksAndDotDot) {
  const fs::path root = fs::weakly_canonical(fs::temp_directory_path()) / "sorbtrace_paths_test";
  fs::remove_all(root);
  fs::create_directories(root / "real" / "sub");
  fs::create_directory_symlink(root / "real", root / "link");
  EXPECT_EQ(ResolvedPath(root / "link" / "sub"), root / "real" / "sub");
  EXPECT_EQ(ResolvedPath(root / "real" / "sub" / ".." / "new.txt"), root / "real" / "new.txt");
  EXPECT_TRUE(IsSameOrInside(ResolvedPath(root / "link" / "sub"), ResolvedPath(root / "real")));
  EXPECT_TRUE(ResolvedPath("relative/name").is_absolute());
  fs::create_symlink(root / "loop", root / "loop");  // a link loop: resolved as written
  EXPECT_EQ(ResolvedPath(root / "loop" / "x"), root / "loop" / "x");
  fs::remove_all(root);
}

}  // namespace
}  // namespace sorbtrace
