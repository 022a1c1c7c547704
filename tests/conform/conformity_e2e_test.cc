// Statements of conformity on the real binary, read as a reader reads them (pdftotext) and as
// results.json / conformity.csv record them:
//  - the lime-plaster demo: a guarded-acceptance specification (w = U) that passes, with the
//    probability of false acceptance at the acceptance limit 1 - Phi(2) = 2.28 %
//    (ILAC-G8:09/2019 §4.2.2 "< 2.5 %"; Phi(2) = 0.977250, Abramowitz & Stegun Table 26.1),
//    and a conformance-probability specification (JCGM 106:2012) that is inconclusive, whose
//    p_c is Phi((T_U - y)/u) recomputed here from the recorded y and u (JCGM 106 §7, normal
//    distribution for infinite nu_eff), and whose acceptance limit leaves 5 % at the limit;
//  - variants of that job with limits placed from its own recorded result: simple acceptance
//    that fails (risk 50 % at the limit, ILAC-G8:09/2019 §4.2.1), guarded acceptance with an
//    inconclusive zone (§4.2.3) that is inconclusive, and the same without the zone, a fail;
//  - headlines that are not available give "no statement: <reason>", never pass: the
//    excipient demo's 23 °C reference (measured at 25 °C), a temperature not measured, a model
//    result this job does not have;
//  - an unknown quantity key or a unit that does not fit: exit code 3, the message at the
//    specification's line lists the job's keys, nothing written; a malformed table: exit 3 at
//    its key for `check` and `make` alike;
//  - a job without specifications: no conformity section, no conformity.csv.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <nlohmann/json.hpp>
#include <regex>
#include <string>

#include "tests/common/e2e_support.h"
#include "tests/report/pdf_tools.h"

namespace sorbtrace {
namespace {

namespace fs = std::filesystem;
using Json = nlohmann::json;
using report::testing::CollapseSpaces;
using report::testing::PdfText;

using CommandRun = e2e::Outcome;
using e2e::ReadBytes;
using e2e::Sorbtrace;
using e2e::WriteBytes;

// Standard normal cumulative distribution, Phi(x) = erfc(-x / sqrt 2) / 2 (A&S 26.2.29).
double Phi(double x) { return 0.5 * std::erfc(-x / std::sqrt(2.0)); }

const fs::path kExamples = fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs";

// The lime demo job without its specifications (they are the last tables of the file).
std::string LimeJobWithoutSpecifications() {
  const std::string job = ReadBytes(kExamples / "lime_plaster_desiccator" / "job.toml");
  const size_t at = job.find("\n# Statements of conformity");
  return at == std::string::npos ? job : job.substr(0, at + 1);
}

class ConformityE2eTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    root_ = e2e::FreshDir("conformity", info->name());
  }
  void TearDown() override { fs::remove_all(root_); }

  // A copy of the lime demo whose job ends in `specifications`.
  fs::path LimeJob(const std::string& specifications) {
    const fs::path dir = root_ / "lime";
    fs::remove_all(dir);
    // The whole scenario (data, laboratory profile), then the job rewritten.
    fs::copy(kExamples / "lime_plaster_desiccator", dir, fs::copy_options::recursive);
    WriteBytes(dir / "job.toml", LimeJobWithoutSpecifications() + specifications);
    return dir / "job.toml";
  }

  // make JOB --out root_/NAME; the exit code, output and (on success) the folder.
  CommandRun Make(const fs::path& job, const std::string& name) {
    return Sorbtrace("make " + job.string() + " --out " + (root_ / name).string() + " -q");
  }

  fs::path root_;
};

// The recorded statement of specification `index` (0-based) of an output folder.
Json Statement(const fs::path& out, size_t index) {
  const Json results = Json::parse(ReadBytes(out / "results.json"));
  EXPECT_GT(results["conformity"].size(), index);
  return results["conformity"][index];
}

