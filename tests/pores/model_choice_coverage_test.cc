// Coverage of the moisture contents read from the fitted isotherms when the true isotherm is
// none of the candidate models exactly (label "slow"): few points, a large humidity
// uncertainty, errors in variables; fit -> pores through the stage APIs, every default model of
// the fit stage, the reading of pores::internal::ReadCurves (the model average, quantities.h).
//
// Design per replicate (invented, shaped like a vapour-sorption or desiccator isotherm of a
// laboratory): 9 steps at nominal 10, 20, ..., 90 % RH and 23 degC; the specimen's true RH is the
// nominal one plus a normal deviate of sd 1.0 %RH (a capacitive sensor or salt humidity with
// its temperature effect, common practice), stated to the fit as u(RH); the moisture content is
// the truth at the true RH plus a normal deviate of sd 1e-4 kg/kg + 0.3 % of the value (a
// milligram balance and the dry-mass share of a reduced point, common practice), stated as u.
// Two truths:
//  * GAB, X_m = 0.03-0.06 kg/kg, C = 4-15, K = 0.72-0.88 drawn per replicate (uniform): a
//    candidate model, but on 9 points with 1 %RH two-parameter models often win by AICc;
//  * a sum of two sorption mechanisms outside the catalogue: Langmuir sites, X_L b a / (1 + b a)
//    (I. Langmuir, J. Am. Chem. Soc. 40 (1918) 1361), plus Flory-Huggins dissolution in an
//    amorphous fraction f of a polymer, ln a = ln phi + (1 - phi) + chi (1 - phi)^2 for water
//    volume fraction phi in a long-chain polymer (P. J. Flory, Principles of Polymer Chemistry,
//    Cornell 1953, ch. XII; from memory), X_FH = f phi / (1 - phi) rho_w / rho_p: the
//    "dual-mode" picture of glassy polymers (W. R. Vieth, J. M. Howell, J. H. Hsieh, J. Membr.
//    Sci. 1 (1976) 177, there with Henry's law; from memory). chi = 0.5 (a(phi) increases for
//    chi <= 0.5), rho_p = 1.3 g/cm3, X_L = 0.02-0.04, b = 10-30, f = 0.15-0.30 per replicate.
// Checks (replicates.h: coverage 90-98 %, mean u over the scatter of the errors 0.7-1.5) on the
// 23 degC / 50 and 80 % RH moisture contents of each truth. Split by the model that won by AICc
// (GAB truth; splits of at least kMinSplit replicates): the same u / sd band, and the coverage
// band widened by two binomial standard errors of a 95 % coverage over the split's n,
// sqrt(0.95 * 0.05 / n) (a split of 60 replicates cannot resolve 90 % from 95 %; common
// practice).
//
// Not checked, printed to compare treatments on the same fits: the best model's value with
// its curve u alone ("best alone"), plus the Akaike-weighted spread about it ("best + spread",
// the treatment before ReadCurves), the model average with the variance of Burnham & Anderson
// 2002 eq. 4.9 ("average, eq. 4.9"), and the reported form with each model's u_i^2 scaled by its
// Birge ratio max(1, chi2 / dof) ("average, Birge-scaled", a misfit term). Measured at these
// seeds, 250 replicates each, coverage at 50 / 80 % RH:
//                       best alone   best + spread  average 4.9  reported     Birge-scaled
//   GAB truth           88.0 / 90.0  92.4 / 94.4    93.2 / 95.2  93.2 / 95.6  93.6 / 96.0
//   Langmuir + F.-H.    80.4 / 74.0  89.2 / 90.4    90.8 / 89.2  92.0 / 91.2  94.0 / 93.2
// reported u / sd 0.93 / 0.97 and 0.97 / 0.88. Left: where the truth is outside the catalogue
// and Oswin wins (80 of 250), the reported reading covers 82.5 / 88.8 % (u / sd 1.21 / 1.17:
// a bias common to the candidates, not covered by their spread; Birge-scaled 86.2 / 92.5 %).
// Those splits are printed, not checked.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <map>
#include <random>
#include <string>
#include <vector>

