// Reduce stage: moisture contents with GUM budgets, specimens combined per step.
#include "pipeline/reduce/reduce.h"

#include <fmt/format.h>

#include <algorithm>
#include <boost/math/distributions/chi_squared.hpp>
#include <boost/math/distributions/fisher_f.hpp>
#include <boost/math/distributions/normal.hpp>
#include <cmath>
#include <iterator>
#include <limits>
#include <map>
#include <stdexcept>
#include <tuple>

#include "pipeline/common/student_t.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::reduce {
namespace {

constexpr double kInfinity = std::numeric_limits<double>::infinity();

// Degrees of freedom as stored upstream (0 = infinite) -> as used here.
double Dof(int degrees_of_freedom) {
  return degrees_of_freedom > 0 ? static_cast<double>(degrees_of_freedom) : kInfinity;
}

int BranchOrder(ingest::Branch branch) { return static_cast<int>(branch); }

const equilibrate::DryMass* FindDryMass(const equilibrate::EquilibriumSet& set,
                                        const std::string& specimen_id) {
  for (const auto& dry : set.dry_masses) {
    if (dry.specimen_id == specimen_id) return &dry;
  }
  return nullptr;
}

const ingest::SpecimenSpec* FindSpecimen(const ingest::JobSpec& job, const std::string& id) {
  for (const auto& specimen : job.specimens) {
    if (specimen.id == id) return &specimen;
  }
  return nullptr;
}

double RootSumSquare(const std::vector<BudgetLine>& lines) {
  double sum = 0.0;
  for (const auto& line : lines) sum += line.contribution * line.contribution;
  return std::sqrt(sum);
}

BudgetLine Line(std::string quantity, double u, std::string unit, double sensitivity,
                double degrees_of_freedom = kInfinity) {
  BudgetLine line;
  line.quantity = std::move(quantity);
  line.standard_uncertainty = u;
  line.unit = std::move(unit);
  line.sensitivity = sensitivity;
  line.contribution = std::abs(sensitivity) * u;
  line.degrees_of_freedom = degrees_of_freedom;
  return line;
}

BudgetLine SystematicLine(std::string quantity, double u, std::string unit, double sensitivity) {
  BudgetLine line = Line(std::move(quantity), u, std::move(unit), sensitivity);
  line.systematic = true;
  return line;
}

SpecimenPoint ReducePoint(const equilibrate::EquilibriumPoint& eq, const equilibrate::DryMass& dry,
                          const ingest::JobSpec& job, const ReduceOptions& options) {
  SpecimenPoint point;
  point.dataset_id = eq.dataset_id;
  point.specimen_id = eq.specimen_id;
  point.step_index = eq.step_index;
  point.step_label = eq.step_label;
  point.branch = eq.branch;
  point.cycle = eq.cycle;
  point.temperature_K = eq.temperature_K;
  point.rh_fraction = eq.rh_fraction;
  point.rh_source = eq.rh_source;
  point.mass_g = eq.mass_g;
  point.dry_mass_g = dry.mass_g;
  point.time_to_equilibrium_s = eq.time_to_equilibrium_s;
  point.equilibrated = eq.equilibrated && dry.equilibrated;
  point.extrapolated = eq.extrapolated;
  point.flags = eq.flags;
  point.where = eq.where;
  if (!dry.equilibrated) point.flags.emplace_back("dry reference mass not at constant mass");

  const double m = eq.mass_g;
  const double md = dry.mass_g;
  point.moisture_kg_per_kg = (m - md) / md;
  const double u_balance = equilibrate::BalanceStandardUncertainty_g(job);
  const double c_wet = 1.0 / md;
  const double c_dry = -m / (md * md);
  auto& budget = point.moisture_budget;
  // A mass fitted through independent weighings carries the balance scatter in its Type A
  // uncertainty (approach line / dry-mass method): not counted twice (JCGM 100:2008, 4.3.10).
  // A log step's mass carries the balance part its readings do not show (u_mass_balance_g,
  // equilibrate.h), not one reading's u_bal on top of the Type A of its fit or window mean.
  const double u_balance_wet = eq.u_mass_balance_g.value_or(u_balance);
  const double u_balance_dry = dry.u_mass_balance_g.value_or(u_balance);
  if (!eq.mass_includes_weighing_scatter && u_balance_wet > 0.0) {
    budget.push_back(Line("balance (wet mass)", u_balance_wet, "g", c_wet));
  }
  if (!dry.includes_weighing_scatter && u_balance_dry > 0.0) {
    budget.push_back(Line("balance (dry mass)", u_balance_dry, "g", c_dry));
  }
  if (dry.u_mass_g > 0.0) {
    budget.push_back(
        Line("dry-mass method", dry.u_mass_g, "g", c_dry, Dof(dry.degrees_of_freedom)));
  }
  if (eq.u_mass_drift_g > 0.0) {
    budget.push_back(SystematicLine("residual drift", eq.u_mass_drift_g, "g", c_wet));
  }
  if (eq.u_mass_approach_g > 0.0) {
    budget.push_back(Line("approach to equilibrium (correction)", eq.u_mass_approach_g, "g", c_wet,
                          Dof(eq.approach_degrees_of_freedom)));
  }
  if (eq.u_mass_approach_model_g > 0.0) {
    budget.push_back(SystematicLine("approach to equilibrium (kinetic model)",
                                    eq.u_mass_approach_model_g, "g", c_wet));
  }
  if (eq.extrapolated) {
    budget.push_back(Line("extrapolation", eq.u_mass_extrapolation_g, "g", c_wet,
                          Dof(eq.extrapolation_degrees_of_freedom)));
    if (eq.u_mass_extrapolation_model_g > 0.0) {
      budget.push_back(SystematicLine("extrapolation (kinetic model)",
                                      eq.u_mass_extrapolation_model_g, "g", c_wet));
    }
  }
  point.u_moisture_kg_per_kg = RootSumSquare(budget);
  double systematic2 = 0.0;
  for (const BudgetLine& line : budget) {
    if (line.systematic) systematic2 += line.contribution * line.contribution;
  }
  point.u_systematic_kg_per_kg = std::sqrt(systematic2);
  point.effective_dof = EffectiveDegreesOfFreedom(budget);
  point.coverage_factor = CoverageFactor(point.effective_dof, options.coverage_factor);
  point.expanded_u_moisture_kg_per_kg = point.coverage_factor * point.u_moisture_kg_per_kg;

  std::string source;
  switch (eq.rh_source_kind) {
    case equilibrate::RhSource::kSaltTable:
      source = "RH (salt table)";
      break;
    case equilibrate::RhSource::kSensor:
      source = "RH (sensor)";
      break;
    case equilibrate::RhSource::kStated:
      source = "RH (stated, sensor uncertainty)";
      break;
    case equilibrate::RhSource::kDry:
      source = "RH (dry reference)";
      break;
  }
  point.rh_budget.push_back(Line(source, eq.u_rh_fraction, "1", 1.0));
  point.rh_budget.push_back(Line("temperature effect on RH", job.temperature_standard_uncertainty_K,
                                 "K", eq.drh_dT_per_K));
  point.u_rh_fraction = RootSumSquare(point.rh_budget);

  if (point.moisture_kg_per_kg < 0.0) {
    const double margin = options.coverage_factor * point.u_moisture_kg_per_kg;
    if (job.negative_moisture_expected) {
      point.flags.emplace_back("negative moisture content (expected for this material)");
    } else if (point.moisture_kg_per_kg < -margin) {
      throw InputError(
          eq.where,
          fmt::format("specimen '{}' step {} ({}): mass {:.6f} g is below the dry mass "
                      "{:.6f} g, moisture content {:.6f} kg/kg (k u = {:.2g})",
                      eq.specimen_id, eq.step_index + 1, eq.step_label, m, md,
                      point.moisture_kg_per_kg, margin),
          "a mass not below the dry mass, or negative_moisture_expected = true in "
          "[measurement]");
    } else {
      point.flags.emplace_back("negative moisture content within its uncertainty");
    }
  }
  if (!point.equilibrated) {
    if (options.include_not_equilibrated) {
      point.flags.emplace_back("included although not equilibrated");
    } else {
      point.excluded = true;
      point.flags.emplace_back("excluded: not equilibrated");
    }
  }
  return point;
}

// Standard uncertainty of the mean of a step's specimens, its budget and its effective degrees
// of freedom (see reduce.h). One specimen: its own budget. Several: the spread of their mean
// (Type A, n - 1 degrees of freedom) stands for every input that acts on each specimen apart
// (it is seen in that spread), and each systematic input (the same on every specimen) enters
// once, as the mean of its contributions over the specimens (full correlation).
struct CombinedUncertainty {
  double u = 0.0;
  double effective_dof = kInfinity;
  std::vector<BudgetLine> budget;
  double u_pooled_scatter = 0.0;  // contribution of the pooled step-to-step line (0: none)
};
// Budget line names of the two-way decomposition (reduce.h).
constexpr const char* kSpecimenLine = "specimen-to-specimen (common to every step, Type A)";
constexpr const char* kIndependentLine =
    "step-to-step scatter of the specimens (Type A, pooled over the steps)";
constexpr const char* kPooledIndependentLine =
    "independent parts of the specimens' budgets, pooled with their step-to-step scatter";

// The name of a data set's independent line (reduce.h: which estimate was adopted).
const char* IndependentLineName(const SpecimenTerm& term) {
  switch (term.independent_estimate) {
    case IndependentEstimate::kObserved:
      return kIndependentLine;
    case IndependentEstimate::kPooled:
      return kPooledIndependentLine;
    case IndependentEstimate::kEvaluated:
      break;
  }
  return "independent parts of the specimens' budgets (spread consistent)";
}

// A specimen point's evaluated independent variance, u_c^2 - u_sys^2 (at least 0).
double IndependentVariance(const SpecimenPoint& p) {
  return std::max(0.0, p.u_moisture_kg_per_kg * p.u_moisture_kg_per_kg -
                           p.u_systematic_kg_per_kg * p.u_systematic_kg_per_kg);
}

// Mean over a step's specimens of their evaluated independent variances.
double MeanIndependentVariance(const std::vector<const SpecimenPoint*>& members) {
  double sum = 0.0;
  for (const SpecimenPoint* p : members) sum += IndependentVariance(*p);
  return sum / static_cast<double>(members.size());
}

CombinedUncertainty CombineSpecimens(const std::vector<const SpecimenPoint*>& members,
                                     double spread_sd, const SpecimenTerm* term, double mean) {
  if (members.size() == 1 && term == nullptr) {
    const SpecimenPoint& only = *members.front();
    return {only.u_moisture_kg_per_kg, only.effective_dof, only.moisture_budget};
  }
  const double n = static_cast<double>(members.size());
  // The spread stands for the independent parts only when it is not smaller than their own
  // evaluated size: two or three specimens that happen to agree must not make the balance,
  // dry-mass and tail-fit uncertainties vanish (JCGM 100:2008, 4.3.2: a Type A estimate from
  // very few observations is itself uncertain; the larger of the two is kept).
  const double mean_independent2 = MeanIndependentVariance(members);
  std::vector<BudgetLine> lines;
  if (term != nullptr) {
    // Two-way decomposition (reduce.h): the specimen line, common to every step, and the
    // step-to-step part pooled over the block, with the specimens' evaluated independent parts
    // as its floor.
    if (term->relative_sd > 0.0) {
      lines.push_back(Line(kSpecimenLine, term->relative_sd, "1", std::abs(mean) / std::sqrt(n),
                           term->degrees_of_freedom));
    }
    lines.push_back(Line(IndependentLineName(*term),
                         std::sqrt(term->adopted_variance_ratio * mean_independent2), "kg/kg",
                         1.0 / std::sqrt(n), term->independent_degrees_of_freedom));
  } else {
    lines.push_back(spread_sd * spread_sd >= mean_independent2
                        ? Line("between-specimen spread (Type A)", spread_sd, "kg/kg",
                               1.0 / std::sqrt(n), n - 1.0)
                        : Line("independent parts of the specimens' budgets (spread smaller)",
                               std::sqrt(mean_independent2), "kg/kg", 1.0 / std::sqrt(n)));
  }
  for (const SpecimenPoint* p : members) {
    for (const BudgetLine& line : p->moisture_budget) {
      if (!line.systematic) continue;
      auto same = std::find_if(lines.begin(), lines.end(), [&](const BudgetLine& l) {
        return l.systematic && l.quantity == line.quantity;
      });
      if (same == lines.end()) {
        BudgetLine mean_line = SystematicLine(line.quantity, 0.0, "kg/kg", 1.0);
        lines.push_back(mean_line);
        same = std::prev(lines.end());
      }
      same->standard_uncertainty += line.contribution / n;  // mean contribution, kg/kg
      same->contribution = same->standard_uncertainty;
    }
  }
  double u_pooled_scatter = 0.0;
  for (const BudgetLine& line : lines) {
    if (line.quantity == kIndependentLine || line.quantity == kPooledIndependentLine) {
      u_pooled_scatter = line.contribution;
    }
  }
  return {RootSumSquare(lines), EffectiveDegreesOfFreedom(lines), lines, u_pooled_scatter};
}

// Relative standard uncertainty of a step's evaluated independent variance (the mean over its
// specimens of u_c^2 - u_sys^2; see reduce.h): each specimen's from the Welch-Satterthwaite
// degrees of freedom nu of its lines that are not systematic, sqrt(2 / nu) (JCGM 100:2008, E.4.3
// and G.4.2: u(u)/u = 1 / sqrt(2 nu)), added linearly over the specimens (their Type A parts rest
// on one pooled weighing scatter: fully correlated). 0 when every such line is Type B.
double RelativeUncertaintyOfEvaluatedVariance(const std::vector<const SpecimenPoint*>& members) {
  double sum_variance = 0.0, sum_spread = 0.0;
  for (const SpecimenPoint* p : members) {
    std::vector<BudgetLine> independent;
    for (const BudgetLine& line : p->moisture_budget) {
      if (!line.systematic) independent.push_back(line);
    }
    const double variance = IndependentVariance(*p);
    const double nu = EffectiveDegreesOfFreedom(independent);
    sum_variance += variance;
    if (std::isfinite(nu)) sum_spread += variance * std::sqrt(2.0 / nu);
  }
  return sum_variance > 0.0 ? sum_spread / sum_variance : 0.0;
}

// The estimate of the independent parts a data set adopts from phi (nu_e degrees of freedom)
// and its evaluated parts (nu_ev; see reduce.h: the Birge test, then pooling).
void AdoptIndependentEstimate(double phi, double nu_e, double nu_ev, SpecimenTerm* term) {
  // Upper 1 % of phi when the evaluated parts are right (common practice, as the lack-of-fit
  // test of the equilibrate stage's kinetic fits).
  constexpr double kBirgeTestProbability = 0.01;
  const double critical =
      std::isfinite(nu_ev)
          ? boost::math::quantile(boost::math::complement(
                boost::math::fisher_f_distribution<double>(nu_e, nu_ev), kBirgeTestProbability))
          : boost::math::quantile(boost::math::complement(
                boost::math::chi_squared_distribution<double>(nu_e), kBirgeTestProbability)) /
                nu_e;
  term->evaluated_degrees_of_freedom = nu_ev;
  if (phi > critical) {
    term->independent_estimate = IndependentEstimate::kObserved;
    term->adopted_variance_ratio = phi;
    term->independent_degrees_of_freedom = nu_e;
  } else if (std::isfinite(nu_ev)) {
    term->independent_estimate = IndependentEstimate::kPooled;
    term->adopted_variance_ratio = (nu_ev + nu_e * phi) / (nu_ev + nu_e);
    term->independent_degrees_of_freedom = nu_ev + nu_e;
  } else {
    term->independent_estimate = IndependentEstimate::kEvaluated;
    term->adopted_variance_ratio = 1.0;
    term->independent_degrees_of_freedom = kInfinity;
  }
}

// The specimen term of one data set from its steps (each the included specimen points of one
// step), by the weighted two-way decomposition of reduce.h. Returns false where it does not
// apply.
bool EstimateSpecimenTerm(const std::vector<const std::vector<const SpecimenPoint*>*>& steps,
                          SpecimenTerm* term) {
  std::vector<std::string> ids;
  for (const auto* members : steps) {
    for (const SpecimenPoint* p : *members) {
      if (std::find(ids.begin(), ids.end(), p->specimen_id) == ids.end()) {
        ids.push_back(p->specimen_id);
      }
    }
  }
  std::sort(ids.begin(), ids.end());
  const std::size_t num_specimens = ids.size();
  if (num_specimens < 2) return false;
  // Complete block: y[i][s] = ln u_si over the steps holding every specimen, all u > 0, with
  // the step's relative evaluated independent variance v_i > 0 (weight w_i = 1 / v_i).
  std::vector<std::vector<double>> y;
  std::vector<double> w;
  double sum_relative_u = 0.0;  // of the steps' evaluated variances
  for (const auto* members : steps) {
    if (members->size() != num_specimens) continue;
    std::vector<double> row(num_specimens, 0.0);
    bool usable = true;
    double mean = 0.0;
    for (const SpecimenPoint* p : *members) {
      const auto at = std::find(ids.begin(), ids.end(), p->specimen_id);
      if (!(p->moisture_kg_per_kg > 0.0)) usable = false;
      if (usable) row[static_cast<std::size_t>(at - ids.begin())] = std::log(p->moisture_kg_per_kg);
      mean += p->moisture_kg_per_kg / static_cast<double>(num_specimens);
    }
    const double v = MeanIndependentVariance(*members) / (mean * mean);
    if (!usable || !(v > 0.0) || !std::isfinite(v)) continue;
    y.push_back(std::move(row));
    w.push_back(1.0 / v);
    sum_relative_u += RelativeUncertaintyOfEvaluatedVariance(*members);
  }
  const std::size_t num_steps = y.size();
  if (num_steps < 2) return false;
  const double S = static_cast<double>(num_specimens);
  const double I = static_cast<double>(num_steps);
  // Step means, then each specimen's weighted mean deviation d_s = sum_i w_i (y_si - ybar_.i) / W.
  std::vector<double> step_mean(num_steps, 0.0), d(num_specimens, 0.0);
  double W = 0.0;
  for (std::size_t i = 0; i < num_steps; ++i) {
    for (std::size_t s = 0; s < num_specimens; ++s) step_mean[i] += y[i][s] / S;
    W += w[i];
  }
  for (std::size_t s = 0; s < num_specimens; ++s) {
    for (std::size_t i = 0; i < num_steps; ++i) d[s] += w[i] * (y[i][s] - step_mean[i]) / W;
  }
  double ss_specimens = 0.0, q_residual = 0.0;
  for (std::size_t s = 0; s < num_specimens; ++s) ss_specimens += d[s] * d[s];
  for (std::size_t i = 0; i < num_steps; ++i) {
    for (std::size_t s = 0; s < num_specimens; ++s) {
      const double e = y[i][s] - step_mean[i] - d[s];
      q_residual += w[i] * e * e;
    }
  }
  const double df_specimens = S - 1.0;
  const double df_residual = (S - 1.0) * (I - 1.0);
  const double phi = q_residual / df_residual;
  const double ms_specimens = ss_specimens / df_specimens;  // E = sigma_d^2 + phi / W
  const double ms_residual = phi / W;
  term->specimen_ids = ids;
  term->num_steps = static_cast<int>(num_steps);
  term->independent_variance_ratio = phi;
  term->residual_degrees_of_freedom = df_residual;
  // phi weighs every step alike (w_i = 1 / v_i), so the relative uncertainty of the evaluated
  // parts it is compared with is the steps' mean (fully correlated), nu_ev = 2 / rel^2.
  const double relative_u = sum_relative_u / I;
  AdoptIndependentEstimate(phi, df_residual,
                           relative_u > 0.0 ? 2.0 / (relative_u * relative_u) : kInfinity, term);
  const double difference = ms_specimens - ms_residual;
  if (difference > 0.0) {
    term->relative_sd = std::sqrt(difference);
    // Satterthwaite (1946) for a difference of mean squares.
    term->degrees_of_freedom =
        difference * difference /
        (ms_specimens * ms_specimens / df_specimens + ms_residual * ms_residual / df_residual);
  } else {
    term->relative_sd = 0.0;
    term->degrees_of_freedom = df_specimens;
  }
  return true;
}

}  // namespace