TEST_F(ConformityE2eTest, LimeDemoPassesOneSpecificationAndIsInconclusiveOnTheOther) {
  const CommandRun made = Make(kExamples / "lime_plaster_desiccator" / "job.toml", "lime");
  ASSERT_EQ(made.exit_code, 0) << made.output;
  const fs::path out = root_ / "lime";
  const std::string text = CollapseSpaces(PdfText(out / "datasheet.pdf"));
  EXPECT_NE(text.find("2 Statement of conformity"), std::string::npos);
  // Specification 1: guarded acceptance, w = U, pass; the ILAC-G8 risk at the limit.
  EXPECT_NE(text.find("at most 2 % (Hollowmere render brief HR-4, clause 3.2"), std::string::npos)
      << text.substr(0, 3000);
  EXPECT_NE(text.find("guarded acceptance, w = 1 U (binary, ILAC-G8:09/2019 §4.2.2)"),
            std::string::npos);
  EXPECT_TRUE(std::regex_search(text, std::regex("w = [0-9.]+ % \\(1 U\\); acceptance "
                                                 "limit 1\\.[0-9]+ %")))
      << text.substr(0, 3000);
  EXPECT_NE(text.find("pass: inside the acceptance interval"), std::string::npos);
  // w = U with k for about 95 % coverage (Student t from nu_eff, or k = 2 for the normal:
  // 1 - Phi(2) = 0.022750, A&S Table 26.1): ILAC-G8:09/2019 §4.2.2, "< 2.5 %".
  EXPECT_TRUE(std::regex_search(
      text, std::regex("probability of false acceptance at the acceptance limit [12]\\.[0-9]+ %")))
      << text.substr(0, 3000);
  // Specification 2: required conformance probability 0.95, inconclusive.
  EXPECT_NE(text.find("required conformance probability 0.95 (JCGM 106:2012)"), std::string::npos);
  EXPECT_NE(text.find("inconclusive: conformance probability between 5 % and 95 %"),
            std::string::npos);
  // The summary page: one line per specification.
  EXPECT_NE(text.find("Moisture content at 23 °C / 80 % RH (adsorption): at most 2 % pass"),
            std::string::npos);
  EXPECT_NE(text.find("Moisture content at 23 °C / 50 % RH (adsorption): at most 0.78 % "
                      "inconclusive"),
            std::string::npos);

  const Json pass = Statement(out, 0);
  EXPECT_EQ(pass["decision"], "pass");
  // At most 2.5 % (ILAC-G8 §4.2.2): 1 - Phi(2) = 0.022750 for the normal with k = 2; less
  // with a Student-t k from nu_eff truncated to an integer (JCGM 100:2008, G.4.1: conservative).
  EXPECT_GT(pass["false_acceptance_probability_at_limit"].get<double>(), 0.0);
  EXPECT_LE(pass["false_acceptance_probability_at_limit"].get<double>(), 0.025 + 1e-9);
  if (pass["effective_degrees_of_freedom"].is_null()) {  // infinite: normal, k = 2
    EXPECT_NEAR(pass["false_acceptance_probability_at_limit"].get<double>(), 1.0 - 0.977250, 1e-6);
  }
  EXPECT_DOUBLE_EQ(pass["guard_band"].get<double>(), pass["expanded_uncertainty"].get<double>());
  const Json inconclusive = Statement(out, 1);
  EXPECT_EQ(inconclusive["decision"], "inconclusive");
  const double y = inconclusive["value"].get<double>();
  const double u = inconclusive["standard_uncertainty"].get<double>();
  const double p_c = inconclusive["conformance_probability"].get<double>();
  if (inconclusive["effective_degrees_of_freedom"].is_null()) {
    EXPECT_NEAR(p_c, Phi((0.78 - y) / u), 1e-9);  // normal (JCGM 106 §7)
  } else {
    // Student t with nu_eff: heavier tails than the normal, the same side of one half.
    EXPECT_LT(std::abs(p_c - Phi((0.78 - y) / u)), 0.05);
    EXPECT_EQ(p_c > 0.5, y < 0.78);
  }
  EXPECT_NEAR(inconclusive["false_acceptance_probability_at_limit"].get<double>(), 0.05, 1e-9);
  // The value is the headline's, in the specification's unit (%).
  const Json results = Json::parse(ReadBytes(out / "results.json"));
  for (const Json& q : results["headline"]) {
    if (q["key"] == "moisture_23C_50RH_adsorption") {
      EXPECT_NEAR(y, 100.0 * q["value"].get<double>(), 1e-12);
    }
  }
  // conformity.csv carries the same decisions.
  const std::string csv = ReadBytes(out / "conformity.csv");
  EXPECT_NE(csv.find(",pass,pass: inside the acceptance interval\n"), std::string::npos) << csv;
  EXPECT_NE(csv.find(",inconclusive,inconclusive: conformance probability"), std::string::npos);
}

