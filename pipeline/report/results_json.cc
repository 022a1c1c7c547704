// results.json: every number on the datasheet with unit and uncertainty, the formatted text
// exactly as printed (from the same Sheet as the PDF), and everything `sorbtrace verify`
// needs to re-derive it. Key order is fixed (nlohmann::ordered_json), numbers are written in
// shortest round-trip form, non-finite numbers as null: the dump is deterministic.
#include "pipeline/report/results_json.h"

#include <algorithm>
#include <cmath>
#include <string>
#include <utility>
#include <variant>

namespace sorbtrace::report::internal {
namespace {

using Json = nlohmann::ordered_json;

Json Number(double value) { return std::isfinite(value) ? Json(value) : Json(nullptr); }

Json NumberArray(const std::vector<double>& values) {
  Json out = Json::array();
  for (double v : values) out.push_back(Number(v));
  return out;
}

Json StringArray(const std::vector<std::string>& values) {
  Json out = Json::array();
  for (const std::string& v : values) out.push_back(v);
  return out;
}

Json Matrix(const Eigen::MatrixXd& m) {
  Json out = Json::array();
  for (Eigen::Index r = 0; r < m.rows(); ++r) {
    Json row = Json::array();
    for (Eigen::Index c = 0; c < m.cols(); ++c) row.push_back(Number(m(r, c)));
    out.push_back(row);
  }
  return out;
}

Json Diagnostics(const std::vector<Diagnostic>& diagnostics) {
  Json out = Json::array();
  for (const Diagnostic& d : diagnostics) out.push_back(FormatDiagnostic(d));
  return out;
}

std::string DryMassMethodName(ingest::DryMassMethod method) {
  switch (method) {
    case ingest::DryMassMethod::kOvenDrying:
      return "oven_drying";
    case ingest::DryMassMethod::kDesiccantStep:
      return "desiccant_step";
    case ingest::DryMassMethod::kFinalDryingStep:
      return "final_drying_step";
  }
  return "?";
}

Json Budget(const std::vector<reduce::BudgetLine>& lines) {
  Json out = Json::array();
  for (const reduce::BudgetLine& b : lines) {
    out.push_back({{"quantity", b.quantity},
                   {"standard_uncertainty", Number(b.standard_uncertainty)},
                   {"unit", b.unit},
                   {"sensitivity", Number(b.sensitivity)},
                   {"contribution", Number(b.contribution)},
                   {"degrees_of_freedom", Number(b.degrees_of_freedom)}});
  }
  return out;
}

Json JobJson(const SheetRecord& record) {
  Json job = Json::object();
  if (!record.job) return job;
  const ingest::JobSpec& j = *record.job;
  job["job_id"] = j.job_id;
  job["material"] = j.material_name;
  job["material_description"] = j.material_description;
  job["client"] = j.client;
  job["test_dates"] = j.test_dates;
  job["issue_date"] = j.issue_date;
  job["template"] = j.template_name;
  job["dry_mass_method"] = DryMassMethodName(j.dry_mass_method);
  job["drying_temperature"] = {{"value", Number(j.drying_temperature_K)}, {"unit", "K"}};
  job["balance_resolution"] = {{"value", Number(j.balance_resolution_g)}, {"unit", "g"}};
  job["balance_standard_uncertainty"] = {{"value", Number(j.balance_standard_uncertainty_g)},
                                         {"unit", "g"}};
  Json specimens = Json::array();
  for (const ingest::SpecimenSpec& s : j.specimens) {
    Json spec = {{"id", s.id}};
    spec["dry_mass_g"] = s.dry_mass_g ? Number(*s.dry_mass_g) : Json(nullptr);
    spec["bulk_density_kg_per_m3"] =
        s.bulk_density_kg_per_m3 ? Number(*s.bulk_density_kg_per_m3) : Json(nullptr);
    specimens.push_back(spec);
  }
  job["specimens"] = specimens;
  Json datasets = Json::array();
  for (const ingest::DataSetSpec& d : j.datasets) {
    datasets.push_back(
        {{"id", d.id},
         {"method", d.method == ingest::Method::kDesiccator ? "desiccator" : "vapor_log"},
         {"file", d.file_as_written},
         {"temperature_K", Number(d.temperature_K)},
         {"specimen_id", d.specimen_id}});
  }
  job["datasets"] = datasets;
  return job;
}

Json EquilibriaJson(const SheetRecord& record) {
  Json out = Json::object();
  if (!record.equilibria) return out;
  const EquilibriaRecord& e = *record.equilibria;
  Json points = Json::array();
  for (const equilibrate::EquilibriumPoint& p : e.points) {
    points.push_back({{"dataset_id", p.dataset_id},
                      {"specimen_id", p.specimen_id},
                      {"step_index", p.step_index},
                      {"step_label", p.step_label},
                      {"branch", BranchLabel(p.branch)},
                      {"cycle", p.cycle},
                      {"temperature_K", Number(p.temperature_K)},
                      {"rh_fraction", Number(p.rh_fraction)},
                      {"u_rh_fraction", Number(p.u_rh_fraction)},
                      {"rh_source", p.rh_source},
                      {"mass_g", Number(p.mass_g)},
                      {"u_mass_extrapolation_g", Number(p.u_mass_extrapolation_g)},
                      {"u_mass_extrapolation_model_g", Number(p.u_mass_extrapolation_model_g)},
                      {"approach_correction_g", Number(p.approach_correction_g)},
                      {"u_mass_approach_g", Number(p.u_mass_approach_g)},
                      {"u_mass_approach_model_g", Number(p.u_mass_approach_model_g)},
                      {"approach_time_constant_s", Number(p.approach_time_constant_s)},
                      {"approach_method", p.approach_method},
                      {"time_to_equilibrium_s", Number(p.time_to_equilibrium_s)},
                      {"equilibrated", p.equilibrated},
                      {"extrapolated", p.extrapolated},
                      {"flags", StringArray(p.flags)},
                      {"source", {{"file", p.where.file}, {"line", p.where.line}}}});
  }
  out["points"] = points;
  Json dry = Json::array();
  for (const equilibrate::DryMass& d : e.dry_masses) {
    dry.push_back({{"specimen_id", d.specimen_id},
                   {"mass_g", Number(d.mass_g)},
                   {"u_mass_g", Number(d.u_mass_g)},
                   {"method", d.method},
                   {"equilibrated", d.equilibrated}});
  }
  out["dry_masses"] = dry;
  out["summary"] = {{"num_steps", e.summary.num_steps},
                    {"num_equilibrated", e.summary.num_equilibrated},
                    {"num_extrapolated", e.summary.num_extrapolated},
                    {"num_not_equilibrated", e.summary.num_not_equilibrated},
                    {"warnings", Diagnostics(e.summary.warnings)}};
  Json scatter = Json::array();
  for (const equilibrate::WeighingScatterRecord& w : e.summary.weighing_scatter) {
    scatter.push_back({{"dataset_id", w.dataset_id},
                       {"sd_g", Number(w.sd_g)},
                       {"degrees_of_freedom", w.degrees_of_freedom},
                       {"num_steps_pooled", w.num_steps},
                       {"min_weighings_pooled", w.min_weighings_pooled}});
  }
  out["summary"]["weighing_scatter"] = scatter;
  return out;
}

Json IsothermJson(const SheetRecord& record) {
  Json out = Json::object();
  if (!record.isotherm) return out;
  const IsothermRecord& r = *record.isotherm;
  out["coverage_factor"] = Number(r.coverage_factor);
  Json points = Json::array();
  for (size_t i = 0; i < r.points.size(); ++i) {
    const reduce::IsothermPoint& p = r.points[i].point;
    const Quantity& rh = r.points[i].rh;
    const Quantity& u = r.points[i].moisture;
    const PointBudget& budget = r.points[i].budget;
    Json point = {{"index", i},
                  {"dataset_id", p.dataset_id},
                  {"step_index", p.step_index},
                  {"step_label", p.step_label},
                  {"branch", BranchLabel(p.branch)},
                  {"cycle", p.cycle},
                  {"temperature_K", Number(p.temperature_K)},
                  {"rh", QuantityJson(rh)},
                  {"moisture", QuantityJson(u)},
                  {"between_specimen_sd_kg_per_kg", Number(p.between_specimen_sd_kg_per_kg)},
                  {"num_specimens", p.num_specimens},
                  {"specimen_ids", StringArray(budget.specimen_ids)},
                  {"moisture_budget", Budget(budget.moisture)},
                  {"rh_budget", Budget(budget.rh)},
                  {"effective_dof", Number(p.effective_dof)},  // null: infinite
                  {"coverage_factor", Number(p.coverage_factor)}};
    if (p.has_volumetric) {
      point["volumetric"] = {{"value", Number(p.volumetric_m3_per_m3)},
                             {"unit", "m3/m3"},
                             {"standard_uncertainty", Number(p.u_volumetric_m3_per_m3)}};
    }
    point["time_to_equilibrium_s"] = Number(p.time_to_equilibrium_s);
    point["equilibrated"] = p.equilibrated;
    point["extrapolated"] = p.extrapolated;
    point["flags"] = StringArray(p.flags);
    points.push_back(point);
  }
  out["points"] = points;
  Json specimen_points = Json::array();
  for (const SpecimenPointRecord& sp : r.specimen_points) {
    const reduce::SpecimenPoint& p = sp.point;
    specimen_points.push_back({{"dataset_id", p.dataset_id},
                               {"specimen_id", p.specimen_id},
                               {"step_index", p.step_index},
                               {"step_label", p.step_label},
                               {"branch", BranchLabel(p.branch)},
                               {"cycle", p.cycle},
                               {"temperature_K", Number(p.temperature_K)},
                               {"rh_fraction", Number(p.rh_fraction)},
                               {"u_rh_fraction", Number(p.u_rh_fraction)},
                               {"moisture_kg_per_kg", Number(p.moisture_kg_per_kg)},
                               {"u_moisture_kg_per_kg", Number(p.u_moisture_kg_per_kg)},
                               {"effective_dof", Number(p.effective_dof)},
                               {"coverage_factor", Number(p.coverage_factor)},
                               {"moisture_budget", Budget(p.moisture_budget)},
                               {"rh_budget", Budget(p.rh_budget)},
                               {"equilibrated", p.equilibrated},
                               {"extrapolated", p.extrapolated},
                               {"flags", StringArray(p.flags)}});
  }
  out["specimen_points"] = specimen_points;
  Json retention = Json::array();
  for (const reduce::RetentionIsothermPoint& p : r.retention) {
    retention.push_back({{"specimen_id", p.specimen_id},
                         {"capillary_pressure_Pa", Number(p.capillary_pressure_Pa)},
                         {"equivalent_rh_fraction", Number(p.equivalent_rh_fraction)},
                         {"temperature_K", Number(p.temperature_K)},
                         {"moisture_kg_per_kg", Number(p.moisture_kg_per_kg)},
                         {"u_moisture_kg_per_kg", Number(p.u_moisture_kg_per_kg)},
                         {"branch", BranchLabel(p.branch)}});
  }
  out["retention"] = retention;
  out["summary"] = {{"num_points", r.summary.num_points},
                    {"num_excluded", r.summary.num_excluded},
                    {"warnings", Diagnostics(r.summary.warnings)}};
  return out;
}

Json ResampleJson(const fitters::ResampleResult& r) {
  return {{"not_formed", r.not_formed},
          {"num_draws", r.parameter_draws.size()},
          {"num_failed", r.num_failed},
          {"parameter_low", NumberArray(r.parameter_low)},
          {"parameter_high", NumberArray(r.parameter_high)},
          {"num_studentized", r.num_studentized},
          {"studentized_low", NumberArray(r.studentized_low)},
          {"studentized_high", NumberArray(r.studentized_high)},
          {"studentized_not_formed", r.studentized_not_formed},
          {"parameter_u", NumberArray(r.parameter_u)}};
}

Json FitModelJson(const FitsRecord& f, size_t i, const Sheet& sheet) {
  const fit::ModelFit& mf = f.fits[i];
  const ModelRow& row = sheet.models[i];
  Json parameters = Json::array();
  for (size_t k = 0; k < mf.result.estimates.size(); ++k) {
    const fitters::ParameterEstimate& e = mf.result.estimates[k];
    Json p = QuantityJson(row.parameters[k]);
    p["interval_low"] = Number(e.interval_low);
    p["interval_high"] = Number(e.interval_high);
    p["at_bound"] = e.at_bound;
    if (k < mf.info.parameters.size()) p["description"] = mf.info.parameters[k].description;
    parameters.push_back(p);
  }
  const fitters::FitStatistics& s = mf.result.statistics;
  Json consistency = Json::array();
  for (const fit::ConsistencyCheck& c : mf.consistency) {
    consistency.push_back({{"criterion", c.criterion}, {"passed", c.passed}, {"detail", c.detail}});
  }
  Json band = Json::array();
  for (const fitters::BandPoint& b : mf.band) {
    band.push_back({Number(b.x), Number(b.y), Number(b.confidence_low), Number(b.confidence_high),
                    Number(b.prediction_low), Number(b.prediction_high)});
  }
  return {{"index", i},
          {"model", mf.model_name},
          {"title", mf.info.title},
          {"equation", mf.info.equation},
          {"source", mf.info.source},
          {"group_index", mf.group_index},
          {"converged", mf.result.ok()},
          {"termination", mf.result.summary.message},
          {"covariance_convention", mf.result.summary.covariance_convention},
          {"parameters", parameters},
          {"covariance", Matrix(mf.result.covariance)},
          {"correlation", Matrix(mf.result.correlation)},
          {"notable_correlations", StringArray(row.correlations)},
          {"statistics",
           {{"num_observations", s.num_observations},
            {"num_parameters", s.num_parameters},
            {"degrees_of_freedom", s.degrees_of_freedom},
            {"weighted_ssr", Number(s.weighted_ssr)},
            {"ssr", Number(s.ssr)},
            {"rmse_kg_per_kg", Number(s.rmse)},
            {"rmse_text", row.rmse_text},
            {"residual_std", Number(s.residual_std)},
            {"r_squared", Number(s.r_squared)},
            {"adjusted_r_squared", Number(s.adjusted_r_squared)},
            {"mean_relative_deviation_percent", Number(s.mean_relative_deviation_percent)},
            {"mrd_text", row.mrd_text},
            {"aicc", Number(s.aicc)},
            {"aicc_text", row.aicc_text},
            {"bic", Number(s.bic)},
            {"bic_text", row.bic_text},
            {"chi_square_p_value", Number(s.chi_square_p_value)},
            {"runs", s.runs},
            {"runs_test_p_value", Number(s.runs_test_p_value)}}},
          {"bootstrap", ResampleJson(mf.bootstrap)},
          {"monte_carlo", ResampleJson(mf.monte_carlo)},
          {"consistency", consistency},
          {"flags", StringArray(row.flags)},
          {"rank", mf.rank},
          {"band_columns",
           {"rh_fraction", "moisture_kg_per_kg", "confidence_low", "confidence_high",
            "prediction_low", "prediction_high"}},
          {"band", band}};
}

Json RankingJson(const FitsRecord& f) {
  Json ranking = Json::array();
  for (const RankingRecord& r : f.ranking) {
    Json order = Json::array();
    for (const RankingRecord::Entry& e : r.order) {
      order.push_back({{"rank", e.rank},
                       {"fit_index", e.fit_index},
                       {"model", f.fits[e.fit_index].model_name}});
    }
    ranking.push_back({{"group_index", r.group_index},
                       {"best_fit_index", r.best_fit_index},
                       {"by", "AICc"},
                       {"order", order}});
  }
  return ranking;
}

Json FitsJson(const Sheet& sheet) {
  Json out = Json::object();
  if (!sheet.record.fits) return out;
  const FitsRecord& f = *sheet.record.fits;
  out["coverage_factor"] = Number(f.coverage_factor);
  Json groups = Json::array();
  for (size_t g = 0; g < f.groups.size(); ++g) {
    const fit::FitGroup& group = f.groups[g].group;
    Json indices = Json::array();
    for (int i : group.point_indices) indices.push_back(i);
    groups.push_back({{"index", g},
                      {"label", f.groups[g].label},
                      {"branch", BranchLabel(group.branch)},
                      {"temperature_K", Number(group.temperature_K)},
                      {"num_observations", group.observations.size()},
                      {"point_indices", indices}});
  }
  out["groups"] = groups;
  Json models = Json::array();
  for (size_t i = 0; i < f.fits.size(); ++i) models.push_back(FitModelJson(f, i, sheet));
  out["models"] = models;
  out["ranking"] = RankingJson(f);
  out["summary"] = {{"fits_attempted", f.summary.fits_attempted},
                    {"fits_converged", f.summary.fits_converged},
                    {"warnings", Diagnostics(f.summary.warnings)}};
  return out;
}

Json DistributionJson(const DistributionRecord& record) {
  const pores::PoreDistribution& d = record.distribution;
  Json points = Json::array();
  for (const pores::PoreDistributionPoint& p : d.points) {
    points.push_back({Number(p.radius_m), Number(p.kelvin_radius_m), Number(p.film_thickness_m),
                      Number(p.rh_fraction), Number(p.cumulative_volume_m3_per_kg),
                      Number(p.cumulative_low_m3_per_kg), Number(p.cumulative_high_m3_per_kg),
                      Number(p.dv_dlogr_m3_per_kg), Number(p.dv_dlogr_low_m3_per_kg),
                      Number(p.dv_dlogr_high_m3_per_kg)});
  }
  Json modes = Json::array();
  for (size_t m = 0; m < d.modes.size() && m < record.modes.size(); ++m) {
    Json mode = QuantityJson(record.modes[m]);
    mode["dv_dlogr_m3_per_kg"] = Number(d.modes[m].dv_dlogr_m3_per_kg);
    modes.push_back(mode);
  }
  Json decades = Json::array();
  for (const pores::DecadeFraction& f : d.decades) {
    decades.push_back({{"radius_low_m", Number(f.radius_low_m)},
                       {"radius_high_m", Number(f.radius_high_m)},
                       {"volume_fraction", Number(f.volume_fraction)},
                       {"u_volume_fraction", Number(f.u_volume_fraction)},
                       {"draws_coverage_factor", Number(f.coverage_factor)}});
  }
  return {
      {"method", d.method},
      {"model", d.model_name},
      {"branch", BranchLabel(d.branch)},
      {"temperature_K", Number(d.temperature_K)},
      {"meniscus", std::string(d.meniscus == physics::Meniscus::kHemispherical ? "hemispherical"
                                                                               : "cylindrical")},
      {"film", d.film_description},
      {"total_resolved_volume", QuantityJson(record.total_resolved_volume)},
      {"adsorbed_volume_m3_per_kg", Number(d.adsorbed_volume_m3_per_kg)},
      {"not_resolved_volume_m3_per_kg", Number(d.not_resolved_volume_m3_per_kg)},
      {"resolved_radius_min_m", Number(d.resolved_radius_min_m)},
      {"resolved_radius_max_m", Number(d.resolved_radius_max_m)},
      {"modes", modes},
      {"decades", decades},
      {"assumptions", StringArray(d.assumptions)},
      {"point_columns",
       {"radius_m", "kelvin_radius_m", "film_thickness_m", "rh_fraction",
        "cumulative_volume_m3_per_kg", "cumulative_low_m3_per_kg", "cumulative_high_m3_per_kg",
        "dv_dlogr_m3_per_kg", "dv_dlogr_low_m3_per_kg", "dv_dlogr_high_m3_per_kg"}},
      {"points", points}};
}

// Surface areas, moisture at the reference conditions, the hygroscopicity class.
void AddDerivedJson(const PoresRecord& pa, Json& out) {
  Json areas = Json::array();
  for (const SurfaceAreaRecord& record : pa.surface_areas) {
    const pores::SurfaceArea& s = record.area;
    Json a = QuantityJson(record.value);
    a["model"] = s.model_name;
    a["branch"] = BranchLabel(s.branch);
    a["temperature_K"] = Number(s.temperature_K);
    a["monolayer"] = QuantityJson(record.monolayer);
    a["molecular_area_m2"] = Number(s.molecular_area_m2);
    areas.push_back(a);
  }
  out["surface_area"] = areas;
  Json reference = Json::array();
  for (const ReferenceMoistureRecord& record : pa.reference_moisture) {
    const pores::ReferenceMoisture& r = record.reference;
    Json j = QuantityJson(record.value);
    j["temperature_K"] = Number(r.condition.temperature_K);
    // The temperature of the isotherm the value was read from (the reference temperature
    // only where temperature_matches).
    j["measured_temperature_K"] = Number(record.measured_temperature_K);
    j["rh_fraction"] = Number(r.condition.rh_fraction);
    j["model"] = r.model_name;
    j["branch"] = BranchLabel(r.branch);
    j["temperature_matches"] = r.temperature_matches;
    j["u_model_choice_kg_per_kg"] = Number(r.u_model_choice_kg_per_kg);
    j["models_weighed"] = r.models_weighed;
    j["flags"] = StringArray(r.flags);
    reference.push_back(j);
  }
  out["reference_moisture"] = reference;
  const pores::Hygroscopicity& h = pa.hygroscopicity;
  Json hyg = {{"applicable", h.applicable}, {"reason", h.reason}, {"class", h.class_name}};
  if (h.applicable) hyg["mass_increase"] = QuantityJson(pa.mass_increase);
  out["hygroscopicity"] = hyg;
}

// Hysteresis and isosteric heat.
void AddThermodynamicsJson(const PoresRecord& pa, Json& out) {
  Json hysteresis = Json::array();
  for (const pores::Hysteresis& y : pa.hysteresis) {
    Json points = Json::array();
    for (const pores::HysteresisPoint& p : y.points) {
      points.push_back({{"rh_fraction", Number(p.rh_fraction)},
                        {"adsorption_kg_per_kg", Number(p.adsorption_kg_per_kg)},
                        {"desorption_kg_per_kg", Number(p.desorption_kg_per_kg)},
                        {"difference_kg_per_kg", Number(p.difference_kg_per_kg)},
                        {"u_difference_kg_per_kg", Number(p.u_difference_kg_per_kg)},
                        {"significant", p.significant}});
    }
    hysteresis.push_back({{"available", y.available},
                          {"reason", y.reason},
                          {"temperature_K", Number(y.temperature_K)},
                          {"max_difference_kg_per_kg", Number(y.max_difference_kg_per_kg)},
                          {"rh_at_max_fraction", Number(y.rh_at_max_fraction)},
                          {"significant_rh_low_fraction", Number(y.significant_rh_low_fraction)},
                          {"significant_rh_high_fraction", Number(y.significant_rh_high_fraction)},
                          {"points", points}});
  }
  out["hysteresis"] = hysteresis;
  Json heat = Json::array();
  for (const pores::IsostericHeat& q : pa.isosteric_heat) {
    Json points = Json::array();
    for (const pores::IsostericHeatPoint& p : q.points) {
      points.push_back({{"moisture_kg_per_kg", Number(p.moisture_kg_per_kg)},
                        {"net_heat_J_per_mol", Number(p.net_heat_J_per_mol)},
                        {"u_net_heat_J_per_mol", Number(p.u_net_heat_J_per_mol)},
                        {"total_heat_J_per_mol", Number(p.total_heat_J_per_mol)}});
    }
    heat.push_back({{"available", q.available},
                    {"reason", q.reason},
                    {"branch", BranchLabel(q.branch)},
                    {"temperatures_K", NumberArray(q.temperatures_K)},
                    {"points", points}});
  }
  out["isosteric_heat"] = heat;
}

Json PoresJson(const SheetRecord& record) {
  Json out = Json::object();
  if (!record.pores) return out;
  const PoresRecord& pa = *record.pores;
  Json distributions = Json::array();
  for (const DistributionRecord& d : pa.distributions) distributions.push_back(DistributionJson(d));
  out["distributions"] = distributions;
  AddDerivedJson(pa, out);
  AddThermodynamicsJson(pa, out);
  out["warnings"] = Diagnostics(pa.warnings);
  return out;
}

}  // namespace

namespace {

// The sheet's sections as numbered and their tables cell by cell, exactly as printed on the
// PDF and in the HTML report (each cell's "key" names the Quantity it prints, if any), and
// the names of their figures.
Json SheetJson(const Sheet& sheet) {
  Json sections = Json::array();
  for (const Section& section : sheet.sections) {
    Json tables = Json::array();
    Json figures = Json::array();
    for (const Block& block : section.blocks) {
      if (const auto* f = std::get_if<FigureBlock>(&block)) {
        figures.push_back({{"name", f->name}, {"panels", f->panels.size()}});
      }
      const auto* t = std::get_if<TableBlock>(&block);
      if (t == nullptr) continue;
      Json columns = Json::array();
      for (const ColumnSpec& c : t->columns) columns.push_back(c.header);
      Json rows = Json::array();
      for (const std::vector<Cell>& row : t->rows) {
        Json cells = Json::array();
        for (const Cell& cell : row) {
          Json j = {{"text", cell.text}};
          if (!cell.key.empty()) j["key"] = cell.key;
          cells.push_back(j);
        }
        rows.push_back(cells);
      }
      tables.push_back({{"name", t->name}, {"columns", columns}, {"rows", rows}});
    }
    sections.push_back({{"number", section.number},
                        {"key", section.key},
                        {"heading", section.Heading()},
                        {"tables", tables},
                        {"figures", figures}});
  }
  return {{"sections", sections}};
}

}  // namespace

namespace {

// One statement of conformity: the specification as stated, the value and its uncertainty in
// the specification's unit, the decision and its risk (null where not available).
Json ConformityJson(const ConformityStatement& s) {
  const ingest::Specification& spec = s.specification;
  const conform::Result& r = s.result;
  const bool a = s.available;
  Json j;
  j["quantity"] = spec.quantity;
  j["label"] = s.quantity_label;
  j["unit"] = spec.unit;
  j["lower_limit"] = Number(spec.limits.lower);
  j["upper_limit"] = Number(spec.limits.upper);
  j["document"] = spec.document;
  j["rule"] = s.rule_text;
  j["available"] = a;
  j["reason"] = s.reason;
  j["value"] = a ? Number(s.measurement.value) : Json(nullptr);
  j["standard_uncertainty"] = a ? Number(s.measurement.standard_uncertainty) : Json(nullptr);
  j["coverage_factor"] = a ? Number(s.measurement.coverage_factor) : Json(nullptr);
  j["effective_degrees_of_freedom"] =
      a ? Number(s.measurement.effective_degrees_of_freedom) : Json(nullptr);
  j["expanded_uncertainty"] = a ? Number(r.expanded_uncertainty) : Json(nullptr);
  j["guard_band"] = a ? Number(r.guard_band) : Json(nullptr);
  j["acceptance_lower"] = a ? Number(r.acceptance_lower) : Json(nullptr);
  j["acceptance_upper"] = a ? Number(r.acceptance_upper) : Json(nullptr);
  j["conformance_probability"] = a ? Number(r.conformance_probability) : Json(nullptr);
  j["false_acceptance_probability_at_limit"] =
      a ? Number(r.false_acceptance_probability_at_limit) : Json(nullptr);
  j["decision"] = a ? conform::DecisionName(r.decision) : "no statement";
  j["text"] = {{"specification", s.limits_text},
               {"value", s.value_text},
               {"guard_band", s.guard_band_text},
               {"result", s.result_text},
               {"risk", s.risk_text}};
  return j;
}

}  // namespace

nlohmann::ordered_json BuildResultsJson(const Sheet& sheet, int num_pages) {
  const SheetRecord& record = sheet.record;
  Json root;
  root["schema"] = "sorbtrace-results/1";
  root["software"] = {{"name", "sorbtrace"}, {"version", record.software_version}};
  root["report"] = {{"template", record.template_name},
                    {"title", record.template_title},
                    {"document_date", record.document_date},
                    {"num_pages", num_pages},
                    {"moisture_unit", sheet.moisture_unit},
                    {"uncertainty_significant_digits", sheet.rules.significant_digits},
                    {"coverage_factor", Number(sheet.rules.coverage_factor)}};
  root["job"] = JobJson(record);
  root["issue"] = record.issue;
  Json files = Json::array();
  for (const ingest::InputFileRecord& f : record.input_files) {
    files.push_back(
        {{"role", f.role}, {"path", f.path}, {"sha256", f.sha256}, {"size_bytes", f.size_bytes}});
  }
  root["inputs"] = files;
  root["settings"] = record.settings;
  Json headline = Json::array();
  for (const Quantity& q : sheet.headline) headline.push_back(QuantityJson(q));
  root["headline"] = headline;
  root["hygroscopicity_class"] = sheet.hygroscopicity_class;
  Json conformity = Json::array();
  for (const ConformityStatement& s : sheet.conformity) conformity.push_back(ConformityJson(s));
  root["conformity"] = conformity;
  root["best_model"] = sheet.best_model_text;
  root["cautions"] = StringArray(sheet.cautions);
  root["standing_statements"] = StringArray(sheet.standing_cautions);
  root["equilibria"] = EquilibriaJson(record);
  root["isotherm"] = IsothermJson(record);
  root["fits"] = FitsJson(sheet);
  root["pores"] = PoresJson(record);
  root["sheet"] = SheetJson(sheet);
  return root;
}

}  // namespace sorbtrace::report::internal
