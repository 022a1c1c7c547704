// What the sheet shows of fits that fail their own checks, and its plain language
// (pipeline/report/sheet.h, section_models.cc, section_method.cc, internal/reader_text.h):
//  - a fit not identifiable from its data: "not identifiable from these data" with the reason,
//    no ± values and no correlations;
//  - a BET surface area whose fit fails a Rouquerol criterion is no headline value, marked in
//    the model section;
//  - models the design could not support: one plain sentence per model in the method section,
//    nothing among the cautions;
//  - the Ph. Eur. 5.11 class only for pharmaceutical powders, with its basis;
//  - ReaderText: Kelvin, degC, +-, "from memory" and registry keys never reach a reader.
#include <gtest/gtest.h>

#include <algorithm>
#include <string>
#include <variant>
#include <vector>

#include "pipeline/report/internal/reader_text.h"
#include "pipeline/report/sheet.h"
#include "tests/report/report_fixture.h"

namespace sorbtrace::report::internal {
namespace {

using testing::FixtureOptions;
using testing::FullTemplate;
using testing::MakeReportFixture;
using testing::ReportFixture;

const Section& SectionOf(const Sheet& sheet, const std::string& key) {
  for (const Section& s : sheet.sections) {
    if (s.key == key) return s;
  }
  ADD_FAILURE() << "no section " << key;
  static const Section kNone;
  return kNone;
}

// Every text of a section, one string per paragraph, bullet, fact value or table cell.
std::vector<std::string> Texts(const Section& section) {
  std::vector<std::string> out;
  for (const Block& block : section.blocks) {
    if (const auto* p = std::get_if<ParagraphBlock>(&block)) out.push_back(p->text);
    if (const auto* b = std::get_if<BulletsBlock>(&block)) {
      out.insert(out.end(), b->items.begin(), b->items.end());
    }
    if (const auto* t = std::get_if<TableBlock>(&block)) {
      for (const auto& row : t->rows) {
        for (const Cell& c : row) out.push_back(c.text);
      }
    }
    if (const auto* f = std::get_if<FactsBlock>(&block)) {
      for (const auto& row : f->rows) out.push_back(row.second);
    }
  }
  return out;
}

bool AnyContains(const std::vector<std::string>& texts, const std::string& part) {
  return std::any_of(texts.begin(), texts.end(),
                     [&](const std::string& t) { return t.find(part) != std::string::npos; });
}

bool HasHeadline(const Sheet& sheet, const std::string& key_prefix) {
  return std::any_of(sheet.headline.begin(), sheet.headline.end(),
                     [&](const Quantity& q) { return q.key.rfind(key_prefix, 0) == 0; });
}

// The fixture's Oswin fit of the adsorption group (fits[1], A = 0.0174, B = 0.512).
TEST(IdentifySheetTest, NotIdentifiableFitShowsItsReasonWithoutUncertainties) {
  ReportFixture fx = MakeReportFixture();
  ASSERT_EQ(fx.fits.fits[1].model_name, "oswin");
  {
    const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
    EXPECT_TRUE(sheet.models[1].identifiable);
    EXPECT_TRUE(AnyContains(Texts(SectionOf(sheet, "models")), "B = 0.512 ±"));
  }
  // u(B) = 1.4 B: the "n1 = 0 ± 140" kind of result.
  fx.fits.fits[1].result.covariance(1, 1) = (1.4 * 0.512) * (1.4 * 0.512);
  fx.fits.fits[1].result.correlation(0, 1) = fx.fits.fits[1].result.correlation(1, 0) = 0.999;
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  EXPECT_FALSE(sheet.models[1].identifiable);
  EXPECT_TRUE(sheet.models[1].correlations.empty());
  const std::vector<std::string> texts = Texts(SectionOf(sheet, "models"));
  bool found = false;
  for (const std::string& t : texts) {
    if (t.rfind("not identifiable from these data", 0) != 0) continue;
    found = true;
    EXPECT_NE(t.find("parameter B has a standard uncertainty of 140 %"), std::string::npos) << t;
    EXPECT_EQ(t.find("±"), std::string::npos) << t;
  }
  EXPECT_TRUE(found);
  EXPECT_FALSE(AnyContains(texts, "B = 0.512 ±"));
  EXPECT_FALSE(AnyContains(texts, "A–B: r ="));
}

// The fixture's BET fit (fits[2], adsorption group 0, X_m = 0.0101 kg/kg) with a surface area.
TEST(IdentifySheetTest, BetAreaFailingRouquerolIsNoHeadlineValue) {
  ReportFixture fx = MakeReportFixture();
  ASSERT_EQ(fx.fits.fits[2].model_name, "bet");
  pores::SurfaceArea bet_area = fx.pores.surface_areas.front();
  bet_area.model_name = "bet";
  bet_area.area_m2_per_g = 35.7;
  bet_area.u_area_m2_per_g = 3.9;
  fx.pores.surface_areas.push_back(bet_area);
  {
    const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
    EXPECT_TRUE(HasHeadline(sheet, "surface_area_bet_"));
    EXPECT_TRUE(std::any_of(sheet.cautions.begin(), sheet.cautions.end(), [](const auto& c) {
      return c.find("not comparable with a nitrogen BET surface area (ISO 9277)") !=
             std::string::npos;
    }));
  }
  fx.fits.fits[2].consistency[0].passed = false;
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  EXPECT_FALSE(HasHeadline(sheet, "surface_area_bet_"));
  EXPECT_TRUE(HasHeadline(sheet, "surface_area_gab_"));  // GAB's area is unaffected
  const std::vector<std::string> texts = Texts(SectionOf(sheet, "models"));
  bool marked = false;
  for (const std::string& t : texts) {
    if (t.rfind("Surface area from the Brunauer-Emmett-Teller (BET) monolayer", 0) != 0) continue;
    marked = true;
    EXPECT_NE(t.find("35.7 ± 7.8 m²/g, not a reported result: the fit fails Rouquerol 1"),
              std::string::npos)
        << t;
  }
  EXPECT_TRUE(marked);
}

// A monolayer read as a physical quantity needs the model inside the range of its physical
// interpretation: a GAB fit flagged "physics: ..." (C < 5.67 or K outside (0.24, 1]: the curve
// is then not a sigmoid type II isotherm, Lewicki, Int. J. Food Sci. Technol. 32 (1997) 553)
// gives no surface-area result, only the marked value in the model section.
TEST(IdentifySheetTest, GabOutsideItsPhysicalRangeGivesNoSurfaceArea) {
  ReportFixture fx = MakeReportFixture();
  fit::ModelFit* gab = nullptr;
  for (fit::ModelFit& mf : fx.fits.fits) {
    if (mf.model_name == "gab" && mf.group_index == 0) gab = &mf;
  }
  ASSERT_NE(gab, nullptr);
  ASSERT_TRUE(
      HasHeadline(BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions()), "surface_area_gab_"));
  gab->result.summary.flags.push_back(std::string(fitters::kPhysicsFlagPrefix) +
                                      "outside 0.24 < K <= 1, C >= 5.67");
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  EXPECT_FALSE(HasHeadline(sheet, "surface_area_gab_"));
  const std::vector<std::string> texts = Texts(SectionOf(sheet, "models"));
  EXPECT_TRUE(AnyContains(texts, "not a reported result: the fit fails outside 0.24 < K <= 1"));
}

// The surface area is X_m times a constant: it is stated with the monolayer parameter's k
// (Student-t from its effective degrees of freedom, JCGM 100:2008 G.4), not the sheet's 2.
TEST(IdentifySheetTest, SurfaceAreaCarriesTheMonolayersCoverageFactor) {
  ReportFixture fx = MakeReportFixture();
  ASSERT_FALSE(fx.pores.surface_areas.empty());
  // nu_eff = 4: k = t_95.45(4) = 2.87 (JCGM 100:2008, Table G.2).
  fx.pores.surface_areas.front().coverage_factor = 2.87;
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  bool found = false;
  for (const Quantity& q : sheet.headline) {
    if (q.key.rfind("surface_area_gab_", 0) != 0) continue;
    found = true;
    EXPECT_DOUBLE_EQ(q.coverage_factor, 2.87);
    EXPECT_DOUBLE_EQ(q.expanded_uncertainty, 2.87 * q.standard_uncertainty);
    EXPECT_NE(q.text.find("(k = 2.9)"), std::string::npos) << q.text;
  }
  EXPECT_TRUE(found);
}

TEST(IdentifySheetTest, NotEvaluatedModelsAreSaidOnceInTheMethodSection) {
  ReportFixture fx = MakeReportFixture();
  for (int g = 0; g < 2; ++g) {
    fit::ModelFit durner;
    durner.model_name = "durner2";
    durner.info.name = "durner2";
    durner.info.title = "Durner bimodal retention curve";
    durner.group_index = g;
    durner.design.supported = false;
    durner.design.points = 6;
    durner.design.points_needed = 7;
    durner.design.num_parameters = 6;
    durner.design.reason = "not evaluated: n = 6 points in RH 0..1 for p = 6 parameters";
    durner.result.summary.termination = fitters::FitTermination::kTooFewPoints;
    durner.result.summary.message = durner.design.reason;
    fx.fits.fits.push_back(durner);
  }
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  ASSERT_EQ(sheet.not_evaluated.size(), 1u);
  EXPECT_EQ(sheet.not_evaluated[0],
            "Durner bimodal retention curve not evaluated: 6 points, at least 7 needed for its 6 "
            "parameters (adsorption, 23 °C; desorption, 23 °C).");
  EXPECT_TRUE(AnyContains(Texts(SectionOf(sheet, "method")), sheet.not_evaluated[0]));
  for (const std::string& c : sheet.cautions) {
    EXPECT_EQ(c.find("not evaluated"), std::string::npos) << c;
    EXPECT_EQ(c.find("too few points"), std::string::npos) << c;
  }
  // Not a row of the model table, not a flag note.
  EXPECT_FALSE(AnyContains(Texts(SectionOf(sheet, "models")), "Durner bimodal retention curve\n"));
}

TEST(IdentifySheetTest, HygroscopicityClassOnlyForPharmaceuticalPowders) {
  ReportFixture fx = MakeReportFixture();
  fx.ingested.job.material_class = ingest::MaterialClass::kPorousMineral;
  {
    const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
    EXPECT_FALSE(sheet.hygroscopicity_relevant);
    EXPECT_FALSE(HasHeadline(sheet, "hygroscopicity_"));
    EXPECT_FALSE(AnyContains(Texts(SectionOf(sheet, "summary")), "Ph. Eur. 5.11"));
  }
  fx.ingested.job.material_class = ingest::MaterialClass::kPharmaceuticalPowder;
  const Sheet sheet = BuildSheet(fx.Inputs(), FullTemplate(), FixtureOptions());
  EXPECT_TRUE(sheet.hygroscopicity_relevant);
  EXPECT_TRUE(HasHeadline(sheet, "hygroscopicity_mass_increase"));
  const std::vector<std::string> summary = Texts(SectionOf(sheet, "summary"));
  EXPECT_TRUE(AnyContains(summary, "hygroscopic"));
  EXPECT_TRUE(AnyContains(summary, "on dry mass (basis of the Ph. Eur. 5.11 class)"));
  EXPECT_TRUE(AnyContains(summary, "sample as received after 24 h"));
  EXPECT_FALSE(HygroscopicityClassRelevant(ingest::MaterialClass::kFood));
  EXPECT_FALSE(HygroscopicityClassRelevant(ingest::MaterialClass::kUnstated));
}

TEST(ReaderTextTest, KelvinDegCSourceNotesAndRegistryKeysBecomePlain) {
  using internal::ReaderText;
  EXPECT_EQ(ReaderText("adsorption at 296.15 K, bet: too few points"),
            "adsorption at 23 °C, Brunauer-Emmett-Teller (BET): too few points");
  EXPECT_EQ(ReaderText("desorption at 313.15 K)"), "desorption at 40 °C)");
  EXPECT_EQ(ReaderText("fitted at 296.55 K."), "fitted at 23.4 °C.");
  // A small number of kelvin is a temperature difference: same number in °C.
  EXPECT_EQ(ReaderText("u(T) = 0.15 K, rate in 1/K"), "u(T) = 0.15 °C, rate in 1/K");
  EXPECT_EQ(ReaderText("classifies at 25 +- 1 degC"), "classifies at 25 ± 1 °C");
  EXPECT_EQ(ReaderText("(Lewicki, 1997; from memory): not a type II curve"),
            "(Lewicki, 1997): not a type II curve");
  EXPECT_EQ(ReaderText("limit 0.2 % (from memory)"), "limit 0.2 %");
  EXPECT_EQ(ReaderText("moisture content from the fitted gab model"),
            "moisture content from the fitted Guggenheim-Anderson-de Boer (GAB) model");
  // Settings as written keep their keys; keys inside other words are not touched.
  EXPECT_EQ(ReaderText("fit.models = [\"gab\", \"bet_n\"]"), "fit.models = [\"gab\", \"bet_n\"]");
  EXPECT_EQ(ReaderText("alphabet gabion 300 Kg"), "alphabet gabion 300 Kg");
  EXPECT_EQ(ReaderText("bet_n: n >= 50"), "n-layer BET: n >= 50");
}

}  // namespace
}  // namespace sorbtrace::report::internal