TEST_F(ConformityE2eTest, FailAndGuardBandZoneFollowTheRule) {
  // Limits placed from the job's own result so the cases hold whatever the exact value.
  const CommandRun first = Make(kExamples / "lime_plaster_desiccator" / "job.toml", "base");
  ASSERT_EQ(first.exit_code, 0) << first.output;
  const Json base = Statement(root_ / "base", 0);
  const double y = base["value"].get<double>();
  const double U = base["expanded_uncertainty"].get<double>();
  ASSERT_GT(U, 0.0);
  const auto spec = [](double upper, const std::string& rule) {
    char limit[64];
    std::snprintf(limit, sizeof limit, "%.6f", upper);
    return std::string("\n[[specification]]\nquantity = \"moisture_23C_80RH_adsorption\"\n") +
           "upper_limit = " + limit + "\nunit = \"%\"\n" + rule;
  };
  const fs::path job = LimeJob(
      spec(y - 0.5 * U, "decision_rule = \"simple_acceptance\"\n") +
      spec(y + 0.5 * U, "decision_rule = \"guarded_acceptance\"\ninconclusive_zone = true\n") +
      spec(y + 0.5 * U, "decision_rule = \"guarded_acceptance\"\n") +
      spec(y - 2.0 * U, "decision_rule = \"guarded_acceptance\"\ninconclusive_zone = true\n"));
  const CommandRun made = Make(job, "variants");
  ASSERT_EQ(made.exit_code, 0) << made.output;
  const fs::path out = root_ / "variants";
  EXPECT_EQ(Statement(out, 0)["decision"], "fail");
  // Simple acceptance: a value on the limit is accepted with 50 % risk (ILAC-G8 §4.2.1).
  EXPECT_NEAR(Statement(out, 0)["false_acceptance_probability_at_limit"].get<double>(), 0.5, 1e-12);
  EXPECT_EQ(Statement(out, 1)["decision"], "inconclusive");
  EXPECT_EQ(Statement(out, 2)["decision"], "fail");  // binary: no inconclusive zone
  EXPECT_EQ(Statement(out, 3)["decision"], "fail");  // beyond T + w
  const std::string text = CollapseSpaces(PdfText(out / "datasheet.pdf"));
  EXPECT_NE(text.find("fail: the measured value lies outside the specification"),
            std::string::npos);
  EXPECT_NE(text.find("simple acceptance, w = 0 (ILAC-G8:09/2019 §4.2.1)"), std::string::npos);
  EXPECT_NE(text.find("none (w = 0)"), std::string::npos);
  EXPECT_NE(text.find("probability of false acceptance at the acceptance limit 50.0 %"),
            std::string::npos);
  EXPECT_NE(text.find("inconclusive: within one guard band of a specification limit"),
            std::string::npos);
  EXPECT_NE(text.find("guarded acceptance, w = 1 U (non-binary, ILAC-G8:09/2019 §4.2.3)"),
            std::string::npos);
  EXPECT_NE(text.find("fail: outside the acceptance interval"), std::string::npos);
  EXPECT_NE(text.find("fail: more than one guard band outside the specification"),
            std::string::npos);
}

