// LoadTemplate: the shipped templates load; errors name file, line, column and the key.
#include <gtest/gtest.h>

#include <fstream>
#include <string>

#include "pipeline/report/report.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace::report {
namespace {

std::string LoadError(const std::string& name, const std::string& toml) {
  const auto path = testing::WriteTempFile(name, toml);
  try {
    LoadTemplate(path);
  } catch (const InputError& e) {
    // Messages are compared without the temporary directory.
    std::string message = e.what();
    const std::string prefix = path.string();
    if (message.rfind(prefix, 0) == 0) message = name + message.substr(prefix.size());
    return message;
  }
  return "no error";
}

TEST(LoadTemplateTest, FullTemplate) {
  const Template t = LoadTemplate(SORBTRACE_SOURCE_DIR "/templates/full.toml");
  EXPECT_EQ(t.name, "full");
  EXPECT_EQ(t.page_size, PageSize::kA4);
  EXPECT_DOUBLE_EQ(t.margin_mm, 18.0);
  EXPECT_FALSE(t.compact);
  EXPECT_TRUE(t.moisture_in_percent);
  EXPECT_EQ(t.uncertainty_significant_digits, 2);
  EXPECT_EQ(t.sections, (std::vector<std::string>{"summary", "conformity", "isotherm", "models",
                                                  "pores", "kinetics", "equilibria", "method",
                                                  "deviations", "cautions"}));
  ASSERT_EQ(t.reference_conditions.size(), 2u);
  EXPECT_DOUBLE_EQ(t.reference_conditions[0].temperature_K, 296.15);
  EXPECT_DOUBLE_EQ(t.reference_conditions[1].rh_fraction, 0.8);
}

// A template names no laboratory (the laboratory profile does): a [lab] table is refused at its
// line, pointing to the profile; the shipped templates hold none.
TEST(LoadTemplateTest, ALabTableIsRefusedPointingToTheLaboratoryProfile) {
  const auto path = testing::WriteTempFile(
      "with_lab.toml", "[template]\nname = \"x\"\n\n[lab]\nname = \"Some Lab\"\n");
  try {
    LoadTemplate(path);
    FAIL() << "a [lab] table was accepted";
  } catch (const InputError& e) {
    EXPECT_EQ(e.diagnostic().where.line, 4);
    EXPECT_NE(e.diagnostic().expected.find("lab_profile"), std::string::npos)
        << e.diagnostic().expected;
  }
  for (const char* name : {"full.toml", "summary.toml"}) {
    EXPECT_NO_THROW(LoadTemplate(std::string(SORBTRACE_SOURCE_DIR "/templates/") + name)) << name;
  }
}

TEST(LoadTemplateTest, SummaryTemplate) {
  const Template t = LoadTemplate(SORBTRACE_SOURCE_DIR "/templates/summary.toml");
  EXPECT_EQ(t.name, "summary");
  EXPECT_TRUE(t.compact);
  EXPECT_DOUBLE_EQ(t.margin_mm, 16.0);
}

TEST(LoadTemplateTest, OutputsChooseThePdfTheHtmlOrBoth) {
  const Template full = LoadTemplate(SORBTRACE_SOURCE_DIR "/templates/full.toml");
  EXPECT_TRUE(full.write_pdf);
  EXPECT_TRUE(full.write_html);
  const Template plain = LoadTemplate(testing::WriteTempFile("no_outputs.toml", "[layout]\n"));
  EXPECT_TRUE(plain.write_pdf);  // without the key: the PDF only, as before the key existed
  EXPECT_FALSE(plain.write_html);
  const Template html =
      LoadTemplate(testing::WriteTempFile("html.toml", "[layout]\noutputs = [\"html\"]\n"));
  EXPECT_FALSE(html.write_pdf);
  EXPECT_TRUE(html.write_html);
  EXPECT_EQ(LoadError("twice.toml", "[layout]\noutputs = [\"pdf\", \"pdf\"]\n"),
            "twice.toml:2:19: error: output \"pdf\" is unknown or listed twice; expected each of "
            "\"pdf\" or \"html\" at most once");
  EXPECT_EQ(LoadError("none.toml", "[layout]\noutputs = []\n"),
            "none.toml:2:11: error: no output is listed; expected at least one of \"pdf\" or "
            "\"html\"");
}

TEST(LoadTemplateTest, UnknownKeyNamesKeyLineAndColumn) {
  EXPECT_EQ(LoadError("unknown_key.toml", "[template]\nname = \"x\"\npagesize = \"A4\"\n"),
            "unknown_key.toml:3:1: error: unknown key 'pagesize' in [template]; expected one of: "
            "name, title, page_size, margin_mm");
  EXPECT_EQ(LoadError("unknown_table.toml", "[template]\nname = \"x\"\n\n[colours]\nink = 1\n"),
            "unknown_table.toml:4:2: error: unknown key 'colours' at top level; expected one of: "
            "template, units, layout, reference");
}

TEST(LoadTemplateTest, BadPageSize) {
  EXPECT_EQ(LoadError("bad_page.toml", "[template]\npage_size = \"A5\"\n"),
            "bad_page.toml:2:13: error: page_size \"A5\" is not supported; expected \"A4\" or "
            "\"letter\"");
}

TEST(LoadTemplateTest, OtherErrors) {
  EXPECT_EQ(LoadError("bad_section.toml", "[layout]\nsections = [\"summary\", \"graphs\"]\n"),
            "bad_section.toml:2:24: error: unknown section \"graphs\"; expected one of "
            "\"summary\", \"conformity\", \"isotherm\", \"models\", \"pores\", \"kinetics\", "
            "\"equilibria\", \"method\", \"deviations\" or \"cautions\"");
  EXPECT_EQ(LoadError("bad_digits.toml", "[units]\nuncertainty_significant_digits = 3\n"),
            "bad_digits.toml:2:34: error: uncertainty_significant_digits 3 is out of range; "
            "expected 1 or 2 (JCGM 100:2008, 7.2.6)");
  EXPECT_EQ(LoadError("bad_type.toml", "[template]\nmargin_mm = \"wide\"\n"),
            "bad_type.toml:2:13: error: key 'margin_mm' in [template] is not a number; expected a "
            "number");
  const std::string syntax = LoadError("syntax.toml", "[template\nname = 1\n");
  EXPECT_EQ(syntax.rfind("syntax.toml:1:", 0), 0u) << syntax;
  EXPECT_NE(syntax.find("error: TOML syntax: "), std::string::npos) << syntax;
}

}  // namespace
}  // namespace sorbtrace::report
