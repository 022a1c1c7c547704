// CSV companions of the datasheet: comma-separated, one header line, numbers in SI in their
// shortest round-trip form (so they re-read to the same doubles), text fields quoted when
// they contain a comma, quote or line break (RFC 4180). Text that a spreadsheet would run as
// a formula (first character =, +, -, @, tab or CR; OWASP "CSV Injection") is neutralised:
// prefixed with a single quote and quoted. A text cell that is a plain number (e.g. "-0.5")
// is not a formula and stays as it is.
#include <fmt/format.h>

#include <charconv>
#include <cmath>
#include <string>

#include "pipeline/report/results_json.h"

namespace sorbtrace::report::internal {
namespace {

std::string Num(double value) { return std::isfinite(value) ? fmt::format("{}", value) : ""; }

bool IsPlainNumber(const std::string& text) {
  double value = 0.0;
  const char* end = text.data() + text.size();
  const auto [ptr, ec] = std::from_chars(text.data(), end, value);
  return ec == std::errc() && ptr == end;
}

// OWASP CSV-injection rule: the characters that start a formula in common spreadsheets.
bool StartsAFormula(const std::string& text) {
  return !text.empty() && std::string_view("=+-@\t\r").find(text.front()) != std::string::npos &&
         !IsPlainNumber(text);
}

}  // namespace

std::string CsvText(const std::string& raw) {
  const bool formula = StartsAFormula(raw);
  std::string text = formula ? "'" + raw : raw;
  if (!formula && text.find_first_of(",\"\n\r") == std::string::npos) return text;
  std::string out = "\"";
  for (char c : text) {
    if (c == '"') out += '"';
    out += c;
  }
  return out + "\"";
}

namespace {

std::string Text(const std::string& text) { return CsvText(text); }

std::string Join(const std::vector<std::string>& items, const char* separator) {
  std::string out;
  for (size_t i = 0; i < items.size(); ++i) out += (i > 0 ? separator : "") + items[i];
  return out;
}

// RH and moisture content of a point as a person reads them (format.h rules, display units).
std::string AsPrinted(const Quantity& rh, const Quantity& moisture) {
  return Text(rh.text) + "," + Text(moisture.text);
}

// Cycles are numbered from 1, as in the equilibrium table of the sheet.
int CycleNumber(int cycle) { return cycle + 1; }

std::string YesNo(bool value) { return value ? "yes" : "no"; }

// equilibrium_table.csv: one row per specimen point ("specimen"), then the combined points
// ("combined", specimen ids joined by '+'). Columns (docs/input-formats.md, section 7):
// record, dataset, specimen, step (as numbered in the data file: a desiccator file's `step`
// column, a log's steps from 1), atmosphere, branch, cycle (from 1), temperature_K,
// rh_fraction, u_rh_fraction, moisture_kg_per_kg, u_moisture_kg_per_kg,
// expanded_u_moisture_kg_per_kg, coverage_factor, between_specimen_sd_kg_per_kg,
// num_specimens, volumetric_m3_per_m3, u_volumetric_m3_per_m3 (combined rows when a bulk
// density is stated, else empty), time_to_equilibrium_s, equilibrated, extrapolated, flags
// (joined by "; "), rh_as_printed, moisture_as_printed (the sheet's text, with its unit).
// u_ = standard uncertainty; coverage_factor: k of the expanded moisture uncertainty.
std::string EquilibriumTable(const Sheet& sheet) {
  std::string out =
      "record,dataset,specimen,step,atmosphere,branch,cycle,temperature_K,rh_fraction,"
      "u_rh_fraction,moisture_kg_per_kg,u_moisture_kg_per_kg,expanded_u_moisture_kg_per_kg,"
      "coverage_factor,between_specimen_sd_kg_per_kg,num_specimens,volumetric_m3_per_m3,"
      "u_volumetric_m3_per_m3,time_to_equilibrium_s,equilibrated,extrapolated,flags,"
      "rh_as_printed,moisture_as_printed\n";
  if (!sheet.record.isotherm) return out;
  const IsothermRecord& r = *sheet.record.isotherm;
  for (const SpecimenPointRecord& record : r.specimen_points) {
    const reduce::SpecimenPoint& p = record.point;
    const Quantity& moisture = record.moisture;
    out += fmt::format(
        "specimen,{},{},{},{},{},{},{},{},{},{},{},{},{},,1,,,{},{},{},{},{}\n", Text(p.dataset_id),
        Text(p.specimen_id), record.step_in_file, Text(p.step_label), BranchLabel(p.branch),
        CycleNumber(p.cycle), Num(p.temperature_K), Num(p.rh_fraction), Num(p.u_rh_fraction),
        Num(p.moisture_kg_per_kg), Num(p.u_moisture_kg_per_kg),
        Num(moisture.coverage_factor * p.u_moisture_kg_per_kg), Num(moisture.coverage_factor),
        Num(p.time_to_equilibrium_s), YesNo(p.equilibrated), YesNo(p.extrapolated),
        Text(Join(p.flags, "; ")), AsPrinted(record.rh, moisture));
  }
  for (const CombinedPointRecord& record : r.points) {
    const reduce::IsothermPoint& p = record.point;
    out += fmt::format(
        "combined,{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n",
        Text(p.dataset_id), Text(Join(p.specimen_ids, "+")), Text(record.step_in_file),
        Text(p.step_label), BranchLabel(p.branch), CycleNumber(p.cycle), Num(p.temperature_K),
        Num(p.rh_fraction), Num(p.u_rh_fraction), Num(p.moisture_kg_per_kg),
        Num(p.u_moisture_kg_per_kg), Num(p.expanded_u_moisture_kg_per_kg),
        Num(record.moisture.coverage_factor), Num(p.between_specimen_sd_kg_per_kg), p.num_specimens,
        p.has_volumetric ? Num(p.volumetric_m3_per_m3) : std::string(),
        p.has_volumetric ? Num(p.u_volumetric_m3_per_m3) : std::string(),
        Num(p.time_to_equilibrium_s), YesNo(p.equilibrated), YesNo(p.extrapolated),
        Text(Join(p.flags, "; ")), AsPrinted(record.rh, record.moisture));
  }
  return out;
}

std::string FitParameters(const Sheet& sheet) {
  std::string out =
      "fit,group,model,rank,converged,parameter,unit,value,standard_uncertainty,"
      "coverage_factor,expanded_uncertainty,interval_low,interval_high,as_printed,rmse_kg_per_kg,"
      "aicc,bic,flags\n";
  if (!sheet.record.fits) return out;
  const FitsRecord& f = *sheet.record.fits;
  for (size_t i = 0; i < f.fits.size() && i < sheet.models.size(); ++i) {
    const fit::ModelFit& mf = f.fits[i];
    const ModelRow& row = sheet.models[i];
    for (size_t k = 0; k < mf.result.estimates.size() && k < row.parameters.size(); ++k) {
      const fitters::ParameterEstimate& e = mf.result.estimates[k];
      const Quantity& q = row.parameters[k];
      out += fmt::format(
          "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n", i, Text(row.group_label),
          Text(mf.model_name), mf.rank, row.converged ? "yes" : "no", Text(e.name), Text(q.unit),
          Num(e.value), Num(q.standard_uncertainty), Num(q.coverage_factor),
          Num(q.expanded_uncertainty), Num(e.interval_low), Num(e.interval_high),
          // Empty where the sheet prints no value (MakeModelRow).
          Text(q.text), Num(mf.result.statistics.rmse), Num(mf.result.statistics.aicc),
          Num(mf.result.statistics.bic), Text(Join(row.flags, "; ")));
    }
  }
  return out;
}

std::string PoreDistribution(const Sheet& sheet) {
  std::string out =
      "distribution,method,model,branch,temperature_K,radius_m,kelvin_radius_m,film_thickness_m,"
      "rh_fraction,cumulative_volume_m3_per_kg,cumulative_low_m3_per_kg,"
      "cumulative_high_m3_per_kg,dv_dlogr_m3_per_kg,dv_dlogr_low_m3_per_kg,"
      "dv_dlogr_high_m3_per_kg\n";
  if (!sheet.record.pores) return out;
  const auto& distributions = sheet.record.pores->distributions;
  for (size_t d = 0; d < distributions.size(); ++d) {
    const pores::PoreDistribution& pd = distributions[d].distribution;
    for (const pores::PoreDistributionPoint& p : pd.points) {
      out += fmt::format(
          "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n", d, Text(pd.method), Text(pd.model_name),
          BranchLabel(pd.branch), Num(pd.temperature_K), Num(p.radius_m), Num(p.kelvin_radius_m),
          Num(p.film_thickness_m), Num(p.rh_fraction), Num(p.cumulative_volume_m3_per_kg),
          Num(p.cumulative_low_m3_per_kg), Num(p.cumulative_high_m3_per_kg),
          Num(p.dv_dlogr_m3_per_kg), Num(p.dv_dlogr_low_m3_per_kg), Num(p.dv_dlogr_high_m3_per_kg));
    }
  }
  return out;
}

// One row per [[specification]]: the specification, the value in its unit, the decision and
// the risk; numbers empty where no statement could be made (and for an infinite limit).
std::string Conformity(const Sheet& sheet) {
  std::string out =
      "specification,quantity,unit,lower_limit,upper_limit,document,rule,value,"
      "standard_uncertainty,coverage_factor,effective_degrees_of_freedom,expanded_uncertainty,"
      "guard_band,acceptance_lower,acceptance_upper,conformance_probability,"
      "false_acceptance_probability_at_limit,decision,statement\n";
  for (size_t i = 0; i < sheet.conformity.size(); ++i) {
    const ConformityStatement& s = sheet.conformity[i];
    const ingest::Specification& spec = s.specification;
    const conform::Result& r = s.result;
    const auto number = [&](double value) { return s.available ? Num(value) : std::string(); };
    out += fmt::format(
        "{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{},{}\n", i + 1, Text(spec.quantity),
        Text(spec.unit), Num(spec.limits.lower), Num(spec.limits.upper), Text(spec.document),
        Text(s.rule_text), number(s.measurement.value), number(s.measurement.standard_uncertainty),
        number(s.measurement.coverage_factor), number(s.measurement.effective_degrees_of_freedom),
        number(r.expanded_uncertainty), number(r.guard_band), number(r.acceptance_lower),
        number(r.acceptance_upper), number(r.conformance_probability),
        number(r.false_acceptance_probability_at_limit),
        s.available ? conform::DecisionName(r.decision) : "no statement", Text(s.result_text));
  }
  return out;
}

}  // namespace

std::vector<std::pair<std::string, std::string>> BuildCsvFiles(const Sheet& sheet) {
  std::vector<std::pair<std::string, std::string>> files = {
      {"equilibrium_table.csv", EquilibriumTable(sheet)},
      {"fit_parameters.csv", FitParameters(sheet)},
      {"pore_distribution.csv", PoreDistribution(sheet)}};
  if (!sheet.conformity.empty()) files.emplace_back("conformity.csv", Conformity(sheet));
  return files;
}

}  // namespace sorbtrace::report::internal