TEST_F(ConformityE2eTest, UnavailableHeadlineGivesNoStatementNeverPass) {
  const CommandRun made = Make(kExamples / "excipient_powder_25C" / "job.toml", "excipient");
  ASSERT_EQ(made.exit_code, 0) << made.output;
  const fs::path out = root_ / "excipient";
  const std::string text = CollapseSpaces(PdfText(out / "datasheet.pdf"));
  EXPECT_NE(text.find("no statement: not measured at 23 °C; value at 25 °C"), std::string::npos)
      << text.substr(0, 3000);
  // The summary line names the quantity as a person reads it, not by its key.
  EXPECT_NE(text.find("Moisture content at 23 °C / 80 % RH (adsorption): at most 9 % no "
                      "statement: not measured at 23 °C"),
            std::string::npos);
  EXPECT_EQ(text.find("moisture_23C_80RH_adsorption"), std::string::npos);
  const Json none = Statement(out, 1);
  EXPECT_EQ(none["decision"], "no statement");
  EXPECT_FALSE(none["available"].get<bool>());
  EXPECT_TRUE(none["value"].is_null());
  EXPECT_TRUE(none["conformance_probability"].is_null());
  // The Ph. Eur. 5.11 mass increase at 25 °C is available and passes.
  EXPECT_EQ(Statement(out, 0)["decision"], "pass");

  // A temperature that was not measured and a result this job does not have.
  const fs::path job = LimeJob(
      "\n[[specification]]\nquantity = \"surface_area_gab_adsorption_40C\"\nlower_limit = 1\n"
      "unit = \"m2/g\"\ndecision_rule = \"simple_acceptance\"\n"
      "\n[[specification]]\nquantity = \"surface_area_bet_adsorption_23C\"\nlower_limit = 1\n"
      "upper_limit = 100\nunit = \"m2/g\"\ndecision_rule = \"simple_acceptance\"\n"
      "\n[[specification]]\nquantity = \"surface_area_gab_adsorption_23C\"\nlower_limit = 1\n"
      "upper_limit = 100\nunit = \"m2/g\"\ndecision_rule = \"simple_acceptance\"\n");
  ASSERT_EQ(Make(job, "lime_out").exit_code, 0);
  const std::string lime = CollapseSpaces(PdfText(root_ / "lime_out" / "datasheet.pdf"));
  EXPECT_NE(lime.find("no statement: not measured at 40 °C"), std::string::npos);
  EXPECT_NE(lime.find("Specific surface area (GAB, adsorption, 40 °C): at least 1 m²/g no "
                      "statement"),
            std::string::npos);
  EXPECT_NE(lime.find("no statement: this job has no such result"), std::string::npos);
  EXPECT_EQ(Statement(root_ / "lime_out", 0)["decision"], "no statement");
  EXPECT_EQ(Statement(root_ / "lime_out", 1)["decision"], "no statement");
  // A two-sided range on a result the job has: decided.
  EXPECT_EQ(Statement(root_ / "lime_out", 2)["decision"], "pass");
  EXPECT_NE(lime.find("1 to 100 m²/g"), std::string::npos);
}

// "class at most X" on the excipient demo, whose equilibrium uptake at 25 °C / 80 % RH is about
// 7.9 ± 0.3 % (the "hygroscopic" class, 2 to 15 %, Ph. Eur. 5.11 limits from conform.h): at most
// hygroscopic passes, at most slightly hygroscopic (below 2 %) fails under w = U; on the lime
// demo (measured at 23 °C, not at the class's 25 ± 1 °C) no statement is made.
TEST_F(ConformityE2eTest, ClassAtMostIsDecidedOnTheUptakeAndItsUncertainty) {
  const fs::path dir = root_ / "excipient_job";
  fs::copy(kExamples / "excipient_powder_25C", dir, fs::copy_options::recursive);
  std::string job = ReadBytes(dir / "job.toml");
  job = job.substr(0, job.find("\n# Statements of conformity") + 1) +
        "\n[[specification]]\nquantity = \"hygroscopicity_class\"\nat_most = \"hygroscopic\"\n"
        "decision_rule = \"simple_acceptance\"\n"
        "\n[[specification]]\nquantity = \"hygroscopicity_class\"\n"
        "at_most = \"slightly hygroscopic\"\ndecision_rule = \"guarded_acceptance\"\n";
  WriteBytes(dir / "job.toml", job);
  const CommandRun made = Make(dir / "job.toml", "classes");
  ASSERT_EQ(made.exit_code, 0) << made.output;
  const fs::path out = root_ / "classes";
  const Json results = Json::parse(ReadBytes(out / "results.json"));
  ASSERT_EQ(results["hygroscopicity_class"], "hygroscopic");
  EXPECT_EQ(Statement(out, 0)["decision"], "pass");
  EXPECT_EQ(Statement(out, 1)["decision"], "fail");
  const std::string text = CollapseSpaces(PdfText(out / "datasheet.pdf"));
  EXPECT_NE(text.find("class at most hygroscopic (Ph. Eur. 5.11: mass increase below 15 %)"),
            std::string::npos)
      << text.substr(0, 3000);
  EXPECT_NE(text.find("class at most slightly hygroscopic (Ph. Eur. 5.11: mass increase below "
                      "2 %)"),
            std::string::npos);
  EXPECT_EQ(text.find("hygroscopicity_class"), std::string::npos) << "no key on the sheet";

  const fs::path lime = LimeJob(
      "\n[[specification]]\nquantity = \"hygroscopicity_class\"\nat_most = \"hygroscopic\"\n"
      "decision_rule = \"simple_acceptance\"\n");
  ASSERT_EQ(Make(lime, "lime_class").exit_code, 0);
  const Json none = Statement(root_ / "lime_class", 0);
  EXPECT_EQ(none["decision"], "no statement");
  EXPECT_NE(CollapseSpaces(PdfText(root_ / "lime_class" / "datasheet.pdf"))
                .find("no statement: not applicable: Ph. Eur. 5.11 classifies at 25 ± 1 °C"),
            std::string::npos);
}

