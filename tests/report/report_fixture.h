// A small, realistic, invented data set filling every stage's result structs directly, so the
// report stage can be tested without running the earlier stages. The material, laboratory
// and numbers are fictional: a lime-hemp plaster measured in desiccators over seven saturated
// salt solutions at 23 °C (three specimens, adsorption then desorption), plus a short vapour
// sorption log of one extra specimen. Moisture contents follow a GAB isotherm with a small
// deterministic scatter.
#pragma once

#include "pipeline/report/report.h"

namespace sorbtrace::report::testing {

struct ReportFixture {
  ingest::IngestResult ingested;
  equilibrate::EquilibriumSet equilibria;
  reduce::ReducedIsotherms reduced;
  fit::IsothermFits fits;
  pores::PoreAnalysis pores;
  nlohmann::ordered_json settings;

  ReportInputs Inputs() const;
};

// The GAB isotherm u(a) = X_m C K a / ((1 - K a)(1 - K a + C K a)) [kg/kg]
// (Guggenheim 1966; Anderson 1946; de Boer 1953), used to invent the data.
double GabMoisture(double rh_fraction, double monolayer_kg_per_kg, double c, double k);

ReportFixture MakeReportFixture();

// The options the report tests compose with: the build's font folder, a fixed document date.
ReportOptions FixtureOptions();

// templates/full.toml, loaded once.
const Template& FullTemplate();

}  // namespace sorbtrace::report::testing