#include "fitters/fitter.h"
#include "fitters/registry.h"
#include "pipeline/fit/fit_stage.h"
#include "pipeline/pores/pores.h"
#include "pipeline/reduce/reduce.h"
#include "tests/coverage/replicates.h"

namespace sorbtrace::pores {
namespace {

using coverage::Tally;

constexpr int kReplicates = 250;
constexpr int kMinSplit = 40;  // a split below this is printed, not checked
constexpr int kNumSteps = 9;
constexpr double kSigmaRhFraction = 0.010;
constexpr double kSigmaMoistureAbsolute = 1e-4;
constexpr double kSigmaMoistureRelative = 0.003;
constexpr double kTemperature_K = 296.15;  // 23 degC (ISO 12571 test temperature)
constexpr double kChi = 0.5;
constexpr double kWaterOverPolymerDensity = 1.0 / 1.3;  // rho_w / rho_p, invented polymer

// Uniform (0, 1) and normal draws of our own (Box-Muller on std::mt19937_64, whose output the
// C++ standard fixes).
class Draws {
 public:
  explicit Draws(std::uint64_t seed) : engine_(seed) {}
  double Uniform(double lo, double hi) {
    constexpr double kTwoToMinus53 = 1.0 / 9007199254740992.0;  // 2^-53
    return lo + (hi - lo) * (0.5 + static_cast<double>(engine_() >> 11)) * kTwoToMinus53;
  }
  double Normal() {
    const double u1 = Uniform(0.0, 1.0);
    const double u2 = Uniform(0.0, 1.0);
    return std::sqrt(-2.0 * std::log(u1)) * std::cos(2.0 * 3.14159265358979323846 * u2);
  }