TEST_F(ConformityE2eTest, UnknownKeyOrUnitIsALocatedErrorAndNothingIsWritten) {
  const std::string head = "\n[[specification]]\nquantity = ";
  struct Case {
    std::string table;
    std::string message;
  };
  const Case cases[] = {
      {head + "\"moisture_23C_80RH_adsorbtion\"\nupper_limit = 2\nunit = \"%\"\n"
              "decision_rule = \"simple_acceptance\"\n",
       "is not a result this program reports"},
      {head + "\"moisture_23C_65RH_adsorption\"\nupper_limit = 2\nunit = \"%\"\n"
              "decision_rule = \"simple_acceptance\"\n",
       "reference conditions of the template"},
      {head + "\"moisture_23C_80RH_adsorption\"\nupper_limit = 2\nunit = \"nm\"\n"
              "decision_rule = \"simple_acceptance\"\n",
       "unit 'nm' does not fit quantity"},
  };
  const std::string lime = LimeJobWithoutSpecifications();
  // The quantity key: after the blank line and [[specification]].
  const int line = static_cast<int>(std::count(lime.begin(), lime.end(), '\n')) + 3;
  for (const Case& c : cases) {
    const fs::path job = LimeJob(c.table);
    // `check` validates the table only; the key is known once the results are.
    EXPECT_EQ(Sorbtrace("check " + job.string()).exit_code, 0) << c.table;
    const CommandRun made = Make(job, "refused");
    EXPECT_EQ(made.exit_code, 3) << made.output;
    EXPECT_NE(made.output.find(c.message), std::string::npos) << made.output;
    EXPECT_FALSE(fs::exists(root_ / "refused")) << "no partial output";
    if (c.message.find("unit") == std::string::npos) {
      EXPECT_NE(made.output.find("job.toml:" + std::to_string(line) + ":"), std::string::npos)
          << made.output;
      // The keys this job has, to correct the typo with.
      EXPECT_NE(made.output.find("moisture_23C_80RH_adsorption"), std::string::npos);
      EXPECT_NE(made.output.find("surface_area_gab_adsorption_23C"), std::string::npos);
    } else {
      EXPECT_NE(made.output.find("job.toml:" + std::to_string(line + 2) + ":"), std::string::npos)
          << made.output;
      EXPECT_NE(made.output.find("\"%\", \"kg/kg\""), std::string::npos) << made.output;
    }
  }
}

TEST_F(ConformityE2eTest, MalformedSpecificationIsRefusedByCheckAndMake) {
  const fs::path job = LimeJob(
      "\n[[specification]]\nquantity = \"moisture_23C_80RH_adsorption\"\nupper_limit = 2\n"
      "unit = \"%\"\ndecision_rule = \"guarded\"\n");
  for (const std::string verb : {"check", "make"}) {
    const CommandRun run =
        verb == "check" ? Sorbtrace("check " + job.string()) : Make(job, "refused");
    EXPECT_EQ(run.exit_code, 3) << run.output;
    EXPECT_NE(run.output.find("'guarded' is not a valid decision_rule"), std::string::npos)
        << run.output;
    EXPECT_NE(run.output.find("\"guarded_acceptance\""), std::string::npos);
  }
  EXPECT_FALSE(fs::exists(root_ / "refused"));
}

TEST_F(ConformityE2eTest, JobWithoutSpecificationsHasNoConformitySection) {
  const fs::path job = LimeJob("");
  ASSERT_EQ(Make(job, "plain").exit_code, 0);
  const fs::path out = root_ / "plain";
  EXPECT_FALSE(fs::exists(out / "conformity.csv"));
  const std::string text = CollapseSpaces(PdfText(out / "datasheet.pdf"));
  EXPECT_EQ(text.find("Statement of conformity"), std::string::npos);
  EXPECT_NE(text.find("2 Sorption isotherm"), std::string::npos);
  const Json results = Json::parse(ReadBytes(out / "results.json"));
  EXPECT_TRUE(results["conformity"].is_array());
  EXPECT_TRUE(results["conformity"].empty());
}

}  // namespace
}  // namespace sorbtrace
