// Held-out coverage of the datasheet's uncertainty statements (issue 13): jobs with a known truth
// from an independent generator (job_generator.h), each run through the real binary with default
// settings (`sorbtrace make JOB --out DIR -q`), read back from results.json as a reader would.
//
// For every replicate: each reported adsorption equilibrium point's moisture content inside its
// value +- its own expanded U; each GAB parameter (adsorption) inside its stated interval; each
// moisture content at a reference condition (headline) inside value +- U. Tallied per quantity:
// coverage (95 % statements; required 90-98 %) and the size of u against the errors (required
// 0.7-1.5). The errors are taken about the truth (RMS, so a bias the uncertainty does not
// describe counts). The check is on mean(u) / RMS(error), as issue 13 states it; beside it the
// table prints RMS(u) / RMS(error) and 1 / RMS(error / u), to read where u differs strongly from
// one replicate to the next (a desiccator step ended at its first three weighings carries a
// correction u several times that of a step that ran longer): then mean(u) / RMS(error) falls
// below 1 and RMS(u) / RMS(error) rises above it for the same calibrated u (Jensen's inequality),
// while 1 / RMS(error / u) stays near 1.
//
// How the bounds are applied with 50 replicates (binomial sampling, common practice): the pooled
// tallies (all points of a class, the three GAB parameters, the reference conditions) must lie in
// 90-98 %; a single quantity with n trials fails when its count is inconsistent with every
// coverage in 90-98 % at a one-sided 0.5 % binomial tail (a calibrated 95 % statement covers
// 50 of 50 in 7.7 % of runs, 44 or fewer in 3.8 %, so 90-98 % cannot be asked of one quantity
// with 50 trials without failing a correct program). The size ratio is asked of every quantity
// with at least 20 trials.
#include <gtest/gtest.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <iostream>
#include <map>
#include <nlohmann/json.hpp>
#include <regex>
#include <sstream>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"
#include "tests/heldout_coverage/job_generator.h"

namespace sorbtrace::heldout_coverage {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

constexpr int kReplicates = 50;  // issue 13: at least 50 replicates per class
// Specimens that differ: every point of a job shares the error of its specimens' mean factor (sd
// 3 % / sqrt(3)), so the ~350 points of 50 jobs are about 50 independent trials, and a calibrated
// 95 % statement covers 49 or 50 of 50 jobs in 28 % of runs (binomial): the pooled 90-98 % band
// cannot be asked of 50 jobs. 200 jobs (pooled 98 % exceeded in about 1.5 % of runs).
constexpr int kReplicatesSharedError = 200;

struct Tally {
  int trials = 0;
  int covered = 0;
  std::vector<double> errors;
  std::vector<double> uncertainties;
  double worst_z = 0;  // the largest |error| / u, and where
  int worst_replicate = -1;
  void Add(double error, double standard_uncertainty, bool inside, int replicate) {
    ++trials;
    covered += inside ? 1 : 0;
    errors.push_back(error);
    uncertainties.push_back(standard_uncertainty);
    const double z = standard_uncertainty > 0 ? std::fabs(error) / standard_uncertainty : 1e300;
    if (z > worst_z) {
      worst_z = z;
      worst_replicate = replicate;
    }
  }
  // 1 / RMS(error / u): the u / RMS(error) of a pool of quantities in different units.
  double PooledRatio() const {
    double sum = 0;
    for (std::size_t i = 0; i < errors.size(); ++i) {
      const double z = errors[i] / uncertainties[i];
      sum += z * z;
    }
    return sum > 0 ? std::sqrt(static_cast<double>(errors.size()) / sum) : 0.0;
  }
  double Coverage() const { return trials > 0 ? static_cast<double>(covered) / trials : 0.0; }
  double MeanU() const {
    return Mean(uncertainties, [](double u) { return u; });
  }
  // sqrt(mean(u^2)): for a calibrated u, E[error^2] = E[u^2] also when u differs from one
  // replicate to the next, while mean(u) <= sqrt(mean(u^2)) (Jensen's inequality).
  double RmsU() const {
    return std::sqrt(Mean(uncertainties, [](double u) { return u * u; }));
  }
  double Bias() const {
    return Mean(errors, [](double e) { return e; });
  }
  double Rms() const {
    return std::sqrt(Mean(errors, [](double e) { return e * e; }));
  }