double EffectiveDegreesOfFreedom(const std::vector<BudgetLine>& lines) {
  double sum_u2 = 0.0;
  double denominator = 0.0;
  for (const BudgetLine& line : lines) {
    const double c2 = line.contribution * line.contribution;
    sum_u2 += c2;
    if (std::isfinite(line.degrees_of_freedom) && line.degrees_of_freedom > 0.0 && c2 > 0.0) {
      denominator += c2 * c2 / line.degrees_of_freedom;
    }
  }
  if (!(denominator > 0.0) || !(sum_u2 > 0.0)) return kInfinity;
  return sum_u2 * sum_u2 / denominator;
}

double StudentTCoverageFactor(double degrees_of_freedom, double coverage_probability) {
  return sorbtrace::StudentTCoverageFactor(degrees_of_freedom, coverage_probability);
}

double CoverageFactor(double degrees_of_freedom, double nominal_k) {
  if (!std::isfinite(degrees_of_freedom)) return nominal_k;
  const double p =
      2.0 * boost::math::cdf(boost::math::normal_distribution<double>(0.0, 1.0), nominal_k) - 1.0;
  // JCGM 100:2008, G.4.1: truncate nu_eff to the next lower integer (at least 1).
  const double nu = std::max(1.0, std::floor(degrees_of_freedom));
  return StudentTCoverageFactor(nu, p);
}

