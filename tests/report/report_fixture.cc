#include "tests/report/report_fixture.h"

#include <fmt/format.h>

#include <cmath>
#include <cstdint>
#include <numbers>
#include <string>
#include <tuple>
#include <vector>

#include "pipeline/common/files.h"

namespace sorbtrace::report::testing {
namespace {

constexpr double kT23_K = 296.15;
constexpr double kK = 2.0;  // coverage factor

struct Step {
  const char* salt;
  double rh;    // invented RH of the step (near the salt's tabulated value at 23 degC)
  double u_rh;  // standard uncertainty
};
// Adsorption over seven salts, then desorption back down over four of them.
const std::vector<Step> kAdsorptionSteps = {{"LiCl", 0.113, 0.003},  {"MgCl2", 0.329, 0.002},
                                            {"K2CO3", 0.432, 0.004}, {"Mg(NO3)2", 0.536, 0.003},
                                            {"NaCl", 0.753, 0.002},  {"KCl", 0.845, 0.003},
                                            {"K2SO4", 0.973, 0.005}};
const std::vector<Step> kDesorptionSteps = {{"KCl", 0.845, 0.003},
                                            {"NaCl", 0.753, 0.002},
                                            {"Mg(NO3)2", 0.536, 0.003},
                                            {"MgCl2", 0.329, 0.002}};

// GAB parameters of the invented plaster (adsorption, desorption).
constexpr double kXmAds = 0.0095, kCAds = 14.0, kKAds = 0.82;
constexpr double kXmDes = 0.0118, kCDes = 16.0, kKDes = 0.80;

const std::vector<std::string> kSpecimens = {"P7-A", "P7-B", "P7-C"};
const std::vector<double> kDryMass_g = {24.8132, 25.1047, 24.9560};

// Deterministic scatter in kg/kg per specimen and step (no RNG needed).
double Scatter(int specimen, int step) {
  static const double kPattern[] = {0.00031, -0.00022, 0.00009, -0.00035,
                                    0.00018, 0.00027,  -0.00011};
  return kPattern[(specimen * 3 + step) % 7] * (1.0 + 0.3 * specimen);
}

reduce::BudgetLine Budget(const char* quantity, double u, const char* unit, double c,
                          double contribution) {
  reduce::BudgetLine line;
  line.quantity = quantity;
  line.standard_uncertainty = u;
  line.unit = unit;
  line.sensitivity = c;
  line.contribution = contribution;
  return line;
}

pores::ModalRadius Mode(double radius_m, double u_radius_m, double dv_dlogr) {
  pores::ModalRadius m;
  m.radius_m = radius_m;
  m.u_radius_m = u_radius_m;
  m.dv_dlogr_m3_per_kg = dv_dlogr;
  return m;
}

fitters::ParameterSpec Parameter(const char* name, const char* unit, double low, double high,
                                 const char* description) {
  fitters::ParameterSpec p;
  p.name = name;
  p.unit = unit;
  p.lower_bound = low;
  p.upper_bound = high;
  p.description = description;
  return p;
}

fitters::ModelInfo GabInfo() {
  fitters::ModelInfo info;
  info.name = "gab";
  info.title = "Guggenheim-Anderson-de Boer (GAB)";
  info.equation = "u = X_m C K a_w / ((1 − K a_w) (1 − K a_w + C K a_w))";
  info.source = "Guggenheim (1966); Anderson (1946); de Boer (1953)";
  info.parameters = {Parameter("X_m", "kg/kg", 0.0, 10.0, "monolayer moisture content"),
                     Parameter("C", "1", 0.0, 1e6, "Guggenheim constant"),
                     Parameter("K", "1", 0.0, 1.5, "multilayer factor")};
  return info;
}

fitters::ModelInfo OswinInfo() {
  fitters::ModelInfo info;
  info.name = "oswin";
  info.title = "Oswin";
  info.equation = "u = A (a_w / (1 − a_w))^B";
  info.source = "Oswin (1946)";
  info.parameters = {Parameter("A", "kg/kg", 0.0, 10.0, "moisture content at a_w = 0.5"),
                     Parameter("B", "1", 0.0, 5.0, "shape exponent")};
  return info;
}

fitters::ModelInfo BetInfo() {
  fitters::ModelInfo info;
  info.name = "bet";
  info.title = "Brunauer-Emmett-Teller (BET)";
  info.equation = "u = X_m C a_w / ((1 − a_w)(1 − a_w + C a_w))";
  info.source = "Brunauer, Emmett & Teller (1938)";
  info.x_min = 0.05;
  info.x_max = 0.35;
  info.parameters = {Parameter("X_m", "kg/kg", 0.0, 10.0, "monolayer moisture content"),
                     Parameter("C", "1", 0.0, 1e6, "BET constant")};
  return info;
}

double Oswin(double a, double amplitude, double exponent) {
  return amplitude * std::pow(a / (1.0 - a), exponent);
}

// A fitted model with invented but consistent statistics and a band on 0..0.98.
fit::ModelFit MakeFit(const fitters::ModelInfo& info, int group, const fit::FitGroup& data,
                      const std::vector<double>& params, const std::vector<double>& se,
                      const std::vector<std::vector<double>>& correlation,
                      double (*curve)(double, const std::vector<double>&), int rank, double aicc) {
  fit::ModelFit mf;
  mf.model_name = info.name;
  mf.info = info;
  mf.group_index = group;
  mf.rank = rank;
  fitters::FitResult& r = mf.result;
  r.model_name = info.name;
  r.parameters = params;
  r.summary.termination = fitters::FitTermination::kConverged;
  r.summary.message = "converged: function tolerance reached";
  r.summary.covariance_convention = "s^2 (J'J)^-1 (relative weights)";
  r.summary.covariance_available = true;
  const size_t p = params.size();
  r.covariance = Eigen::MatrixXd::Zero(static_cast<Eigen::Index>(p), static_cast<Eigen::Index>(p));
  r.correlation = r.covariance;
  for (size_t i = 0; i < p; ++i) {
    fitters::ParameterEstimate e;
    e.name = info.parameters[i].name;
    e.unit = info.parameters[i].unit;
    e.value = params[i];
    e.standard_error = se[i];
    e.interval_low = params[i] - 2.45 * se[i];  // Student t, 6 dof, 95 % (GUM Table G.2)
    e.interval_high = params[i] + 2.45 * se[i];
    r.estimates.push_back(e);
    mf.expanded_uncertainty.push_back(kK * se[i]);
    for (size_t j = 0; j < p; ++j) {
      const auto a = static_cast<Eigen::Index>(i);
      const auto b = static_cast<Eigen::Index>(j);
      r.correlation(a, b) = correlation[i][j];
      r.covariance(a, b) = correlation[i][j] * se[i] * se[j];
    }
  }
  double ssr = 0.0, sum_rel = 0.0;
  for (const fitters::Observation& o : data.observations) {
    const double f = curve(o.x[0], params);
    r.fitted.push_back(f);
    r.residuals.push_back(o.y - f);
    r.fitted_x0.push_back(o.x[0]);
    ssr += (o.y - f) * (o.y - f);
    sum_rel += std::abs(o.y - f) / std::abs(o.y);
  }
  const int n = static_cast<int>(data.observations.size());
  r.statistics.num_observations = n;
  r.statistics.num_parameters = static_cast<int>(p);
  r.statistics.degrees_of_freedom = n - static_cast<int>(p);
  r.statistics.ssr = ssr;
  r.statistics.weighted_ssr = ssr / (0.0004 * 0.0004);
  r.statistics.rmse = std::sqrt(ssr / n);
  r.statistics.r_squared = 0.998;
  r.statistics.adjusted_r_squared = 0.997;
  r.statistics.mean_relative_deviation_percent = 100.0 * sum_rel / n;
  r.statistics.aicc = aicc;
  r.statistics.bic = aicc - 1.7;
  r.statistics.runs = 4;
  r.statistics.runs_test_p_value = 0.62;
  for (int i = 0; i <= 98; ++i) {
    const double a = 0.01 * i;
    fitters::BandPoint b;
    b.x = a;
    b.y = curve(a, params);
    const double half = 0.025 * b.y + 0.00015 + 0.004 * a * a * a;
    b.confidence_low = b.y - half;
    b.confidence_high = b.y + half;
    b.prediction_low = b.y - 2.0 * half;
    b.prediction_high = b.y + 2.0 * half;
    mf.band.push_back(b);
  }
  return mf;
}

double GabCurve(double a, const std::vector<double>& p) { return GabMoisture(a, p[0], p[1], p[2]); }
double OswinCurve(double a, const std::vector<double>& p) { return Oswin(a, p[0], p[1]); }
double BetCurve(double a, const std::vector<double>& p) { return GabMoisture(a, p[0], p[1], 1.0); }

}  // namespace

double GabMoisture(double rh_fraction, double monolayer_kg_per_kg, double c, double k) {
  const double ka = k * rh_fraction;
  return monolayer_kg_per_kg * c * ka / ((1.0 - ka) * (1.0 - ka + c * ka));
}

ReportInputs ReportFixture::Inputs() const {
  ReportInputs in;
  in.ingested = &ingested;
  in.equilibria = &equilibria;
  in.reduced = &reduced;
  in.fits = &fits;
  in.pores = &pores;
  in.effective_settings = settings;
  in.software_version = "0.1.0-test";
  return in;
}

ReportFixture MakeReportFixture() {
  ReportFixture fx;
  // ---- Job and inputs --------------------------------------------------------------------
  ingest::JobSpec& job = fx.ingested.job;
  job.job_file = "jobs/LAB-2026-0142.toml";
  job.job_id = "LAB-2026-0142";
  job.material_name = "Lime-hemp plaster, batch 7 (fictional)";
  job.material_description = "hydraulic lime binder with hemp shiv, 28 days cured, 15 mm slices";
  job.client = "Eastbrook Restoration Workshop (fictional)";
  job.test_dates = "2026-09-01 to 2026-10-12";
  job.issue_date = "2026-10-15";
  for (size_t i = 0; i < kSpecimens.size(); ++i) {
    ingest::SpecimenSpec spec;
    spec.id = kSpecimens[i];
    spec.dry_mass_g = kDryMass_g[i];
    spec.bulk_density_kg_per_m3 = 720.0;
    job.specimens.push_back(spec);
  }
  ingest::SpecimenSpec logged;
  logged.id = "P7-D";
  job.specimens.push_back(logged);
  ingest::DataSetSpec desiccator;
  desiccator.id = "desiccator-23C";
  desiccator.method = ingest::Method::kDesiccator;
  desiccator.file = "data/weighings-23C.csv";
  desiccator.file_as_written = "data/weighings-23C.csv";
  desiccator.temperature_K = kT23_K;
  job.datasets.push_back(desiccator);
  ingest::DataSetSpec log;
  log.id = "vapour-log-23C";
  log.method = ingest::Method::kVaporLog;
  log.file = "data/balance-log-23C.csv";
  log.file_as_written = "data/balance-log-23C.csv";
  log.temperature_K = kT23_K;
  log.specimen_id = "P7-D";
  job.datasets.push_back(log);
  const struct {
    const char* role;
    const char* path;
    std::uint64_t size;
  } kFiles[] = {{"job", "LAB-2026-0142.toml", 1843},
                {"desiccator", "data/weighings-23C.csv", 9120},
                {"vapor_log", "data/balance-log-23C.csv", 402311},
                {"template", "templates/full.toml", 1290}};
  for (const auto& f : kFiles) {
    ingest::InputFileRecord record;
    record.role = f.role;
    record.path = f.path;
    record.sha256 = Sha256Hex(std::string("content of ") + f.path);
    record.size_bytes = f.size;
    fx.ingested.inputs.push_back(record);
  }

  // ---- Desiccator weighings and equilibria ------------------------------------------------
  ingest::DesiccatorSeries series;
  series.dataset_id = desiccator.id;
  series.file = desiccator.file_as_written;
  struct StepPlan {
    Step step;
    ingest::Branch branch;
    int index;
  };
  std::vector<StepPlan> plan;
  int index = 0;
  for (const Step& s : kAdsorptionSteps) plan.push_back({s, ingest::Branch::kAdsorption, index++});
  for (const Step& s : kDesorptionSteps) plan.push_back({s, ingest::Branch::kDesorption, index++});
  constexpr double kDay_s = 86400.0;
  constexpr double kStepDays = 6.0;
  for (size_t sp = 0; sp < kSpecimens.size(); ++sp) {
    double previous = 0.0;
    for (const StepPlan& st : plan) {
      const bool ads = st.branch == ingest::Branch::kAdsorption;
      const double u = (ads ? GabMoisture(st.step.rh, kXmAds, kCAds, kKAds)
                            : GabMoisture(st.step.rh, kXmDes, kCDes, kKDes)) +
                       Scatter(static_cast<int>(sp), st.index);
      ingest::DesiccatorStep step;
      step.specimen_id = kSpecimens[sp];
      step.step_index = st.index;
      step.atmosphere = st.step.salt;
      step.salt = st.step.salt;
      step.branch = st.branch;
      step.temperature_K = kT23_K;
      step.first_line = 2 + 6 * (static_cast<int>(sp) * 11 + st.index);
      const double start = st.index * kStepDays * kDay_s;
      for (int w = 0; w < 6; ++w) {
        const double t = start + w * kDay_s;
        const double approach = 1.0 - std::exp(-(w + 0.5) / 1.2);
        const double moisture = previous + (u - previous) * approach;
        ingest::Weighing weighing;
        weighing.time_s = t;
        weighing.timestamp = fmt::format("2026-09-{:02d}T09:00", 1 + w);
        weighing.mass_g = kDryMass_g[sp] * (1.0 + moisture);
        weighing.line = step.first_line + w;
        step.weighings.push_back(weighing);
      }
      series.steps.push_back(step);
      previous = u;

      equilibrate::EquilibriumPoint e;
      e.dataset_id = desiccator.id;
      e.specimen_id = kSpecimens[sp];
      e.step_index = st.index;
      e.step_label = st.step.salt;
      e.branch = st.branch;
      e.temperature_K = kT23_K;
      e.rh_fraction = st.step.rh;
      e.u_rh_fraction = st.step.u_rh;
      e.rh_source = std::string(st.step.salt) + ", saturated solution table";
      e.mass_g = kDryMass_g[sp] * (1.0 + u);
      e.time_to_equilibrium_s = (st.index == 6 ? 6.0 : 4.0) * kDay_s;
      e.equilibrated = !(st.index == 6 && sp == 2);
      if (!e.equilibrated) e.flags.push_back("not equilibrated: last change 0.14 %");
      e.where.file = desiccator.file_as_written;
      e.where.line = step.first_line;
      fx.equilibria.points.push_back(e);

      reduce::SpecimenPoint p;
      p.dataset_id = desiccator.id;
      p.specimen_id = kSpecimens[sp];
      p.step_index = st.index;
      p.step_label = st.step.salt;
      p.branch = st.branch;
      p.temperature_K = kT23_K;
      p.rh_fraction = st.step.rh;
      p.u_rh_fraction = st.step.u_rh;
      p.moisture_kg_per_kg = u;
      const double u_balance = 1e-4 * std::sqrt(2.0) / kDryMass_g[sp];
      const double u_rh_effect = 0.02 * u;
      p.u_moisture_kg_per_kg = std::sqrt(u_balance * u_balance + u_rh_effect * u_rh_effect);
      p.moisture_budget.push_back(
          Budget("balance (wet mass)", 1e-4, "g", 1.0 / kDryMass_g[sp], 1e-4 / kDryMass_g[sp]));
      p.moisture_budget.push_back(Budget("dry mass", 1e-4, "g", -(1.0 + u) / kDryMass_g[sp],
                                         1e-4 * (1.0 + u) / kDryMass_g[sp]));
      p.moisture_budget.push_back(Budget("RH of the step (via isotherm slope)", st.step.u_rh, "1",
                                         0.02 * u / st.step.u_rh, u_rh_effect));
      p.time_to_equilibrium_s = e.time_to_equilibrium_s;
      p.equilibrated = e.equilibrated;
      p.flags = e.flags;
      fx.reduced.specimen_points.push_back(p);
    }
  }
  fx.ingested.desiccator_series.push_back(series);
  for (size_t sp = 0; sp < kSpecimens.size(); ++sp) {
    equilibrate::DryMass dry;
    dry.specimen_id = kSpecimens[sp];
    dry.mass_g = kDryMass_g[sp];
    dry.method = "oven drying at 105 °C (ISO 12570)";
    dry.equilibrated = true;
    fx.equilibria.dry_masses.push_back(dry);
  }

  // ---- Vapour-sorption log of P7-D -----------------------------------------------------------
  ingest::VaporLog vlog;
  vlog.dataset_id = log.id;
  vlog.file = log.file_as_written;
  vlog.specimen_id = "P7-D";
  vlog.num_rows = 43200;
  equilibrate::Trace trace;
  trace.dataset_id = log.id;
  trace.specimen_id = "P7-D";
  const double set_points[] = {0.0, 0.3, 0.5, 0.7, 0.9, 0.5};
  double mass = 5.012;
  for (int s = 0; s < 6; ++s) {
    const double target =
        5.012 * (1.0 + (s == 0 ? 0.0 : GabMoisture(set_points[s], kXmAds, kCAds, kKAds)));
    for (int i = 0; i < 60; ++i) {
      const double t = (s * 60 + i) * 240.0;  // 4 min spacing, 4 h steps
      mass = mass + (target - mass) * 0.12;
      equilibrate::TracePoint point;
      point.time_s = t;
      point.mass_g = mass;
      point.rh_fraction = set_points[s] + 0.004 * std::sin(i * 0.7);
      trace.points.push_back(point);
    }
    trace.equilibrium_times_s.push_back((s * 60 + 50) * 240.0);
    ingest::VaporLogStep step;
    step.step_index = s;
    step.set_rh_fraction = set_points[s];
    step.branch = s == 5 ? ingest::Branch::kDesorption
                         : (s == 0 ? ingest::Branch::kDrying : ingest::Branch::kAdsorption);
    step.start_time_s = s * 60 * 240.0;
    step.end_time_s = (s * 60 + 59) * 240.0;
    vlog.steps.push_back(step);
  }
  fx.ingested.vapor_logs.push_back(vlog);
  fx.equilibria.traces.push_back(trace);
  fx.equilibria.summary.num_steps = 33 + 6;
  fx.equilibria.summary.num_equilibrated = 38;
  fx.equilibria.summary.num_not_equilibrated = 1;
  fx.equilibria.summary.num_extrapolated = 0;
  fx.ingested.summary.rows_read = 43200 + 198;
  fx.ingested.summary.num_steps = 39;
  fx.ingested.summary.num_specimens = 4;

  // ---- Combined isotherm points ------------------------------------------------------------
  fx.reduced.coverage_factor = kK;
  for (const StepPlan& st : plan) {
    reduce::IsothermPoint ip;
    ip.dataset_id = desiccator.id;
    ip.specimen_ids = kSpecimens;
    ip.step_index = st.index;
    ip.step_label = st.step.salt;
    ip.branch = st.branch;
    ip.temperature_K = kT23_K;
    ip.rh_fraction = st.step.rh;
    ip.u_rh_fraction = st.step.u_rh;
    ip.expanded_u_rh_fraction = kK * st.step.u_rh;
    double sum = 0.0, sum2 = 0.0, u2 = 0.0;
    int n = 0;
    bool all_eq = true;
    for (std::size_t k = 0; k < fx.reduced.specimen_points.size(); ++k) {
      const reduce::SpecimenPoint& p = fx.reduced.specimen_points[k];
      if (p.step_index != st.index) continue;
      ip.specimen_point_indices.push_back(static_cast<int>(k));
      sum += p.moisture_kg_per_kg;
      sum2 += p.moisture_kg_per_kg * p.moisture_kg_per_kg;
      u2 += p.u_moisture_kg_per_kg * p.u_moisture_kg_per_kg;
      all_eq = all_eq && p.equilibrated;
      ++n;
    }
    ip.num_specimens = n;
    ip.moisture_kg_per_kg = sum / n;
    ip.between_specimen_sd_kg_per_kg = std::sqrt(std::max(0.0, (sum2 - sum * sum / n) / (n - 1)));
    ip.u_moisture_kg_per_kg = std::sqrt(u2 / (n * n) + ip.between_specimen_sd_kg_per_kg *
                                                           ip.between_specimen_sd_kg_per_kg / n);
    ip.expanded_u_moisture_kg_per_kg = kK * ip.u_moisture_kg_per_kg;
    ip.has_volumetric = true;
    ip.volumetric_m3_per_m3 = ip.moisture_kg_per_kg * 720.0 / 997.5;
    ip.u_volumetric_m3_per_m3 = ip.u_moisture_kg_per_kg * 720.0 / 997.5;
    ip.time_to_equilibrium_s = (st.index == 6 ? 6.0 : 4.0) * kDay_s;
    ip.equilibrated = all_eq;
    if (!all_eq) ip.flags.push_back("1 of 3 specimens not equilibrated (kept, flagged)");
    fx.reduced.points.push_back(ip);
  }
  fx.reduced.summary.num_points = static_cast<int>(fx.reduced.points.size());

  // ---- Fits ----------------------------------------------------------------------------------
  for (int g = 0; g < 2; ++g) {
    fit::FitGroup group;
    group.branch = g == 0 ? ingest::Branch::kAdsorption : ingest::Branch::kDesorption;
    group.temperature_K = kT23_K;
    for (size_t i = 0; i < fx.reduced.points.size(); ++i) {
      const reduce::IsothermPoint& p = fx.reduced.points[i];
      if (p.branch != group.branch) continue;
      fitters::Observation o;
      o.x[0] = p.rh_fraction;
      o.y = p.moisture_kg_per_kg;
      o.sigma_y = p.u_moisture_kg_per_kg;
      o.sigma_x0 = p.u_rh_fraction;
      group.observations.push_back(o);
      group.point_indices.push_back(static_cast<int>(i));
    }
    fx.fits.groups.push_back(group);
  }
  const std::vector<std::vector<double>> gab_corr = {
      {1.0, -0.962, 0.71}, {-0.962, 1.0, -0.55}, {0.71, -0.55, 1.0}};
  const std::vector<std::vector<double>> two_corr = {{1.0, 0.42}, {0.42, 1.0}};
  fx.fits.fits.push_back(MakeFit(GabInfo(), 0, fx.fits.groups[0], {0.00951, 13.6, 0.8213},
                                 {0.00042, 2.1, 0.0062}, gab_corr, GabCurve, 1, -112.4));
  fx.fits.fits.push_back(MakeFit(OswinInfo(), 0, fx.fits.groups[0], {0.0174, 0.512},
                                 {0.0009, 0.031}, two_corr, OswinCurve, 2, -101.9));
  {
    // BET on the adsorption points within its validity range only.
    fit::FitGroup bet_group = fx.fits.groups[0];
    bet_group.observations.resize(2);
    fit::ModelFit bet = MakeFit(BetInfo(), 0, bet_group, {0.0101, 11.2}, {0.0011, 3.4}, two_corr,
                                BetCurve, 3, -20.3);
    bet.flags.push_back("only 2 points in 0.05..0.35");
    fit::ConsistencyCheck check;
    check.criterion = "Rouquerol 1: u(1 - a_w) increases with a_w";
    check.passed = true;
    bet.consistency.push_back(check);
    bet.result.statistics.num_observations = 2;
    fx.fits.fits.push_back(bet);
  }
  fx.fits.fits.push_back(MakeFit(GabInfo(), 1, fx.fits.groups[1], {0.01179, 15.8, 0.8007},
                                 {0.00061, 3.2, 0.0091}, gab_corr, GabCurve, 1, -61.2));
  fx.fits.fits.push_back(MakeFit(OswinInfo(), 1, fx.fits.groups[1], {0.0207, 0.466},
                                 {0.0012, 0.040}, two_corr, OswinCurve, 2, -55.0));
  fx.fits.best_fit_per_group = {0, 3};
  fx.fits.coverage_factor = kK;
  fx.fits.summary.fits_attempted = 5;
  fx.fits.summary.fits_converged = 5;

  // ---- Pores ---------------------------------------------------------------------------------
  pores::PoreDistribution pd;
  pd.method = "model";
  pd.model_name = "gab";
  pd.branch = ingest::Branch::kDesorption;
  pd.temperature_K = kT23_K;
  pd.meniscus = physics::Meniscus::kHemispherical;
  pd.film_description = "Badmann, Stockhausen & Setzer (1981) t-curve";
  constexpr double kPeak_m = 7.9e-9;
  constexpr double kWidthDecades = 0.32;
  constexpr double kTotal_m3_per_kg = 3.1e-5;  // 31 mm3/g
  double cumulative = 0.0;
  const int n = 120;
  for (int i = 0; i < n; ++i) {
    const double log_r = -9.0 + 2.0 * i / (n - 1);  // 1 nm .. 100 nm
    pores::PoreDistributionPoint p;
    p.radius_m = std::pow(10.0, log_r);
    p.film_thickness_m = 0.6e-9;
    p.kelvin_radius_m = p.radius_m - p.film_thickness_m;
    p.rh_fraction = std::exp(-1.05e-9 / std::max(p.kelvin_radius_m, 1e-10));
    const double z = (log_r - std::log10(kPeak_m)) / kWidthDecades;
    p.dv_dlogr_m3_per_kg = kTotal_m3_per_kg / (kWidthDecades * std::sqrt(2.0 * std::numbers::pi)) *
                           std::exp(-0.5 * z * z);
    p.dv_dlogr_low_m3_per_kg = 0.85 * p.dv_dlogr_m3_per_kg;
    p.dv_dlogr_high_m3_per_kg = 1.12 * p.dv_dlogr_m3_per_kg;
    cumulative += p.dv_dlogr_m3_per_kg * (2.0 / (n - 1));
    p.cumulative_volume_m3_per_kg = cumulative;
    p.cumulative_low_m3_per_kg = 0.9 * cumulative;
    p.cumulative_high_m3_per_kg = 1.08 * cumulative;
    pd.points.push_back(p);
  }
  pd.modes.push_back(Mode(kPeak_m, 0.6e-9, pd.points[n / 2].dv_dlogr_m3_per_kg));
  pd.total_resolved_volume_m3_per_kg = cumulative;
  pd.u_total_resolved_volume_m3_per_kg = 0.04 * cumulative;
  pd.adsorbed_volume_m3_per_kg = 9.5e-6;
  pd.not_resolved_volume_m3_per_kg = 0.0;
  pd.resolved_radius_min_m = 1e-9;
  pd.resolved_radius_max_m = 38e-9;
  for (const auto& [low, high, fraction] :
       {std::tuple{1e-9, 1e-8, 0.71}, std::tuple{1e-8, 1e-7, 0.29}}) {
    pores::DecadeFraction f;
    f.radius_low_m = low;
    f.radius_high_m = high;
    f.volume_fraction = fraction;
    pd.decades.push_back(f);
  }
  pd.assumptions = {"cylindrical pores, open at both ends", "contact angle 0°",
                    "radii below 1 nm counted as adsorbed, not Kelvin-resolved"};
  fx.pores.distributions.push_back(pd);
  pores::PoreDistribution stepwise = pd;
  stepwise.method = "stepwise";
  stepwise.model_name.clear();
  stepwise.points.clear();
  for (int i = 0; i < 10; ++i) {
    pores::PoreDistributionPoint p = pd.points[static_cast<size_t>(20 + i * 9)];
    p.dv_dlogr_m3_per_kg *= 1.0 + 0.08 * std::sin(i * 1.3);
    stepwise.points.push_back(p);
  }
  stepwise.modes = {Mode(8.4e-9, 1.1e-9, 0.0)};
  fx.pores.distributions.push_back(stepwise);
  // Surface area from the GAB monolayer: X_m / M_w * N_A * a_m (Emmett & Brunauer 1937 area).
  const double area = 0.00951 / 18.015268e-3 * 6.02214076e23 * 0.106e-18 / 1000.0;
  pores::SurfaceArea sa;
  sa.model_name = "gab";
  sa.branch = ingest::Branch::kAdsorption;
  sa.temperature_K = kT23_K;
  sa.monolayer_kg_per_kg = 0.00951;
  sa.u_monolayer_kg_per_kg = 0.00042;
  sa.molecular_area_m2 = 0.106e-18;
  sa.area_m2_per_g = area;
  sa.u_area_m2_per_g = area * 0.00042 / 0.00951;
  fx.pores.surface_areas.push_back(sa);
  for (double rh : {0.5, 0.8}) {
    pores::ReferenceMoisture rm;
    rm.condition.temperature_K = kT23_K;
    rm.condition.rh_fraction = rh;
    rm.model_name = "gab";
    rm.branch = ingest::Branch::kAdsorption;
    rm.moisture_kg_per_kg = GabMoisture(rh, 0.00951, 13.6, 0.8213);
    rm.u_moisture_kg_per_kg = 0.035 * rm.moisture_kg_per_kg;
    fx.pores.reference_moisture.push_back(rm);
  }
  fx.pores.hygroscopicity.applicable = true;
  fx.pores.hygroscopicity.reason = "from the adsorption GAB fit, 23 °C used for 25 °C";
  fx.pores.hygroscopicity.mass_increase_percent = 100.0 * GabMoisture(0.8, 0.00951, 13.6, 0.8213);
  fx.pores.hygroscopicity.u_mass_increase_percent = 0.12;
  fx.pores.hygroscopicity.class_name = "hygroscopic";
  pores::Hysteresis h;
  h.available = true;
  h.temperature_K = kT23_K;
  for (double rh : {0.329, 0.536, 0.753, 0.845}) {
    pores::HysteresisPoint hp;
    hp.rh_fraction = rh;
    hp.adsorption_kg_per_kg = GabMoisture(rh, 0.00951, 13.6, 0.8213);
    hp.desorption_kg_per_kg = GabMoisture(rh, 0.01179, 15.8, 0.8007);
    hp.difference_kg_per_kg = hp.desorption_kg_per_kg - hp.adsorption_kg_per_kg;
    hp.u_difference_kg_per_kg = 0.0008;
    hp.significant = std::abs(hp.difference_kg_per_kg) > kK * hp.u_difference_kg_per_kg;
    h.points.push_back(hp);
  }
  h.max_difference_kg_per_kg = h.points[2].difference_kg_per_kg;
  h.rh_at_max_fraction = 0.753;
  h.significant_rh_low_fraction = 0.329;
  h.significant_rh_high_fraction = 0.845;
  fx.pores.hysteresis.push_back(h);
  pores::IsostericHeat q;
  q.available = false;
  q.reason = "one test temperature only";
  fx.pores.isosteric_heat.push_back(q);

  // ---- Settings --------------------------------------------------------------------------------
  fx.settings = {{"equilibrium",
                  {{"mass_change_limit_fraction", 0.001},
                   {"min_weighing_interval_s", 86400.0},
                   {"min_weighings", 3}}},
                 {"reduce", {{"coverage_factor", 2.0}, {"include_not_equilibrated", true}}},
                 {"fit", {{"models", {"gab", "bet", "oswin"}}, {"bootstrap_resamples", 1000}}},
                 {"pores", {{"geometry", "open_cylinder"}, {"film", "badmann"}}}};
  return fx;
}

ReportOptions FixtureOptions() {
  ReportOptions options;
  options.font_directory = SORBTRACE_DEFAULT_FONT_DIR;
  options.document_date = "2026-10-15";
  return options;
}

const Template& FullTemplate() {
  static const Template t = LoadTemplate(SORBTRACE_SOURCE_DIR "/templates/full.toml");
  return t;
}

}  // namespace sorbtrace::report::testing
