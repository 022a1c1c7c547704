// TomlReader (pipeline/common/toml_reader.h): every getter reports at the key's line and column
// in the one wording the header documents, for the job file, its settings and templates alike.
#include "pipeline/common/toml_reader.h"

#include <gtest/gtest.h>

#include <string>
#include <string_view>

#include "pipeline/common/bounded_input.h"

namespace sorbtrace {
namespace {

// The message of the InputError `read` throws ("" when it throws none).
template <typename Read>
std::string ErrorOf(Read&& read) {
  try {
    read();
  } catch (const InputError& error) {
    return error.what();
  }
  return "";
}

toml::table Parse(std::string_view text) { return ParseTomlText(text, "t.toml", "a TOML file"); }

TEST(TomlReaderTest, UnknownKeyListsTheAllowedKeysInOrder) {
  const toml::table root = Parse("[fit]\nseed = 1\nbootstrapp = 5\n");
  const TomlReader in("t.toml");
  const toml::table& fit = in.Table(root, "fit");
  EXPECT_EQ(ErrorOf([&] {
              in.CheckKeys(fit, "[fit]", {"seed", "bootstrap"});
            }),
            "t.toml:3:1: error: unknown key 'bootstrapp' in [fit]; expected one of: seed, "
            "bootstrap");
  EXPECT_EQ(ErrorOf([&] { in.CheckKeys(root, "", {"job"}); }),
            "t.toml:1:2: error: unknown key 'fit' at top level; expected one of: job");
  EXPECT_EQ(ErrorOf([&] { in.CheckKeys(fit, "[fit]", {"bootstrapp", "seed"}); }), "");
}

TEST(TomlReaderTest, MissingAndMistypedKeys) {
  const toml::table root = Parse("[job]\nid = 7\nflag = \"yes\"\n");
  const TomlReader in("t.toml");
  const toml::table& job = in.Table(root, "job");
  EXPECT_EQ(ErrorOf([&] { in.String(job, "[job]", "title", true); }),
            "t.toml:1:1: error: missing key 'title' in [job]; expected title (a string)");
  EXPECT_EQ(ErrorOf([&] { in.String(job, "[job]", "id", true); }),
            "t.toml:2:6: error: key 'id' in [job] is not a string; expected a quoted string");
  EXPECT_EQ(ErrorOf([&] { in.Bool(job, "[job]", "flag"); }),
            "t.toml:3:8: error: key 'flag' in [job] is not a boolean; expected true or false");
  EXPECT_FALSE(in.String(job, "[job]", "title", false).has_value());
  EXPECT_EQ(*in.Number(job, "[job]", "id", true), 7.0);
  EXPECT_EQ(ErrorOf([&] { in.Table(root, "material"); }),
            "t.toml:1:1: error: missing table [material]; expected a [material] table in the file");
}

TEST(TomlReaderTest, NumbersAreFiniteAndWithinTheirRange) {
  const toml::table root =
      Parse("[fit]\nlevel = 1.5\ndraws = 100000\nsize = inf\nscale = -2\nname = 3.5\n");
  const TomlReader in("t.toml");
  const toml::table& fit = in.Table(root, "fit");
  EXPECT_EQ(ErrorOf([&] {
              in.Number(*fit.get("level"), {"[fit]", "level"}, 0.5, 0.9999);
            }),
            "t.toml:2:9: error: level = 1.5 in [fit] is out of range; expected a value from 0.5 "
            "to 0.9999");
  EXPECT_EQ(ErrorOf([&] {
              in.Integer(*fit.get("draws"), {"[fit]", "draws"}, 0, 10000);
            }),
            "t.toml:3:9: error: draws = 100000 in [fit] is out of range; expected a whole number "
            "from 0 to 10000");
  EXPECT_EQ(ErrorOf([&] {
              in.Integer(*fit.get("level"), {"[fit]", "level"});
            }),
            "t.toml:2:9: error: key 'level' in [fit] is not an integer; expected a whole number");
  EXPECT_EQ(ErrorOf([&] { in.Number(fit, "[fit]", "size", false); }),
            "t.toml:4:8: error: key 'size' in [fit] is not finite; expected a finite number");
  EXPECT_EQ(ErrorOf([&] { in.Positive(fit, "[fit]", "scale", false); }),
            "t.toml:5:9: error: key 'scale' in [fit] must be positive; expected a number above "
            "zero");
  EXPECT_EQ(in.Number(*fit.get("draws"), {"[fit]", "draws"}), 100000.0);
}

TEST(TomlReaderTest, ChoicesAndStringArrays) {
  const toml::table root =
      Parse("[pores]\ngeometry = \"slit\"\nfilm = \"none\"\nsections = [\"a\", 2]\n");
  const TomlReader in("t.toml");
  const toml::table& pores = in.Table(root, "pores");
  EXPECT_EQ(ErrorOf([&] {
              in.Choice(pores, "[pores]", "geometry", true, {"open_cylinder", "closed_cylinder"});
            }),
            "t.toml:2:12: error: 'slit' is not a valid geometry; expected one of "
            "\"open_cylinder\", \"closed_cylinder\"");
  EXPECT_EQ(*in.Choice(pores, "[pores]", "film", true, {"constant", "none"}), "none");
  EXPECT_EQ(ErrorOf([&] {
              in.StringArray(*pores.get("sections"), {"[pores]", "sections"});
            }),
            "t.toml:4:18: error: key 'sections' in [pores] is not an array of strings; expected "
            "[\"...\", ...]");
}

TEST(TomlReaderTest, NameOfFindsTheKeyHoldingANode) {
  const toml::table root =
      Parse("top = 1\n[layout]\nsections = [\"a\"]\n[[reference]]\nrh = 50\n[a.b]\nc = 2\n");
  const auto name = [&](const toml::node& node) {
    const auto found = TomlReader::NameOf(root, node);
    return found ? Describe(*found) : std::string("none");
  };
  EXPECT_EQ(name(*root.get("top")), "key 'top' at top level");
  EXPECT_EQ(name(*root["layout"]["sections"][0].node()), "key 'sections' in [layout]");
  EXPECT_EQ(name(*root["reference"][0]["rh"].node()), "key 'rh' in [[reference]]");
  EXPECT_EQ(name(*root["a"]["b"]["c"].node()), "key 'c' in [a.b]");
  const toml::table other = Parse("x = 1\n");
  EXPECT_EQ(name(*other.get("x")), "none");
}

}  // namespace
}  // namespace sorbtrace
