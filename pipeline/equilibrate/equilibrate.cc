// Equilibrate stage: equilibrium per humidity step, dry reference masses, plot traces.
#include "pipeline/equilibrate/equilibrate.h"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <cmath>
#include <limits>
#include <map>
#include <optional>
#include <span>
#include <stdexcept>

#include "pipeline/common/number_text.h"
#include "pipeline/equilibrate/approach.h"
#include "pipeline/equilibrate/criteria.h"
#include "pipeline/equilibrate/exponential_tail.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::equilibrate {
namespace {

using physics::kPercent;
using physics::kSecondsPerHour;
using physics::kSecondsPerMinute;
// Half-width a of a rectangular distribution -> standard uncertainty a / sqrt(3)
// (JCGM 100:2008, 4.3.7).
const double kSqrt3 = std::sqrt(3.0);
// Step of the central difference for d ln p_s / dT [K].
constexpr double kTemperatureStep_K = 0.01;

std::string Lower(std::string_view text) {
  std::string out(text);
  for (char& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::string FormatPercent(double fraction) { return fmt::format("{:.4g} %", fraction * kPercent); }

// d(rh)/dT at constant vapour pressure: what a specimen at a temperature different from the
// air (or sensor) temperature sees: rh(T) = p_v / p_s(T), so d rh / dT = -rh d ln p_s / dT.
double RhTemperatureCoefficientAtConstantVapourPressure(double rh_fraction, double temperature_K) {
  const double up = physics::SaturationPressureOverWater_Pa(temperature_K + kTemperatureStep_K);
  const double down = physics::SaturationPressureOverWater_Pa(temperature_K - kTemperatureStep_K);
  return -rh_fraction * (std::log(up) - std::log(down)) / (2.0 * kTemperatureStep_K);
}

// RH of a desiccator step from its atmosphere.
void SetDesiccatorRh(const ingest::DesiccatorStep& step, const ingest::JobSpec& job,
                     const SourceLocation& where, EquilibriumPoint& point) {
  if (step.salt) {
    // The salt table's refusals are input errors; any other exception is a bug (exit code 70).
    auto no_humidity = [&](const std::exception& error) {
      return InputError(where,
                        fmt::format("no humidity for salt '{}' at {:.2f} degC: {}", *step.salt,
                                    physics::KelvinToCelsius(step.temperature_K), error.what()),
                        "a salt of Greenspan (1977) inside its tabulated temperature range");
    };
    try {
      const physics::SaltHumidity salt =
          physics::SaltSolutionHumidity(*step.salt, step.temperature_K);
      point.rh_fraction = salt.rh_fraction;
      point.u_rh_fraction = salt.standard_uncertainty_fraction;
      point.drh_dT_per_K = salt.drh_dT_per_K;
      point.rh_source_kind = RhSource::kSaltTable;
      point.step_label = physics::CanonicalSaltName(*step.salt);
      point.rh_source = fmt::format("{}, {}", physics::CanonicalSaltName(*step.salt),
                                    physics::SaltHumidityMethod(*step.salt));
    } catch (const std::invalid_argument& error) {  // unknown salt
      throw no_humidity(error);
    } catch (const physics::RangeError& error) {  // temperature outside the salt's table
      throw no_humidity(error);
    }
    return;
  }
  if (step.branch == ingest::Branch::kDrying) {
    point.rh_fraction = 0.0;
    point.u_rh_fraction = 0.0;
    point.rh_source_kind = RhSource::kDry;
    point.rh_source =
        Lower(step.atmosphere) == "oven" ? "oven drying" : "desiccant (dry reference)";
    return;
  }
  if (step.set_rh_fraction) {
    point.rh_fraction = *step.set_rh_fraction;
    point.u_rh_fraction = job.rh_sensor_standard_uncertainty_fraction;
    point.drh_dT_per_K = 0.0;
    point.rh_source_kind = RhSource::kStated;
    point.rh_source = "stated humidity, sensor uncertainty";
    return;
  }
  throw InputError(where, fmt::format("atmosphere '{}' gives no humidity", step.atmosphere),
                   "a salt, desiccant, oven or rh:<number>%");
}

// Decimates a trace to at most kMaxTracePoints by averaging groups of consecutive points.
std::vector<TracePoint> Decimate(const std::vector<TracePoint>& points) {
  const std::size_t n = points.size();
  const std::size_t max_points = static_cast<std::size_t>(kMaxTracePoints);
  if (n <= max_points) return points;
  const std::size_t group = (n + max_points - 1) / max_points;
  std::vector<TracePoint> out;
  out.reserve(n / group + 1);
  for (std::size_t first = 0; first < n; first += group) {
    const std::size_t last = std::min(n, first + group);
    TracePoint mean;
    for (std::size_t i = first; i < last; ++i) {
      mean.time_s += points[i].time_s;
      mean.mass_g += points[i].mass_g;
      mean.rh_fraction += points[i].rh_fraction;
    }
    const double count = static_cast<double>(last - first);
    mean.time_s /= count;
    mean.mass_g /= count;
    mean.rh_fraction /= count;
    out.push_back(mean);
  }
  return out;
}

const ingest::SpecimenSpec* FindSpecimen(const ingest::JobSpec& job, const std::string& id) {
  for (const auto& specimen : job.specimens) {
    if (specimen.id == id) return &specimen;
  }
  return nullptr;
}

void CountAndWarn(const EquilibriumPoint& point, EquilibrateSummary& summary) {
  ++summary.num_steps;
  if (point.extrapolated) {
    ++summary.num_extrapolated;
  } else if (point.equilibrated) {
    ++summary.num_equilibrated;
  } else {
    ++summary.num_not_equilibrated;
  }
  if (!point.equilibrated || point.extrapolated) {
    std::string message = fmt::format("{} / {} / step {} ({}):", point.dataset_id,
                                      point.specimen_id, point.step_index + 1, point.step_label);
    for (const auto& flag : point.flags) message += " " + flag;
    summary.warnings.push_back(Diagnostic{Severity::kWarning, point.where, message, {}});
  }
}

// Share of the total below which a part of an uncertainty is named negligible rather than
// printed (a model term of 1e-101 g beside a fit term of 1e-6 g; project choice).
constexpr double kNegligibleShare = 0.01;

// "fit 1.2 × 10⁻⁶ g, model 3.0 × 10⁻⁷ g", or "from the fit; model term negligible".
std::string UncertaintyParts(double u_fit_g, double u_model_g) {
  if (!(u_model_g > kNegligibleShare * std::hypot(u_fit_g, u_model_g))) {
    return "from the fit; model term negligible";
  }
  return fmt::format("fit {} g, model {} g",
                     common::FormatSignificant(u_fit_g, common::kUncertaintySignificantDigits),
                     common::FormatSignificant(u_model_g, common::kUncertaintySignificantDigits));
}

// Applies the residual-approach estimate of a step that met its criterion (approach.h); the
// drift term stays as the fallback when no time constant was resolved.
void ApplyApproach(const internal::ApproachEstimate& estimate, EquilibriumPoint& point) {
  if (!estimate.estimated) {
    point.flags.push_back(fmt::format(
        "approach to equilibrium not resolved from the trace; last change as rectangular "
        "uncertainty (u = {} g)",
        common::FormatSignificant(point.u_mass_drift_g, common::kUncertaintySignificantDigits)));
    return;
  }
  point.approach_correction_g = estimate.correction_g;
  point.u_mass_approach_g = estimate.u_correction_g;
  point.u_mass_approach_model_g = estimate.u_model_g;
  point.approach_degrees_of_freedom = estimate.degrees_of_freedom;
  point.approach_time_constant_s = estimate.time_constant_s;
  point.approach_method = estimate.method;
  point.mass_includes_weighing_scatter = estimate.includes_weighing_scatter;
  point.mass_g += estimate.correction_g;
  point.u_mass_drift_g = 0.0;
  const double u_g = std::hypot(estimate.u_correction_g, estimate.u_model_g);
  point.flags.push_back(
      fmt::format("approach to equilibrium corrected by {} g (u = {} g; tau = {:.3g} h)",
                  common::FormatAtUncertainty(estimate.correction_g, u_g,
                                              common::kUncertaintySignificantDigits, true),
                  common::FormatSignificant(u_g, common::kUncertaintySignificantDigits),
                  estimate.time_constant_s / kSecondsPerHour));
}

// ---- Desiccator ------------------------------------------------------------------------

// The step's trace (approach.h): its weighings and the specimen's last weighing before the
// step's first one (in any step of the series). That weighing is the step's start when the first
// weighing is at least half a weighing interval after it; a first weighing sooner than that is
// itself the weighing at the transfer (EquilibrateOptions::previous_weighing_starts_step).
internal::StepTrace TraceOf(const ingest::DesiccatorSeries& series,
                            const ingest::DesiccatorStep& step, const EquilibrateOptions& options) {
  internal::StepTrace trace{step.weighings, nullptr, false};
  if (!options.previous_weighing_starts_step || step.weighings.empty()) return trace;
  const double first_s = step.weighings.front().time_s;
  const ingest::Weighing* previous = nullptr;
  for (const ingest::DesiccatorStep& other : series.steps) {
    if (other.specimen_id != step.specimen_id || &other == &step) continue;
    for (const ingest::Weighing& weighing : other.weighings) {
      if (weighing.time_s <= first_s &&
          (previous == nullptr || weighing.time_s > previous->time_s)) {
        previous = &weighing;
      }
    }
  }
  if (previous == nullptr) return trace;
  constexpr double kHalf = 0.5;  // of the weighing interval: EquilibrateOptions
  if (first_s - previous->time_s < kHalf * options.min_weighing_interval_s) {
    trace.first_weighing_is_start = true;
  } else {
    trace.start = previous;
  }
  return trace;
}

// Every step's trace for the approach estimate (approach.h), in the order of series.steps.
std::vector<internal::StepTrace> DesiccatorTraces(const ingest::DesiccatorSeries& series,
                                                  const EquilibrateOptions& options) {
  std::vector<internal::StepTrace> traces;
  traces.reserve(series.steps.size());
  for (const ingest::DesiccatorStep& step : series.steps) {
    traces.push_back(TraceOf(series, step, options));
  }
  return traces;
}

void EquilibrateDesiccator(const ingest::DesiccatorSeries& series, const ingest::JobSpec& job,
                           const EquilibrateOptions& options, EquilibriumSet& set) {
  std::map<std::string, Trace> traces;  // by specimen, emitted in first-appearance order
  std::vector<std::string> order;
  const std::vector<internal::StepTrace> step_traces = DesiccatorTraces(series, options);
  const internal::WeighingScatter scatter =
      internal::PooledWeighingScatter(step_traces, BalanceStandardUncertainty_g(job), options);
  set.summary.weighing_scatter.push_back(
      WeighingScatterRecord{series.dataset_id, scatter.sd_g, scatter.degrees_of_freedom,
                            scatter.num_steps, internal::kMinTracePointsForScatter});
  for (std::size_t k = 0; k < series.steps.size(); ++k) {
    const ingest::DesiccatorStep& step = series.steps[k];
    EquilibriumPoint point;
    point.dataset_id = series.dataset_id;
    point.specimen_id = step.specimen_id;
    point.step_index = step.step_index;
    point.step_label = step.atmosphere;  // canonical salt name set with the RH
    point.method = ingest::Method::kDesiccator;
    point.branch = step.branch;
    point.cycle = 0;
    point.temperature_K = step.temperature_K;
    point.where = SourceLocation{series.file, step.first_line, 0};
    point.num_readings = static_cast<int>(step.weighings.size());
    if (step.weighings.empty()) {
      throw InputError(point.where, "step has no weighings", "at least 2 weighings per step");
    }
    SetDesiccatorRh(step, job, point.where, point);

    const internal::ConstantMassResult criterion =
        internal::EvaluateConstantMass(step.weighings, options);
    const ingest::Weighing& first = step.weighings.front();
    const ingest::Weighing& last = step.weighings.back();
    point.mass_g = last.mass_g;
    point.last_change_fraction = criterion.change_fraction;
    point.u_mass_drift_g = std::abs(criterion.last_change_g) / kSqrt3;
    point.equilibrated = criterion.met;
    if (criterion.met) {
      point.time_to_equilibrium_s =
          step.weighings[static_cast<std::size_t>(criterion.first_met_index)].time_s - first.time_s;
      ApplyApproach(
          internal::EstimateDesiccatorApproach(step_traces[k], last.mass_g, scatter, options),
          point);
    } else {
      point.time_to_equilibrium_s = last.time_s - first.time_s;
      if (criterion.chain_length < options.min_weighings) {
        point.flags.push_back(
            fmt::format("not equilibrated: only {} weighing(s) at least {:.4g} h apart ({} needed)",
                        criterion.chain_length, options.min_weighing_interval_s / kSecondsPerHour,
                        options.min_weighings));
      } else {
        point.flags.push_back(fmt::format(
            "not equilibrated: last change {:.3f} % of mass over {:.4g} h (limit {:.3g} %)",
            criterion.change_fraction * kPercent, criterion.chain_span_s / kSecondsPerHour,
            options.mass_change_limit_fraction * kPercent));
      }
    }

    auto [it, inserted] = traces.try_emplace(step.specimen_id);
    if (inserted) {
      order.push_back(step.specimen_id);
      it->second.dataset_id = series.dataset_id;
      it->second.specimen_id = step.specimen_id;
    }
    for (const ingest::Weighing& weighing : step.weighings) {
      it->second.points.push_back(TracePoint{weighing.time_s, weighing.mass_g, point.rh_fraction});
    }
    if (criterion.met) {
      it->second.equilibrium_times_s.push_back(
          step.weighings[static_cast<std::size_t>(criterion.first_met_index)].time_s);
    }
    CountAndWarn(point, set.summary);
    set.points.push_back(std::move(point));
  }
  for (const std::string& id : order) {
    Trace trace = std::move(traces[id]);
    trace.points = Decimate(trace.points);
    set.traces.push_back(std::move(trace));
  }
}

// ---- Vapour-sorption log ---------------------------------------------------------------

// Time at which the fitted tail's rate falls below the limit (searched forward from `from`).
double ProjectedEquilibriumTime(const internal::TailFit& fit, double from_s, double limit_g_per_s) {
  auto below = [&](double t) { return std::abs(fit.Slope_g_per_s(t)) < limit_g_per_s; };
  if (below(from_s)) return from_s;
  double step = std::max(1.0, fit.slowest_tau_s * 0.1);
  double hi = from_s + step;
  constexpr int kMaxDoublings = 60;
  for (int i = 0; i < kMaxDoublings && !below(hi); ++i) {
    step *= 2.0;
    hi = from_s + step;
  }
  double lo = from_s;
  constexpr int kBisections = 60;
  for (int i = 0; i < kBisections; ++i) {
    const double mid = 0.5 * (lo + hi);
    (below(mid) ? hi : lo) = mid;
  }
  return hi;
}

// Variance of one block mean from the third differences of consecutive block means, and the
// standard uncertainty of that estimate (EquilibriumPoint::u_mass_balance_g); none with fewer
// than 4 means.
struct BlockScatter {
  double variance_g2 = 0.0;
  double u_variance_g2 = 0.0;
};
std::optional<BlockScatter> BlockScatter_g(std::span<const double> mass_g) {
  constexpr std::size_t kThirdDifference = 3;
  // Sum of the squared coefficients of m_{i+3} - 3 m_{i+2} + 3 m_{i+1} - m_i.
  constexpr double kCoefficientSquares = 20.0;
  // Consecutive differences overlap: their autocovariances (in units of the reading variance)
  // are 20, -15, 6, -1 at lags 0-3, so for white noise Var(s^2) / sigma^4 = (2 / m)
  // (1 + 2 (15^2 + 6^2 + 1^2) / 20^2) = 4.62 / m over m differences (Var of a mean of squares of
  // correlated normal deviates, 2 sum_lags rho^2 / m; derived).
  constexpr double kRelativeVarianceTimesCount = 2.0 * (1.0 + 2.0 * (225.0 + 36.0 + 1.0) / 400.0);
  if (mass_g.size() <= kThirdDifference) return std::nullopt;
  double sum = 0.0;
  for (std::size_t i = 0; i + kThirdDifference < mass_g.size(); ++i) {
    const double d = mass_g[i + 3] - 3.0 * mass_g[i + 2] + 3.0 * mass_g[i + 1] - mass_g[i];
    sum += d * d;
  }
  const double count = static_cast<double>(mass_g.size() - kThirdDifference);
  BlockScatter scatter;
  scatter.variance_g2 = sum / (kCoefficientSquares * count);
  scatter.u_variance_g2 = scatter.variance_g2 * std::sqrt(kRelativeVarianceTimesCount / count);
  return scatter;
}

// The balance part of a log step's mass (EquilibriumPoint::u_mass_balance_g). from_fit: mass_g
// is a tail fit's asymptote (its covariance holds the scatter); else the mean of
// window_count block means.
std::optional<double> LogBalanceUncertainty_g(std::span<const double> tail_mass_g, bool from_fit,
                                              double window_count, const ingest::JobSpec& job) {
  const std::optional<BlockScatter> scatter = BlockScatter_g(tail_mass_g);
  if (!scatter) return std::nullopt;
  const double u_balance = BalanceStandardUncertainty_g(job);
  double persistent2 = u_balance * u_balance - scatter->variance_g2;
  // Counted only where the readings show it: u_bal^2 above s^2 by more than twice the standard
  // uncertainty of s^2 (about 98 % one-sided; project choice). Within it the stated u_bal is the
  // readings' own repeatability, and max(0, u_bal^2 - s^2) of a noisy s^2 would add up to half
  // of u_bal at random (measured on generated logs: tests/coverage/equilibrium_coverage_test.cc).
  constexpr double kResolved = 2.0;
  if (!(persistent2 > kResolved * scatter->u_variance_g2)) persistent2 = 0.0;
  if (from_fit) return std::sqrt(persistent2);
  return std::sqrt(persistent2 + scatter->variance_g2 / window_count);
}

void EquilibrateLog(const ingest::VaporLog& log, const ingest::JobSpec& job,
                    const ingest::DataSetSpec* dataset, const EquilibrateOptions& options,
                    EquilibriumSet& set) {
  // Reference mass for relative rates: stated dry mass, else the lowest block mass.
  double reference_mass_g = 0.0;
  const ingest::SpecimenSpec* specimen = FindSpecimen(job, log.specimen_id);
  if (specimen != nullptr && specimen->dry_mass_g) {
    reference_mass_g = *specimen->dry_mass_g;
  } else {
    reference_mass_g = std::numeric_limits<double>::max();
    for (const auto& step : log.steps) {
      for (const auto& block : step.blocks)
        reference_mass_g = std::min(reference_mass_g, block.mass_g);
    }
  }
  Trace trace;
  trace.dataset_id = log.dataset_id;
  trace.specimen_id = log.specimen_id;
  for (const ingest::VaporLogStep& step : log.steps) {
    EquilibriumPoint point;
    point.dataset_id = log.dataset_id;
    point.specimen_id = log.specimen_id;
    point.step_index = step.step_index;
    point.step_label = "set " + FormatPercent(step.set_rh_fraction);
    point.method = ingest::Method::kVaporLog;
    point.branch = step.branch;
    point.cycle = step.cycle;
    point.where = SourceLocation{log.file, static_cast<int>(step.first_line), 0};
    point.num_readings = static_cast<int>(step.blocks.size());
    for (const auto& block : step.blocks) {
      trace.points.push_back(TracePoint{block.time_s, block.mass_g, block.rh_measured_fraction});
    }
    if (step.blocks.size() < 3) {
      throw InputError(point.where,
                       fmt::format("step at set point {} has only {} block mean(s)",
                                   FormatPercent(step.set_rh_fraction), step.blocks.size()),
                       "a step long enough to judge equilibrium (at least 3 block means)");
    }
    const std::span<const ingest::LogBlock> blocks(step.blocks);
    const internal::RateCriterionResult rate =
        internal::EvaluateRateCriterion(blocks, step.start_time_s, reference_mass_g, options);
    point.final_rate_fraction_per_min = rate.final_rate_fraction_per_min;

    // Means over the final window: mass, measured RH, temperature.
    double mass = 0.0, rh = 0.0, rh2 = 0.0, temperature = 0.0;
    const std::size_t first = rate.window_first;
    const double count = static_cast<double>(blocks.size() - first);
    for (std::size_t i = first; i < blocks.size(); ++i) {
      mass += blocks[i].mass_g;
      rh += blocks[i].rh_measured_fraction;
      rh2 += blocks[i].rh_measured_fraction * blocks[i].rh_measured_fraction;
      temperature += blocks[i].temperature_K;
    }
    mass /= count;
    rh /= count;
    temperature /= count;
    const double rh_variance =
        count > 1.0 ? std::max(0.0, (rh2 - count * rh * rh) / (count - 1.0)) : 0.0;
    point.temperature_K = temperature > 0.0               ? temperature
                          : step.temperature_mean_K > 0.0 ? step.temperature_mean_K
                          : dataset != nullptr            ? dataset->temperature_K
                                                          : 0.0;
    point.rh_fraction = rh;
    // Sensor (Type B) combined with the standard error of the window mean (Type A).
    point.u_rh_fraction = std::sqrt(job.rh_sensor_standard_uncertainty_fraction *
                                        job.rh_sensor_standard_uncertainty_fraction +
                                    rh_variance / count);
    point.rh_source_kind = RhSource::kSensor;
    point.rh_source =
        fmt::format("sensor, mean of the last {:.4g} min",
                    (blocks.back().time_s - blocks[first].time_s) / kSecondsPerMinute);
    point.drh_dT_per_K = RhTemperatureCoefficientAtConstantVapourPressure(rh, point.temperature_K);

    const double end_s = blocks.back().time_s;
    // The tail of the step: what the extrapolation and the approach estimate fit.
    const double tail_start = end_s - options.tail_fraction * (end_s - step.start_time_s);
    std::vector<double> t, m;
    for (const auto& block : blocks) {
      if (block.time_s >= tail_start) {
        t.push_back(block.time_s);
        m.push_back(block.mass_g);
      }
    }
    if (rate.met) {
      point.equilibrated = true;
      point.mass_g = mass;
      point.time_to_equilibrium_s = rate.first_met_time_s - step.start_time_s;
      point.u_mass_drift_g = std::abs(rate.final_slope_g_per_s) * options.rate_window_s / kSqrt3;
      const internal::ApproachEstimate approach =
          internal::EstimateLogApproach(t, m, step.start_time_s, mass, options);
      ApplyApproach(approach, point);
      point.u_mass_balance_g = LogBalanceUncertainty_g(m, approach.estimated, count, job);
      trace.equilibrium_times_s.push_back(rate.first_met_time_s);
    } else {
      point.mass_g = mass;
      point.time_to_equilibrium_s = end_s - step.start_time_s;
      point.u_mass_drift_g = std::abs(rate.final_slope_g_per_s) * options.rate_window_s / kSqrt3;
      std::string reason = rate.window_complete
                               ? fmt::format("final rate {:.4f} %/min (limit {:.4g} %/min)",
                                             rate.final_rate_fraction_per_min * kPercent,
                                             options.rate_limit_fraction_per_min * kPercent)
                               : fmt::format("step shorter than the {:.4g} min rate window",
                                             options.rate_window_s / kSecondsPerMinute);
      std::string rejected;
      if (options.extrapolate_unfinished_steps) {
        if (static_cast<int>(t.size()) < options.min_tail_points) {
          rejected =
              fmt::format("tail has {} block means ({} needed)", t.size(), options.min_tail_points);
        } else {
          const internal::TailFit fit =
              internal::FitExponentialTail(t, m, internal::TailOptions(options, step.start_time_s));
          const double tail_span = t.back() - t.front();
          if (!fit.ok) {
            rejected = fit.message;
          } else {
            point.equilibrated = true;
            point.extrapolated = true;
            point.mass_g = fit.m_inf_g;
            point.u_mass_extrapolation_g = fit.u_m_inf_g;
            point.u_mass_extrapolation_model_g = fit.u_model_g;
            point.extrapolation_degrees_of_freedom = fit.degrees_of_freedom;
            point.u_mass_drift_g = 0.0;
            const double limit_g_per_s =
                options.rate_limit_fraction_per_min * reference_mass_g / kSecondsPerMinute;
            point.time_to_equilibrium_s =
                ProjectedEquilibriumTime(fit, end_s, limit_g_per_s) - step.start_time_s;
            point.flags.push_back(fmt::format(
                "extrapolated: {}; kinetic models fitted to the last {:.3g} h ({}), tau = {:.3g} "
                "h, "
                "asymptote {} g from the last mean (u = {} g: {})",
                reason, tail_span / kSecondsPerHour, internal::DescribeCandidates(fit),
                fit.slowest_tau_s / kSecondsPerHour,
                common::FormatAtUncertainty(fit.m_inf_g - mass, fit.TotalUncertainty_g(),
                                            common::kUncertaintySignificantDigits, true),
                common::FormatSignificant(fit.TotalUncertainty_g(),
                                          common::kUncertaintySignificantDigits),
                UncertaintyParts(fit.u_m_inf_g, fit.u_model_g)));
          }
        }
      } else {
        rejected = "extrapolation disabled";
      }
      point.u_mass_balance_g = LogBalanceUncertainty_g(m, point.extrapolated, count, job);
      if (!point.extrapolated) {
        point.flags.push_back(
            fmt::format("not equilibrated: {}; not extrapolated: {}", reason, rejected));
      }
    }
    CountAndWarn(point, set.summary);
    set.points.push_back(std::move(point));
  }
  trace.points = Decimate(trace.points);
  set.traces.push_back(std::move(trace));
}

// ---- Dry masses ------------------------------------------------------------------------

std::string DryMassMethodText(ingest::DryMassMethod method, const ingest::JobSpec& job) {
  switch (method) {
    case ingest::DryMassMethod::kOvenDrying:
      return fmt::format("oven drying at {:.4g} degC (ISO 12570)",
                         physics::KelvinToCelsius(job.drying_temperature_K));
    case ingest::DryMassMethod::kDesiccantStep:
      return "equilibrium over desiccant / at 0 % RH";
    case ingest::DryMassMethod::kFinalDryingStep:
      return "final drying step";
  }
  return "unknown";
}

// The dry reference of each specimen is chosen by ingest::FindDryMassSources (one rule);
// here it becomes a mass with its uncertainty.
void FindDryMasses(const ingest::IngestResult& ingested, EquilibriumSet& set) {
  const ingest::JobSpec& job = ingested.job;
  for (const ingest::DryMassSource& source : ingest::FindDryMassSources(ingested, nullptr)) {
    const std::string& id = source.specimen_id;
    std::vector<const EquilibriumPoint*> drying;
    for (const auto& point : set.points) {
      if (point.specimen_id == id && point.branch == ingest::Branch::kDrying) {
        drying.push_back(&point);
      }
    }
    DryMass dry;
    dry.specimen_id = id;
    dry.method = DryMassMethodText(job.dry_mass_method, job);
    const EquilibriumPoint* reference = nullptr;
    if (source.stated_mass_g) {
      dry.mass_g = *source.stated_mass_g;
      dry.stated = true;
      dry.method += ", stated in the job file";
    } else {
      for (const EquilibriumPoint* point : drying) {
        if (point->dataset_id == source.dataset_id && point->step_index == source.step_index) {
          reference = point;
        }
      }
      if (reference == nullptr) {
        throw InputError(SourceLocation{job.job_file.string(), 0, 0},
                         fmt::format("dry mass missing for specimen '{}'", id),
                         "dry_mass_g in its [[specimen]] entry or a drying step matching "
                         "dry_mass_method");
      }
    }
    if (reference != nullptr) {
      dry.mass_g = reference->mass_g;
      dry.dataset_id = reference->dataset_id;
      dry.step_index = reference->step_index;
      dry.equilibrated = reference->equilibrated;
      dry.u_mass_g = std::sqrt(
          reference->u_mass_extrapolation_g * reference->u_mass_extrapolation_g +
          reference->u_mass_extrapolation_model_g * reference->u_mass_extrapolation_model_g +
          reference->u_mass_approach_g * reference->u_mass_approach_g +
          reference->u_mass_approach_model_g * reference->u_mass_approach_model_g +
          reference->u_mass_drift_g * reference->u_mass_drift_g);
      dry.includes_weighing_scatter = reference->mass_includes_weighing_scatter;
      dry.u_mass_balance_g = reference->u_mass_balance_g;
      dry.degrees_of_freedom = reference->extrapolated ? reference->extrapolation_degrees_of_freedom
                                                       : reference->approach_degrees_of_freedom;
      dry.method += fmt::format(" ({} step {})", reference->dataset_id, reference->step_index + 1);
      if (!dry.equilibrated) {
        set.summary.warnings.push_back(Diagnostic{
            Severity::kWarning,
            reference->where,
            fmt::format("dry mass of specimen '{}' is from a step that did not reach constant mass",
                        id),
            {}});
      }
    }
    // Other drying steps of the same specimen: a change of dry mass means the material changed
    // (or was not dried to constant mass); worth a warning, not an error.
    for (const EquilibriumPoint* point : drying) {
      if (point == reference) continue;
      const double change = (point->mass_g - dry.mass_g) / dry.mass_g;
      // Compared with 0.1 %, the constant-mass limit of ISO 12571 / ISO 12570 (from memory).
      constexpr double kDryMassChangeWarning = 0.001;
      if (std::abs(change) > kDryMassChangeWarning) {
        set.summary.warnings.push_back(Diagnostic{
            Severity::kWarning,
            point->where,
            fmt::format(
                "specimen '{}': drying step {} differs from the dry reference mass by {:+.3f} %",
                id, point->step_index + 1, change * kPercent),
            {}});
      }
    }
    set.dry_masses.push_back(std::move(dry));
  }
}

}  // namespace

double BalanceStandardUncertainty_g(const ingest::JobSpec& job) {
  // Rectangular distribution of full width w: u = w / sqrt(12) (JCGM 100:2008, F.2.2.1).
  const double rounding = job.balance_resolution_g / std::sqrt(12.0);
  return std::sqrt(job.balance_standard_uncertainty_g * job.balance_standard_uncertainty_g +
                   rounding * rounding);
}

EquilibriumSet Equilibrate(const ingest::IngestResult& ingested,
                           const EquilibrateOptions& options) {
  std::string error;
  if (!options.IsValid(&error)) {
    throw InputError(SourceLocation{ingested.job.job_file.string(), 0, 0},
                     "invalid [equilibrium] options: " + error, "valid equilibrium options");
  }
  EquilibriumSet set;
  const ingest::JobSpec& job = ingested.job;
  // In job order: each data set's series or log.
  std::vector<bool> desiccator_done(ingested.desiccator_series.size(), false);
  std::vector<bool> log_done(ingested.vapor_logs.size(), false);
  auto run_dataset = [&](const std::string& id, const ingest::DataSetSpec* dataset) {
    for (std::size_t i = 0; i < ingested.desiccator_series.size(); ++i) {
      if (!desiccator_done[i] && ingested.desiccator_series[i].dataset_id == id) {
        desiccator_done[i] = true;
        EquilibrateDesiccator(ingested.desiccator_series[i], job, options, set);
      }
    }
    for (std::size_t i = 0; i < ingested.vapor_logs.size(); ++i) {
      if (!log_done[i] && ingested.vapor_logs[i].dataset_id == id) {
        log_done[i] = true;
        EquilibrateLog(ingested.vapor_logs[i], job, dataset, options, set);
      }
    }
  };
  for (const auto& dataset : job.datasets) run_dataset(dataset.id, &dataset);
  for (std::size_t i = 0; i < ingested.desiccator_series.size(); ++i) {
    if (!desiccator_done[i]) run_dataset(ingested.desiccator_series[i].dataset_id, nullptr);
  }
  for (std::size_t i = 0; i < ingested.vapor_logs.size(); ++i) {
    if (!log_done[i]) run_dataset(ingested.vapor_logs[i].dataset_id, nullptr);
  }
  FindDryMasses(ingested, set);
  return set;
}

}  // namespace sorbtrace::equilibrate