 private:
  std::mt19937_64 engine_;
};

enum class Truth { kGab, kLangmuirFloryHuggins };

struct TrueIsotherm {
  Truth kind = Truth::kGab;
  double a = 0.0, b = 0.0, c = 0.0;  // GAB: X_m, C, K; dual mode: X_L, b, f
  double operator()(double rh) const {
    if (kind == Truth::kGab) {
      const double ka = c * rh;
      return a * b * ka / ((1.0 - ka) * (1.0 - ka + b * ka));
    }
    return a * b * rh / (1.0 + b * rh) + c * FloryHugginsRatio(rh) * kWaterOverPolymerDensity;
  }
  // phi / (1 - phi) at activity rh: bisection of ln phi + (1 - phi) + chi (1 - phi)^2 = ln rh.
  static double FloryHugginsRatio(double rh) {
    double lo = 0.0, hi = 1.0;
    for (int i = 0; i < 200; ++i) {
      const double phi = 0.5 * (lo + hi);
      const double ln_a = std::log(phi) + (1.0 - phi) + kChi * (1.0 - phi) * (1.0 - phi);
      (ln_a < std::log(rh) ? lo : hi) = phi;
    }
    const double phi = 0.5 * (lo + hi);
    return phi / (1.0 - phi);
  }
};

TrueIsotherm DrawTruth(Truth kind, Draws* d) {
  TrueIsotherm t;
  t.kind = kind;
  if (kind == Truth::kGab) {
    t.a = d->Uniform(0.03, 0.06);
    t.b = d->Uniform(4.0, 15.0);
    t.c = d->Uniform(0.72, 0.88);
  } else {
    t.a = d->Uniform(0.02, 0.04);
    t.b = d->Uniform(10.0, 30.0);
    t.c = d->Uniform(0.15, 0.30);
  }
  return t;
}

reduce::ReducedIsotherms MakePoints(const TrueIsotherm& truth, Draws* d) {
  reduce::ReducedIsotherms reduced;
  for (int i = 0; i < kNumSteps; ++i) {
    reduce::IsothermPoint p;
    p.dataset_id = "model-choice-23C";
    p.step_index = i;
    p.step_label = "step " + std::to_string(i + 1);
    p.branch = ingest::Branch::kAdsorption;
    p.temperature_K = kTemperature_K;
    p.rh_fraction = 0.1 * (i + 1);
    p.u_rh_fraction = kSigmaRhFraction;
    p.expanded_u_rh_fraction = 2.0 * kSigmaRhFraction;
    const double true_rh = p.rh_fraction + kSigmaRhFraction * d->Normal();
    const double x = truth(true_rh);
    p.u_moisture_kg_per_kg = kSigmaMoistureAbsolute + kSigmaMoistureRelative * x;
    p.expanded_u_moisture_kg_per_kg = 2.0 * p.u_moisture_kg_per_kg;
    p.u_independent_kg_per_kg = p.u_moisture_kg_per_kg;
    p.moisture_kg_per_kg = x + p.u_moisture_kg_per_kg * d->Normal();
    p.num_specimens = 1;
    p.equilibrated = true;
    reduced.points.push_back(p);
  }
  return reduced;
}

// The alternatives printed beside the reported reading (see the file comment).
struct Alternatives {
  double best_value = 0.0, u_best = 0.0, k_best = 2.0;
  double u_best_spread = 0.0;
  double average = 0.0, u_eq49 = 0.0;
  double u_birge = 0.0;  // revised form with each u_i^2 times max(1, chi2 / dof) (Birge ratio)
};

Alternatives AlternativesAt(const fit::IsothermFits& fits, double rh) {
  Alternatives out;
  std::vector<const fit::ModelFit*> ranked;
  std::vector<double> aicc;
  for (const fit::ModelFit& f : fits.fits) {
    if (f.rank > 0) {
      ranked.push_back(&f);
      aicc.push_back(f.result.statistics.aicc);
    }
  }
  const std::vector<double> w = fitters::AkaikeWeights(aicc);
  const fit::ModelFit& best = fits.fits[static_cast<std::size_t>(fits.best_fit_per_group[0])];
  const auto value = [&](const fit::ModelFit& f) {
    fitters::ModelContext context;
    context.temperature_K = fits.groups[0].temperature_K;
    const double x[fitters::kMaxInputs] = {rh, 0.0};
    return fitters::FindModel(f.model_name)->Evaluate(f.result.parameters.data(), x, context);
  };
  const fit::DerivedUncertainty b = fit::CurveUncertainty(fits, best, rh);
  out.best_value = value(best);
  out.u_best = b.standard_uncertainty;
  out.k_best = b.coverage_factor;
  double spread = 0.0;
  for (std::size_t i = 0; i < ranked.size(); ++i) {
    out.average += w[i] * value(*ranked[i]);
    spread += w[i] * std::pow(value(*ranked[i]) - out.best_value, 2);
  }
  out.u_best_spread = std::hypot(out.u_best, std::sqrt(spread));
  for (std::size_t i = 0; i < ranked.size(); ++i) {
    const double u_i = fit::CurveUncertainty(fits, *ranked[i], rh).standard_uncertainty;
    out.u_eq49 += w[i] * std::hypot(u_i, value(*ranked[i]) - out.average);
    const fitters::FitStatistics& st = ranked[i]->result.statistics;
    const double birge = std::max(1.0, st.weighted_ssr / st.degrees_of_freedom);
    out.u_birge += w[i] * (u_i * u_i * birge + std::pow(value(*ranked[i]) - out.average, 2));
  }
  out.u_birge = std::sqrt(out.u_birge);
  return out;
}

void Print(const std::string& name, const Tally& t) {
  std::printf("  %-52s %4d  %5.1f %%  u/sd %.2f\n", name.c_str(), t.count, 100.0 * t.Coverage(),
              t.count > 2 ? t.Ratio() : 0.0);
}

// widen: binomial standard errors of a 95 % coverage over t.count added to the coverage band.
void Check(const std::string& name, const Tally& t, double widen) {
  constexpr double kNominal = 0.95;
  const double se = std::sqrt(kNominal * (1.0 - kNominal) / t.count);
  EXPECT_GE(t.Coverage(), coverage::kMinCoverage - widen * se) << name;
  EXPECT_LE(t.Coverage(), coverage::kMaxCoverage + widen * se) << name;
  EXPECT_GE(t.Ratio(), coverage::kMinRatio) << name;
  EXPECT_LE(t.Ratio(), coverage::kMaxRatio) << name;
}

void RunTruth(Truth kind, std::uint64_t first_seed, const char* title, bool check_splits) {
  std::map<std::string, Tally> reported, splits, compared;
  fit::FitStageOptions fit_options;  // every default model, errors in variables (the default)
  fit_options.bootstrap_resamples = 0;
  fit_options.monte_carlo_draws = 0;
  PoreOptions pore_options;
  pore_options.band_draws = 0;
  pore_options.stepwise = false;
  for (int r = 0; r < kReplicates; ++r) {
    Draws draws(first_seed + static_cast<std::uint64_t>(r));
    const TrueIsotherm truth = DrawTruth(kind, &draws);
    const reduce::ReducedIsotherms reduced = MakePoints(truth, &draws);
    const fit::IsothermFits fits = fit::FitIsotherms(reduced, fit_options);
    ASSERT_EQ(fits.best_fit_per_group.size(), 1u);
    ASSERT_GE(fits.best_fit_per_group[0], 0) << "replicate " << r << ": no best model";
    const std::string best_model =
        fits.fits[static_cast<std::size_t>(fits.best_fit_per_group[0])].model_name;
    const PoreAnalysis pores = AnalysePores(reduced, fits, pore_options);
    ASSERT_EQ(pores.reference_moisture.size(), 2u);
    for (const ReferenceMoisture& m : pores.reference_moisture) {
      const double rh = m.condition.rh_fraction;
      const double x_true = truth(rh);
      const std::string q = "23 C / " + std::to_string(static_cast<int>(100 * rh + 0.5)) + " %";
      const double expanded = m.coverage_factor * m.u_moisture_kg_per_kg;
      reported[q].Add(m.moisture_kg_per_kg, x_true, m.u_moisture_kg_per_kg, expanded);
      splits[q + ", best " + best_model].Add(m.moisture_kg_per_kg, x_true, m.u_moisture_kg_per_kg,
                                             expanded);
      const Alternatives alt = AlternativesAt(fits, rh);
      compared[q + " best alone"].Add(alt.best_value, x_true, alt.u_best, alt.k_best * alt.u_best);
      compared[q + " best + spread"].Add(alt.best_value, x_true, alt.u_best_spread,
                                         alt.k_best * alt.u_best_spread);
      compared[q + " average, Birge-scaled"].Add(alt.average, x_true, alt.u_birge,
                                                 m.coverage_factor * alt.u_birge);
      compared[q + " average, eq. 4.9"].Add(alt.average, x_true, alt.u_eq49,
                                            m.coverage_factor * alt.u_eq49);
    }
  }
  std::printf("%s (%d replicates): reported reading\n", title, kReplicates);
  for (const auto& [name, t] : reported) {
    Print(name, t);
    Check(name, t, 0.0);
  }
  std::printf("  by the best model (%s where n >= %d):\n", check_splits ? "checked" : "not checked",
              kMinSplit);
  for (const auto& [name, t] : splits) {
    Print(name, t);
    if (check_splits && t.count >= kMinSplit) Check(name, t, 2.0);
  }
  std::printf("  not checked, other treatments of the same fits:\n");
  for (const auto& [name, t] : compared) Print(name, t);
}

TEST(ModelChoiceCoverage, GabTruthFewPointsLargeHumidityUncertainty) {
  RunTruth(Truth::kGab, 1300, "GAB truth, 9 points, u(RH) 1 %RH", true);
}

TEST(ModelChoiceCoverage, TruthOutsideTheCatalogue) {
  RunTruth(Truth::kLangmuirFloryHuggins, 91300,
           "Langmuir + Flory-Huggins truth, 9 points, u(RH) 1 %RH", false);
}

}  // namespace
}  // namespace sorbtrace::pores