bool ReduceOptions::IsValid(std::string* error) const {
  // k below 1 would make U smaller than u; above 5 is certainly a mistake (k = 3 already gives
  // about 99 %). The same range as the job-file key [report] coverage_factor.
  constexpr double kSmallestCoverageFactor = 1.0;
  constexpr double kLargestCoverageFactor = 5.0;
  if (!(coverage_factor >= kSmallestCoverageFactor && coverage_factor <= kLargestCoverageFactor)) {
    if (error != nullptr) {
      *error = fmt::format("coverage_factor {} must lie in [{}, {}]", coverage_factor,
                           kSmallestCoverageFactor, kLargestCoverageFactor);
    }
    return false;
  }
  return true;
}

ReducedIsotherms Reduce(const ingest::IngestResult& ingested,
                        const equilibrate::EquilibriumSet& equilibria,
                        const ReduceOptions& options) {
  const ingest::JobSpec& job = ingested.job;
  std::string error;
  if (!options.IsValid(&error)) {
    throw InputError(SourceLocation{job.job_file.string(), 0, 0}, "[equilibrium]: " + error,
                     "a coverage factor such as 2");
  }
  ReducedIsotherms reduced;
  reduced.coverage_factor = options.coverage_factor;

  std::map<std::string, int> dataset_order;
  for (const auto& dataset : job.datasets) {
    dataset_order.emplace(dataset.id, static_cast<int>(dataset_order.size()));
  }
  auto order_of = [&](const std::string& id) {
    auto it = dataset_order.find(id);
    return it == dataset_order.end() ? static_cast<int>(dataset_order.size()) : it->second;
  };

  for (const auto& eq : equilibria.points) {
    // Drying steps give the dry reference (or check it); they are not isotherm points.
    if (eq.branch == ingest::Branch::kDrying) continue;
    const equilibrate::DryMass* dry = FindDryMass(equilibria, eq.specimen_id);
    if (dry == nullptr || !(dry->mass_g > 0.0)) {  // ingest::FindDryMassSources refuses this
      throw std::logic_error("reduce: no dry mass for specimen '" + eq.specimen_id + "'");
    }
    SpecimenPoint point = ReducePoint(eq, *dry, job, options);
    if (point.excluded) {
      ++reduced.summary.num_excluded;
    }
    // A step that is not equilibrated was already reported by the equilibrate stage; an
    // equilibrated step excluded because of its dry mass was not.
    if (point.excluded && eq.equilibrated) {
      reduced.summary.warnings.push_back(Diagnostic{
          Severity::kWarning, point.where,
          fmt::format("{} / {} / step {} ({}) excluded: dry reference mass not at constant mass",
                      point.dataset_id, point.specimen_id, point.step_index + 1, point.step_label),
          "include_not_equilibrated = true in [equilibrium] to keep it (flagged)"});
    }
    reduced.specimen_points.push_back(std::move(point));
  }

  // Group the included specimen points per step: one condition of a data set (cycle, branch,
  // atmosphere, and how often the specimen met that atmosphere in that branch and cycle
  // before), whatever number the step has in each specimen's own sequence (a specimen with
  // an oven step first numbers its humidity steps one higher than one with a stated dry mass).
  using Key = std::tuple<int, int, int, std::string, int>;
  std::map<Key, std::vector<const SpecimenPoint*>> members_of;
  std::map<std::tuple<std::string, std::string, int, int, std::string>, int> seen;
  for (const auto& point : reduced.specimen_points) {
    const int occurrence = seen[{point.dataset_id, point.specimen_id, point.cycle,
                                 BranchOrder(point.branch), point.step_label}]++;
    if (point.excluded) continue;
    members_of[Key{order_of(point.dataset_id), point.cycle, BranchOrder(point.branch),
                   point.step_label, occurrence}]
        .push_back(&point);
  }
  // In measurement order: data set, cycle, branch, then the earliest step number of the group.
  using Order = std::tuple<int, int, int, int, std::string, int>;
  std::map<Order, std::vector<const SpecimenPoint*>> groups;
  for (auto& [key, members] : members_of) {
    int first_step = members.front()->step_index;
    for (const SpecimenPoint* p : members) first_step = std::min(first_step, p->step_index);
    groups[Order{std::get<0>(key), std::get<1>(key), std::get<2>(key), first_step, std::get<3>(key),
                 std::get<4>(key)}] = std::move(members);
  }
  // The specimen term of each data set (reduce.h), over its non-drying steps.
  std::map<std::string, std::vector<const std::vector<const SpecimenPoint*>*>> steps_of_dataset;
  for (const auto& [key, members] : groups) {
    if (members.front()->branch == ingest::Branch::kDrying) continue;
    steps_of_dataset[members.front()->dataset_id].push_back(&members);
  }
  std::map<std::string, int> term_of_dataset;
  for (const auto& [dataset_id, steps] : steps_of_dataset) {
    SpecimenTerm term;
    term.dataset_id = dataset_id;
    if (!EstimateSpecimenTerm(steps, &term)) continue;
    term_of_dataset[dataset_id] = static_cast<int>(reduced.specimen_terms.size());
    reduced.specimen_terms.push_back(std::move(term));
  }

  for (const auto& [key, members] : groups) {
    IsothermPoint iso;
    const SpecimenPoint& first = *members.front();
    iso.dataset_id = first.dataset_id;
    iso.step_index = first.step_index;
    iso.step_label = first.step_label;
    iso.branch = first.branch;
    iso.cycle = first.cycle;
    const double n = static_cast<double>(members.size());
    iso.num_specimens = static_cast<int>(members.size());
    double sum_u = 0.0, sum_rh = 0.0, sum_urh2 = 0.0, sum_t = 0.0;
    double sum_density = 0.0;
    bool all_density = true;
    iso.equilibrated = true;
    for (const SpecimenPoint* p : members) {
      iso.specimen_ids.push_back(p->specimen_id);
      iso.specimen_point_indices.push_back(static_cast<int>(p - reduced.specimen_points.data()));
      sum_u += p->moisture_kg_per_kg;
      sum_rh += p->rh_fraction;
      sum_urh2 += p->u_rh_fraction * p->u_rh_fraction;
      sum_t += p->temperature_K;
      iso.time_to_equilibrium_s = std::max(iso.time_to_equilibrium_s, p->time_to_equilibrium_s);
      iso.equilibrated = iso.equilibrated && p->equilibrated;
      iso.extrapolated = iso.extrapolated || p->extrapolated;
      for (const auto& flag : p->flags) iso.flags.push_back(p->specimen_id + ": " + flag);
      const ingest::SpecimenSpec* spec = FindSpecimen(job, p->specimen_id);
      if (spec != nullptr && spec->bulk_density_kg_per_m3) {
        sum_density += *spec->bulk_density_kg_per_m3;
      } else {
        all_density = false;
      }
    }
    const double mean = sum_u / n;
    double ss = 0.0;
    for (const SpecimenPoint* p : members) ss += std::pow(p->moisture_kg_per_kg - mean, 2);
    const double s = members.size() > 1 ? std::sqrt(ss / (n - 1.0)) : 0.0;
    iso.moisture_kg_per_kg = mean;
    iso.between_specimen_sd_kg_per_kg = s;
    const auto term_it = term_of_dataset.find(first.dataset_id);
    const SpecimenTerm* term = nullptr;
    if (term_it != term_of_dataset.end() && first.branch != ingest::Branch::kDrying) {
      iso.specimen_term = term_it->second;
      term = &reduced.specimen_terms[static_cast<std::size_t>(term_it->second)];
    }
    const CombinedUncertainty combined = CombineSpecimens(members, s, term, mean);
    iso.u_moisture_kg_per_kg = combined.u;
    if (term != nullptr && term->relative_sd > 0.0) {
      iso.u_specimen_common_kg_per_kg = std::abs(mean) * term->relative_sd / std::sqrt(n);
    }
    iso.u_independent_kg_per_kg =
        std::sqrt(std::max(0.0, combined.u * combined.u - iso.u_specimen_common_kg_per_kg *
                                                              iso.u_specimen_common_kg_per_kg));
    iso.u_pooled_scatter_kg_per_kg = combined.u_pooled_scatter;
    iso.moisture_budget = combined.budget;
    iso.effective_dof = combined.effective_dof;
    iso.coverage_factor = CoverageFactor(iso.effective_dof, options.coverage_factor);
    iso.expanded_u_moisture_kg_per_kg = iso.coverage_factor * iso.u_moisture_kg_per_kg;
    iso.rh_fraction = sum_rh / n;
    iso.u_rh_fraction = std::sqrt(sum_urh2 / n);
    iso.expanded_u_rh_fraction = options.coverage_factor * iso.u_rh_fraction;
    iso.temperature_K = sum_t / n;
    if (all_density) {
      double rho_w = 0.0;
      try {
        rho_w = physics::LiquidWaterDensity_kg_per_m3(iso.temperature_K);
      } catch (const physics::RangeError& range) {
        throw InputError(first.where, range.what(), "a test temperature within 0..150 degC");
      }
      const double rho_dry = sum_density / n;
      iso.has_volumetric = true;
      iso.volumetric_m3_per_m3 = mean * rho_dry / rho_w;
      iso.u_volumetric_m3_per_m3 = iso.u_moisture_kg_per_kg * rho_dry / rho_w;
    }
    reduced.points.push_back(std::move(iso));
  }
  reduced.summary.num_points = static_cast<int>(reduced.points.size());

  // Retention points: equivalent RH by the Kelvin relation at the retention temperature.
  const double retention_T =
      job.retention ? job.retention->temperature_K : physics::CelsiusToKelvin(23.0);
  for (const auto& rp : ingested.retention_points) {
    RetentionIsothermPoint out;
    out.specimen_id = rp.specimen_id;
    out.capillary_pressure_Pa = rp.capillary_pressure_Pa;
    out.temperature_K = retention_T;
    out.moisture_kg_per_kg = rp.moisture_kg_per_kg;
    out.u_moisture_kg_per_kg = rp.u_moisture_kg_per_kg;
    out.branch = rp.branch;
    try {
      out.equivalent_rh_fraction =
          physics::RhFromCapillaryPressure(rp.capillary_pressure_Pa, retention_T);
    } catch (const physics::RangeError& range) {
      throw InputError(
          SourceLocation{job.retention ? job.retention->file_as_written : std::string(), rp.line,
                         0},
          range.what(), "a capillary pressure >= 0 at 0..100 degC");
    }
    reduced.retention.push_back(out);
  }
  return reduced;
}

}  // namespace sorbtrace::reduce
