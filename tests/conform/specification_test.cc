// The [[specification]] reader (pipeline/ingest/specification.cc through ingest::LoadJobSpec):
// what each key becomes, and every malformed table refused at its line and column.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>

#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest {
namespace {

namespace fs = std::filesystem;

const fs::path kLime =
    fs::path(SORBTRACE_SOURCE_DIR) / "example_inputs" / "lime_plaster_desiccator";

std::string Slurp(const fs::path& file) {
  std::ifstream in(file, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

// The lime demo job without its own specifications, ending in `tables`; written into a copy of
// the scenario folder so the data file and the laboratory profile resolve.
class SpecificationTest : public ::testing::Test {
 protected:
  void SetUp() override {
    const auto* info = ::testing::UnitTest::GetInstance()->current_test_info();
    dir_ = fs::temp_directory_path() / (std::string("sorbtrace_specification_") + info->name());
    fs::remove_all(dir_);
    fs::copy(kLime, dir_, fs::copy_options::recursive);  // data and laboratory profile
    base_ = Slurp(kLime / "job.toml");
    base_ = base_.substr(0, base_.find("\n# Statements of conformity") + 1);
  }
  void TearDown() override { fs::remove_all(dir_); }

  JobSpec Load(const std::string& tables) {
    std::ofstream(dir_ / "job.toml", std::ios::binary) << base_ << tables;
    return LoadJobSpec(dir_ / "job.toml");
  }
  // The line of the job file where `tables` starts.
  int FirstLine() const {
    return static_cast<int>(std::count(base_.begin(), base_.end(), '\n')) + 1;
  }
  // The located error of `tables`.
  Diagnostic Refused(const std::string& tables) {
    try {
      Load(tables);
    } catch (const InputError& e) {
      return e.diagnostic();
    }
    ADD_FAILURE() << "accepted: " << tables;
    return {};
  }

  fs::path dir_;
  std::string base_;
};

TEST_F(SpecificationTest, TheDemoJobStatesTwo) {
  const JobSpec job = LoadJobSpec(kLime / "job.toml");
  ASSERT_EQ(job.specifications.size(), 2u);
  const Specification& s = job.specifications[0];
  EXPECT_EQ(s.quantity, "moisture_23C_80RH_adsorption");
  EXPECT_TRUE(std::isinf(s.limits.lower) && s.limits.lower < 0);
  EXPECT_DOUBLE_EQ(s.limits.upper, 2.0);
  EXPECT_EQ(s.unit, "%");
  EXPECT_EQ(s.decision.rule, conform::DecisionRule::kGuardedAcceptance);
  EXPECT_DOUBLE_EQ(s.decision.guard_band_multiplier, 1.0);
  EXPECT_FALSE(s.decision.non_binary);
  EXPECT_EQ(s.document, "Hollowmere render brief HR-4, clause 3.2 (fictional)");
  EXPECT_EQ(job.specifications[1].decision.rule, conform::DecisionRule::kConformanceProbability);
  EXPECT_DOUBLE_EQ(job.specifications[1].decision.required_conformance_probability, 0.95);
}

TEST_F(SpecificationTest, NoneIsAnEmptyList) { EXPECT_TRUE(Load("").specifications.empty()); }

TEST_F(SpecificationTest, KeysBecomeTheDecisionOptions) {
  const JobSpec job = Load(
      "[[specification]]\nquantity = \"surface_area_gab_adsorption_23C\"\nlower_limit = 10\n"
      "upper_limit = 20.5\nunit = \"m2/g\"\ndecision_rule = \"guarded_acceptance\"\n"
      "guard_band_fraction_of_U = 0.83\ninconclusive_zone = true\n"
      "[[specification]]\nquantity = \"hygroscopicity_mass_increase\"\nlower_limit = 0.2\n"
      "unit = \"%\"\ndecision_rule = \"simple_acceptance\"\n");
  ASSERT_EQ(job.specifications.size(), 2u);
  const Specification& a = job.specifications[0];
  EXPECT_DOUBLE_EQ(a.limits.lower, 10.0);
  EXPECT_DOUBLE_EQ(a.limits.upper, 20.5);
  EXPECT_DOUBLE_EQ(a.decision.guard_band_multiplier, 0.83);
  EXPECT_TRUE(a.decision.non_binary);
  EXPECT_EQ(a.where.line, FirstLine());
  EXPECT_EQ(a.quantity_where.line, FirstLine() + 1);
  EXPECT_EQ(a.unit_where.line, FirstLine() + 4);
  const Specification& b = job.specifications[1];
  EXPECT_EQ(b.decision.rule, conform::DecisionRule::kSimpleAcceptance);
  EXPECT_TRUE(std::isinf(b.limits.upper) && b.limits.upper > 0);
  EXPECT_TRUE(b.document.empty());
}

TEST_F(SpecificationTest, MalformedTablesAreRefusedAtTheirKey) {
  const std::string q = "[[specification]]\nquantity = \"moisture_23C_80RH_adsorption\"\n";
  const std::string simple = "unit = \"%\"\ndecision_rule = \"simple_acceptance\"\n";
  struct Case {
    std::string tables;
    int line_offset;  // from the table's first line
    std::string message;
  };
  const Case cases[] = {
      {q + "upper = 2\n" + simple, 2, "unknown key 'upper'"},
      {q + simple, 0, "without a limit"},
      {q + "lower_limit = 3\nupper_limit = 2\n" + simple, 3, "not above lower_limit"},
      {q + "lower_limit = 2\nupper_limit = 2\n" + simple, 3, "not above lower_limit"},
      {q + "upper_limit = \"2\"\n" + simple, 2, "is not a number"},
      {q + "upper_limit = nan\n" + simple, 2, "is not finite"},
      {q + "upper_limit = 2\nunit = \"%\"\ndecision_rule = \"shared_risk\"\n", 4,
       "'shared_risk' is not a valid decision_rule"},
      {q + "upper_limit = 2\nunit = \"%\"\n", 0, "missing key 'decision_rule'"},
      {q + "upper_limit = 2\ndecision_rule = \"simple_acceptance\"\n", 0, "missing key 'unit'"},
      {"[[specification]]\nupper_limit = 2\n" + simple, 0, "missing key 'quantity'"},
      {"[[specification]]\nquantity = \"\"\nupper_limit = 2\n" + simple, 1, "empty quantity"},
      {q + "upper_limit = 2\n" + simple + "guard_band_fraction_of_U = 1\n", 5,
       "guard_band_fraction_of_U' with decision_rule = \"simple_acceptance\""},
      {q + "upper_limit = 2\n" + simple + "required_conformance_probability = 0.9\n", 5,
       "required_conformance_probability' with decision_rule"},
      {q + "upper_limit = 2\nunit = \"%\"\ndecision_rule = \"guarded_acceptance\"\n"
           "guard_band_fraction_of_U = 0\n",
       5, "guard-band multiplier r = 0"},
      {q + "upper_limit = 2\nunit = \"%\"\ndecision_rule = \"conformance_probability\"\n"
           "required_conformance_probability = 1.0\n",
       5, "required conformance probability 1"},
      {q + "upper_limit = 2\nunit = \"%\"\ndecision_rule = \"guarded_acceptance\"\n"
           "inconclusive_zone = 1\n",
       5, "is not a boolean"},
  };
  for (const Case& c : cases) {
    const Diagnostic d = Refused(c.tables);
    EXPECT_NE(d.message.find(c.message), std::string::npos) << d.message << "\n" << c.tables;
    EXPECT_EQ(d.where.line, FirstLine() + c.line_offset) << c.tables;
    EXPECT_GT(d.where.column, 0) << c.tables;
    EXPECT_FALSE(d.expected.empty()) << c.tables;
  }
}

// "class at most X": the upper limit of class X in the Ph. Eur. 5.11 table (0.2 / 2 / 15 %
// mass increase, conform.h; from secondary sources quoting the chapter) on the mass increase.
TEST_F(SpecificationTest, ClassAtMostBecomesTheClassUpperLimitOnTheMassIncrease) {
  const JobSpec job = Load(
      "[[specification]]\nquantity = \"hygroscopicity_class\"\nat_most = \"slightly hygroscopic\"\n"
      "decision_rule = \"guarded_acceptance\"\ninconclusive_zone = true\n"
      "[[specification]]\nquantity = \"hygroscopicity_class\"\nat_most = \"hygroscopic\"\n"
      "decision_rule = \"simple_acceptance\"\n"
      "[[specification]]\nquantity = \"hygroscopicity_class\"\nat_most = \"non-hygroscopic\"\n"
      "decision_rule = \"simple_acceptance\"\n");
  ASSERT_EQ(job.specifications.size(), 3u);
  const double expected_upper[] = {2.0, 15.0, 0.2};
  const char* expected_class[] = {"slightly hygroscopic", "hygroscopic", "non-hygroscopic"};
  for (size_t i = 0; i < 3; ++i) {
    const Specification& s = job.specifications[i];
    EXPECT_EQ(s.quantity, "hygroscopicity_mass_increase");
    EXPECT_EQ(s.class_at_most, expected_class[i]);
    EXPECT_DOUBLE_EQ(s.limits.upper, expected_upper[i]);
    EXPECT_TRUE(std::isinf(s.limits.lower) && s.limits.lower < 0);
    EXPECT_EQ(s.unit, "%");
  }
  EXPECT_TRUE(job.specifications[0].decision.non_binary);
  EXPECT_EQ(job.specifications[0].unit_where.line, FirstLine() + 2);  // the at_most key
}

TEST_F(SpecificationTest, MalformedClassSpecificationsAreRefusedAtTheirKey) {
  const std::string q = "[[specification]]\nquantity = \"hygroscopicity_class\"\n";
  const std::string rule = "decision_rule = \"simple_acceptance\"\n";
  struct Case {
    std::string tables;
    int line_offset;
    std::string message;
  };
  const Case cases[] = {
      {q + "at_most = \"slightly hygroscopik\"\n" + rule, 2,
       "'slightly hygroscopik' is not a Ph. Eur. 5.11 hygroscopicity class"},
      {q + "at_most = \"very hygroscopic\"\n" + rule, 2, "sets no limit"},
      {q + "at_most = \"deliquescent\"\n" + rule, 2, "is not a Ph. Eur. 5.11"},
      {q + "at_most = 2\n" + rule, 2, "is not a string"},
      {q + rule, 0, "missing key 'at_most'"},
      {q + "at_most = \"hygroscopic\"\nupper_limit = 15\n" + rule, 3,
       "key 'upper_limit' with quantity = \"hygroscopicity_class\""},
      {q + "at_most = \"hygroscopic\"\nunit = \"%\"\n" + rule, 3, "key 'unit' with quantity"},
      {"[[specification]]\nquantity = \"hygroscopicity_mass_increase\"\nat_most = "
       "\"hygroscopic\"\nunit = \"%\"\n" +
           rule,
       2, "key 'at_most' with quantity = \"hygroscopicity_mass_increase\""},
  };
  for (const Case& c : cases) {
    const Diagnostic d = Refused(c.tables);
    EXPECT_NE(d.message.find(c.message), std::string::npos) << d.message << "\n" << c.tables;
    EXPECT_EQ(d.where.line, FirstLine() + c.line_offset) << c.tables;
    EXPECT_GT(d.where.column, 0) << c.tables;
    EXPECT_FALSE(d.expected.empty()) << c.tables;
  }
  // The expected text lists the classes a limit can be set with.
  const Diagnostic d = Refused(q + "at_most = \"x\"\n" + rule);
  EXPECT_NE(d.expected.find("\"non-hygroscopic\", \"slightly hygroscopic\", \"hygroscopic\""),
            std::string::npos)
      << d.expected;
}

TEST_F(SpecificationTest, ASingleTableIsNotAnArrayOfTables) {
  const Diagnostic d = Refused(
      "[specification]\nquantity = \"x\"\nupper_limit = 1\nunit = \"%\"\n"
      "decision_rule = \"simple_acceptance\"\n");
  EXPECT_NE(d.message.find("not an array of tables"), std::string::npos) << d.message;
}

}  // namespace
}  // namespace sorbtrace::ingest