 private:
  template <typename Transform>
  static double Mean(const std::vector<double>& values, Transform transform) {
    double sum = 0;
    for (double v : values) sum += transform(v);
    return sum / static_cast<double>(values.size());
  }
};

// Binomial probability P(X <= x) for n trials of probability p.
double BinomialCdf(int x, int n, double p) {
  double total = 0;
  for (int i = 0; i <= x; ++i) {
    total += std::exp(std::lgamma(n + 1.0) - std::lgamma(i + 1.0) - std::lgamma(n - i + 1.0) +
                      i * std::log(p) + (n - i) * std::log1p(-p));
  }
  return total;
}

// A count is consistent with a coverage in [0.90, 0.98] unless it is below the 0.5 % tail of
// 90 % or above the 0.5 % tail of 98 %.
bool ConsistentWithCalibrated(const Tally& t) {
  const bool too_low = BinomialCdf(t.covered, t.trials, 0.90) < 0.005;
  const bool too_high = t.covered > 0 && 1.0 - BinomialCdf(t.covered - 1, t.trials, 0.98) < 0.005;
  return !too_low && !too_high;
}

struct Tallies {
  std::map<std::string, Tally> by_quantity;  // "point ...", "GAB ...", "headline ..."
  Tally all_points, all_gab, all_headlines;
  int expected_points = 0;
  int missing_points = 0;
  int missing_gab = 0;
  int missing_headlines = 0;
  std::map<std::string, int> reference_models;  // the model behind the reference conditions
  // Not checked, printed to locate a cause: the reference conditions split by the model behind
  // them (GAB, the truth's form, or another one ranked first); the GAB parameters' bootstrap
  // and Monte Carlo intervals of results.json (u: the draws' parameter_u).
  std::map<std::string, Tally> diagnostic;
  std::vector<double> seconds;
  std::vector<std::string> misses;  // what missed, for the failure message
};

// Equilibrium points (adsorption), matched to a step by the nearest true humidity.
void CheckPoints(const GeneratedJob& job, const json& results, int replicate, Tallies& tallies) {
  std::vector<bool> seen(job.points.size(), false);
  for (const auto& point : results.at("isotherm").at("points")) {
    if (point.at("branch") != "adsorption") continue;
    const double rh = point.at("rh").at("value").get<double>();
    std::size_t best = 0;
    for (std::size_t i = 1; i < job.points.size(); ++i) {
      if (std::fabs(job.points[i].rh_fraction - rh) < std::fabs(job.points[best].rh_fraction - rh))
        best = i;
    }
    const TruePoint& truth = job.points[best];
    if (std::fabs(truth.rh_fraction - rh) > 0.045) continue;  // not one of our steps
    seen[best] = true;
    const json& m = point.at("moisture");
    const double error = m.at("value").get<double>() - truth.moisture_kg_per_kg;
    const double expanded = m.at("expanded_uncertainty").get<double>();
    const double u = m.at("standard_uncertainty").get<double>();
    const bool inside = std::fabs(error) <= expanded;
    tallies.by_quantity["point " + truth.label].Add(error, u, inside, replicate);
    tallies.all_points.Add(error, u, inside, replicate);
    if (truth.cut_early) {
      tallies.by_quantity["point cut early (any step)"].Add(error, u, inside, replicate);
    }
    if (!inside) {
      tallies.misses.push_back("replicate " + std::to_string(replicate) + " point " + truth.label +
                               ": error " + std::to_string(error) + ", U " +
                               std::to_string(expanded));
    }
  }
  tallies.expected_points += static_cast<int>(job.points.size());
  for (bool s : seen) tallies.missing_points += s ? 0 : 1;
}

// GAB parameters of the adsorption group.
void CheckGab(const GeneratedJob& job, const json& results, int replicate, Tallies& tallies) {
  const json& fits = results.at("fits");
  bool gab_found = false;
  for (const auto& model : fits.at("models")) {
    if (model.at("model") != "gab") continue;
    const int group = model.at("group_index").get<int>();
    if (fits.at("groups").at(group).at("branch") != "adsorption") continue;
    gab_found = true;
    const std::map<std::string, double> truth{
        {"X_m", job.truth.x_m_kg_per_kg}, {"C", job.truth.c}, {"K", job.truth.k}};
    for (const auto& parameter : model.at("parameters")) {
      const std::string label = parameter.at("label").get<std::string>();
      if (!truth.count(label)) continue;
      const double value = parameter.at("value").get<double>();
      const bool has_interval =
          parameter.at("interval_low").is_number() && parameter.at("interval_high").is_number();
      const bool inside = has_interval &&
                          parameter.at("interval_low").get<double>() <= truth.at(label) &&
                          truth.at(label) <= parameter.at("interval_high").get<double>();
      const double u = parameter.at("standard_uncertainty").is_number()
                           ? parameter.at("standard_uncertainty").get<double>()
                           : 0.0;
      tallies.by_quantity["GAB " + label].Add(value - truth.at(label), u, inside, replicate);
      // Printed, not checked: the resampled intervals results.json gives beside the stated one.
      for (const char* method : {"bootstrap", "monte_carlo"}) {
        if (!model.contains(method)) continue;
        const json& draws = model.at(method);
        const std::size_t i = static_cast<std::size_t>(&parameter - &model.at("parameters")[0]);
        if (!draws.contains("parameter_low") || i >= draws.at("parameter_low").size()) continue;
        const json& low = draws.at("parameter_low").at(i);
        const json& high = draws.at("parameter_high").at(i);
        const double draw_u =
            draws.contains("parameter_u") && draws.at("parameter_u").at(i).is_number()
                ? draws.at("parameter_u").at(i).get<double>()
                : 0.0;
        const bool covered = low.is_number() && high.is_number() &&
                             low.get<double>() <= truth.at(label) &&
                             truth.at(label) <= high.get<double>();
        tallies.diagnostic["GAB " + label + " (" + method + " interval)"].Add(
            value - truth.at(label), draw_u, covered, replicate);
      }
      tallies.all_gab.Add(value - truth.at(label), u, inside, replicate);
      if (!inside) {
        tallies.misses.push_back("replicate " + std::to_string(replicate) + " GAB " + label + " " +
                                 std::to_string(value) + " interval [" +
                                 parameter.at("interval_low").dump() + ", " +
                                 parameter.at("interval_high").dump() + "]");
      }
    }
  }
  tallies.missing_gab += gab_found ? 0 : 1;
}

// Moisture contents at the reference conditions: the headline values where the sheet's
// summary lists them (the template's [[reference]] conditions, 23 degC), else the values
// results.json gives for the job's own [pores] reference_conditions (pores.reference_moisture;
// the desiccator jobs at 25 degC name 25 degC / 50 and 80 % there).
void CheckReferences(const GeneratedJob& job, const json& results, int replicate,
                     Tallies& tallies) {
  static const std::regex kKey(R"(moisture_(\d+)C_(\d+)RH_adsorption)");
  struct Reference {
    std::string name;
    double rh_fraction;
    const json* value;
  };
  std::vector<Reference> references;
  for (const auto& headline : results.at("headline")) {
    std::smatch match;
    const std::string key = headline.at("key").get<std::string>();
    if (!std::regex_match(key, match, kKey)) continue;
    references.push_back({"headline " + match[1].str() + " C / " + match[2].str() + " %",
                          std::stod(match[2]) / 100.0, &headline});
  }
  if (references.empty() && results.at("pores").contains("reference_moisture")) {
    for (const auto& reference : results.at("pores").at("reference_moisture")) {
      if (reference.at("branch") != "adsorption") continue;
      const double rh = reference.at("rh_fraction").get<double>();
      const double celsius = reference.at("temperature_K").get<double>() - 273.15;
      references.push_back({"reference " + std::to_string(std::lround(celsius)) + " C / " +
                                std::to_string(std::lround(100.0 * rh)) + " %",
                            rh, &reference});
    }
  }
  const int headlines = static_cast<int>(references.size());
  std::string model = results.at("best_model").is_string()
                          ? results.at("best_model").get<std::string>()
                          : std::string("?");
  if (!references.empty() && references.front().value->contains("model")) {
    model = references.front().value->at("model").get<std::string>();
  }
  if (headlines > 0) ++tallies.reference_models[model];
  for (const Reference& reference : references) {
    const json& r = *reference.value;
    const double error = r.at("value").get<double>() - job.truth(reference.rh_fraction);
    const double expanded = r.at("expanded_uncertainty").get<double>();
    const double u = r.at("standard_uncertainty").get<double>();
    const bool inside = std::fabs(error) <= expanded;
    tallies.by_quantity[reference.name].Add(error, u, inside, replicate);
    tallies.all_headlines.Add(error, u, inside, replicate);
    const bool gab =
        model.find("gab") != std::string::npos || model.find("GAB") != std::string::npos;
    tallies.diagnostic[reference.name + (gab ? " (GAB)" : " (other model)")].Add(error, u, inside,
                                                                                 replicate);
    if (!inside) {
      tallies.misses.push_back("replicate " + std::to_string(replicate) + " " + reference.name +
                               ": error " + std::to_string(error) + ", U " +
                               std::to_string(expanded) + " (model " + model + ")");
    }
  }
  tallies.missing_headlines += headlines == 2 ? 0 : 1;
}

void CheckJob(const GeneratedJob& job, const json& results, int replicate, Tallies& tallies) {
  CheckPoints(job, results, replicate, tallies);
  CheckGab(job, results, replicate, tallies);
  CheckReferences(job, results, replicate, tallies);
}

// One row: n, coverage, mean u, RMS(error), bias, mean(u) / RMS(error) (a pooled row, of
// quantities in different units, gives none of these three), 1 / RMS(error / u) (the same
// calibration read per replicate: it is not dominated by the replicates with the largest u),
// and the largest |error| / u with its replicate.
std::string Row(const std::string& name, const Tally& t, bool pooled = false) {
  char buffer[256];
  if (pooled) {
    std::snprintf(buffer, sizeof buffer,
                  "  %-28s %4d %6.1f %%  %10s %10s %10s %6s %6.2f %7.1f (%d)\n", name.c_str(),
                  t.trials, 100.0 * t.Coverage(), "-", "-", "-", "-", t.PooledRatio(), t.worst_z,
                  t.worst_replicate);
  } else {
    std::snprintf(buffer, sizeof buffer,
                  "  %-28s %4d %6.1f %%  %10.3g %10.3g %10.3g %6.2f %6.2f %6.2f %7.1f (%d)\n",
                  name.c_str(), t.trials, 100.0 * t.Coverage(), t.MeanU(), t.Rms(), t.Bias(),
                  t.Rms() > 0 ? t.MeanU() / t.Rms() : 0.0, t.Rms() > 0 ? t.RmsU() / t.Rms() : 0.0,
                  t.PooledRatio(), t.worst_z, t.worst_replicate);
  }
  return buffer;
}

std::string Table(const std::string& title, const Tallies& tallies) {
  std::string out = title + "\n  " +
                    "quantity                        n  coverage     mean u   RMS(err)       bias "
                    "u/RMS RMSu/RMS 1/RMS(z) max|z| (replicate)\n";
  for (const auto& [name, tally] : tallies.by_quantity) out += Row(name, tally);
  out += Row("ALL points", tallies.all_points, true);
  out += Row("ALL GAB parameters", tallies.all_gab, true);
  out += Row("ALL reference conditions", tallies.all_headlines, true);
  double total = 0, slowest = 0;
  for (double s : tallies.seconds) {
    total += s;
    slowest = std::max(slowest, s);
  }
  char buffer[256];
  std::snprintf(buffer, sizeof buffer,
                "  points reported %d of %d; jobs without a GAB fit %d, without both headlines "
                "%d; make: %.1f s total, %.2f s mean, %.2f s slowest\n",
                tallies.expected_points - tallies.missing_points, tallies.expected_points,
                tallies.missing_gab, tallies.missing_headlines, total,
                total / static_cast<double>(tallies.seconds.size()), slowest);
  out += buffer;
  out +=
      "  not checked, to locate causes: reference conditions by the model behind them; "
      "resampled GAB intervals\n";
  for (const auto& [name, tally] : tallies.diagnostic) out += Row(name, tally);
  out += "  model behind the reference conditions:";
  for (const auto& [model, count] : tallies.reference_models) {
    out += " " + model + " " + std::to_string(count);
  }
  return out + "\n";
}

Tallies RunClass(JobClass job_class, const std::string& name, int replicates = kReplicates) {
  const fs::path root = e2e::FreshDir("heldout_coverage", name);
  Tallies tallies;
  for (int replicate = 0; replicate < replicates; ++replicate) {
    const GeneratedJob job = Generate(job_class, replicate);
    const fs::path dir = root / ("job" + std::to_string(replicate));
    e2e::WriteBytes(dir / "job.toml", job.job_toml);
    e2e::WriteBytes(dir / job.data_file_name, job.data_csv);
    const auto start = std::chrono::steady_clock::now();
    const e2e::Outcome run = e2e::Sorbtrace(dir, "make job.toml --out out -q");
    tallies.seconds.push_back(
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count());
    EXPECT_EQ(run.exit_code, 0) << name << " replicate " << replicate << ":\n" << run.output;
    if (run.exit_code != 0) continue;
    const json results = json::parse(e2e::ReadBytes(dir / "out" / "results.json"));
    CheckJob(job, results, replicate, tallies);
    fs::remove_all(dir);
  }
  fs::remove_all(root);
  return tallies;
}

void ExpectCalibrated(const std::string& title, const Tallies& tallies) {
  std::cout << Table(title, tallies) << std::flush;  // the table, once; failures name a row
  std::string misses = "  statements that missed the truth:\n";
  for (const auto& m : tallies.misses) misses += "    " + m + "\n";
  std::cout << misses << std::flush;

  // Every job reports its GAB fit and both reference conditions; at most 2 % of the steps
  // may be left out (a step the program judges differently from the laboratory's rule).
  EXPECT_EQ(tallies.missing_gab, 0);
  EXPECT_EQ(tallies.missing_headlines, 0);
  EXPECT_LE(tallies.missing_points, tallies.expected_points / 50);

  const std::vector<std::pair<std::string, const Tally*>> pooled{
      {"ALL points", &tallies.all_points},
      {"ALL GAB parameters", &tallies.all_gab},
      {"ALL reference conditions", &tallies.all_headlines}};
  for (const auto& [name, t] : pooled) {
    EXPECT_GE(t->Coverage(), 0.90) << name << " (table above)";
    EXPECT_LE(t->Coverage(), 0.98) << name << " (table above)";
  }
  for (const auto& [name, t] : tallies.by_quantity) {
    EXPECT_TRUE(ConsistentWithCalibrated(t))
        << name << ": " << t.covered << " of " << t.trials << " (table above)";
    if (t.trials >= 20) {
      const double ratio = t.MeanU() / t.Rms();
      EXPECT_GE(ratio, 0.7) << name << ": mean(u)/RMS(error) (table above)";
      EXPECT_LE(ratio, 1.5) << name << ": mean(u)/RMS(error) (table above)";
    }
  }
}

TEST(HeldoutCoverage, GeneratedFilesAreDeterministic) {
  for (JobClass c :
       {JobClass::kDesiccatorIdentical, JobClass::kDesiccatorFactors, JobClass::kVapourLog}) {
    const GeneratedJob a = Generate(c, 3);
    const GeneratedJob b = Generate(c, 3);
    EXPECT_EQ(a.job_toml, b.job_toml);
    EXPECT_EQ(a.data_csv, b.data_csv);
    EXPECT_NE(a.data_csv, Generate(c, 4).data_csv);
  }
  // Vapour logs: exactly two steps cut early, at 60-90 % (the class definition).
  for (int replicate = 0; replicate < kReplicates; ++replicate) {
    int cut = 0;
    for (const auto& p : Generate(JobClass::kVapourLog, replicate).points) {
      if (p.cut_early) {
        ++cut;
        EXPECT_GE(p.rh_fraction, 0.6 - 1e-12);
      }
    }
    EXPECT_EQ(cut, 2) << replicate;
  }
}

// History (measured on each class before it was enabled):
//  - vapour logs (10-20 mg, two steps cut early), enabled at e738aa8: points 99.6 -> 97.3 %
//    (u / RMS 1.6-1.7 -> 0.82-1.18: the balance u of one reading had been counted for the wet and
//    dry mass on top of a tail fit whose residuals already hold that scatter), reference
//    conditions 94 -> 97 % (the curve readings became the Akaike-weighted model average; the
//    AICc-best model was Henderson, Peleg or Oswin in 13 of 50 jobs);
//  - identical specimens, enabled after the desiccator step start and pooled weighing scatter
//    (pipeline/equilibrate/approach.h): before, points 97.4 %, GAB 96.7 %, reference conditions
//    94 %, but mean(u) / RMS(error) of Mg(NO3)2 0.58 and MgCl2 0.68 (steps that met the criterion
//    after three weighings, their approach read from three late weighings alone: u varied by 40x
//    between jobs); after, every quantity's u / RMS 0.87-1.34, RMS error of those two points 3.7
//    and 3.9 times smaller, points 97.4 %, GAB 91.3 %, reference conditions 95 %;
//  - specimens differing (sd 3 %), enabled with 200 jobs: on 50 jobs the pooled points covered
//    98.3 % (49 of 50 jobs; see kReplicatesSharedError); on 200 jobs the points cover 95-98 % per
//    salt with u / RMS 0.94-0.97.
TEST(HeldoutCoverage, DesiccatorIdenticalSpecimens) {
  ExpectCalibrated("Desiccator, 3 identical specimens, ISO 12571 0.1 % rule, tau 1-4 d",
                   RunClass(JobClass::kDesiccatorIdentical, "identical"));
}

TEST(HeldoutCoverage, DesiccatorSpecimenFactors) {
  ExpectCalibrated("Desiccator, 3 specimens with factors sd 3 %, ISO 12571 0.1 % rule",
                   RunClass(JobClass::kDesiccatorFactors, "factors", kReplicatesSharedError));
}

TEST(HeldoutCoverage, VapourLogMilligram) {
  ExpectCalibrated("Vapour log, 10-20 mg, dm/dt 0.002 %/min, two steps cut at 1.5 tau",
                   RunClass(JobClass::kVapourLog, "vapour"));
}

}  // namespace
}  // namespace sorbtrace::heldout_coverage
