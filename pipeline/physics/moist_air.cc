// Moist air: humidity conversions, dew point and frost point.

#include <fmt/format.h>

#include <cmath>
#include <string>

#include "pipeline/physics/physics.h"
#include "pipeline/physics/range_check.h"

namespace sorbtrace::physics {
namespace {

using internal::kLiquidRangeHigh_K;
using internal::kLiquidRangeLow_K;
using internal::RequireInRange;

constexpr char kMoistAirName[] = "the ideal-gas moist-air relations";
// Total pressures for which the ideal-gas humidity ratio is used [Pa]: well below and above
// one standard atmosphere (high altitude to mildly pressurised chambers).
constexpr double kTotalPressureLow_Pa = 10.0e3;
constexpr double kTotalPressureHigh_Pa = 1.0e6;
// Lowest temperature of the IAPWS R14-08 sublimation curve [K].
constexpr double kIceLow_K = 50.0;
// Convergence of the dew/frost point solve [K]: far below any measurement uncertainty.
constexpr double kSolveTolerance_K = 1e-9;
// Residual in ln(p) at which the solve stops early: 1e-14 relative in pressure.
constexpr double kSolveResidual = 1e-14;

void RequireAirTemperature(double temperature_K) {
  RequireInRange("temperature", temperature_K, kLiquidRangeLow_K, kLiquidRangeHigh_K, "K",
                 kMoistAirName);
}

void RequireRh(double rh_fraction) {
  RequireInRange("relative humidity", rh_fraction, 0.0, 1.0, "", kMoistAirName);
}

// 0 < rh <= 1: dry air has no dew or frost point.
void RequirePositiveRh(double rh_fraction, const char* quantity) {
  if (rh_fraction > 0.0 && rh_fraction <= 1.0) return;
  throw RangeError(fmt::format(
      "relative humidity = {:g} is outside the valid range 0 < relative humidity <= 1 of the {}",
      rh_fraction, quantity));
}

// Root of the increasing function f on [lower, upper] with f(lower) <= 0 <= f(upper), by
// the Illinois variant of regula falsi (always bracketed, superlinear convergence).
template <typename F>
double SolveIncreasing(F f, double lower, double upper) {
  double f_lower = f(lower);
  double f_upper = f(upper);
  if (f_lower == 0.0) return lower;
  if (f_upper == 0.0) return upper;
  int side = 0;
  for (int iteration = 0; iteration < 200 && upper - lower > kSolveTolerance_K; ++iteration) {
    double x = (lower * f_upper - upper * f_lower) / (f_upper - f_lower);
    if (!(x > lower && x < upper)) x = 0.5 * (lower + upper);
    const double f_x = f(x);
    if (std::abs(f_x) < kSolveResidual) return x;
    if (f_x < 0.0) {
      lower = x;
      f_lower = f_x;
      if (side == -1) f_upper *= 0.5;
      side = -1;
    } else {
      upper = x;
      f_upper = f_x;
      if (side == 1) f_lower *= 0.5;
      side = 1;
    }
  }
  return 0.5 * (lower + upper);
}

}  // namespace

double VapourPressure_Pa(double rh_fraction, double temperature_K) {
  RequireRh(rh_fraction);
  RequireAirTemperature(temperature_K);
  return rh_fraction * SaturationPressureOverWater_Pa(temperature_K);
}

double RhFromVapourPressure(double vapour_pressure_Pa, double temperature_K) {
  RequireAirTemperature(temperature_K);
  const double saturation_Pa = SaturationPressureOverWater_Pa(temperature_K);
  RequireInRange("vapour pressure", vapour_pressure_Pa, 0.0, saturation_Pa, "Pa",
                 fmt::format("{} (0 up to saturation at {:g} K)", kMoistAirName, temperature_K));
  return vapour_pressure_Pa / saturation_Pa;
}

double AbsoluteHumidity_g_per_m3(double rh_fraction, double temperature_K) {
  const double vapour_pressure_Pa = VapourPressure_Pa(rh_fraction, temperature_K);
  constexpr double kGramsPerKilogram = 1000.0;
  return kGramsPerKilogram * vapour_pressure_Pa * kMolarMassWater_kg_per_mol /
         (kMolarGasConstant_J_per_mol_K * temperature_K);
}

double RhFromAbsoluteHumidity(double absolute_humidity_g_per_m3, double temperature_K) {
  RequireAirTemperature(temperature_K);
  RequireInRange("absolute humidity", absolute_humidity_g_per_m3, 0.0,
                 AbsoluteHumidity_g_per_m3(1.0, temperature_K), "g/m3",
                 fmt::format("{} (0 up to saturation at {:g} K)", kMoistAirName, temperature_K));
  return absolute_humidity_g_per_m3 / AbsoluteHumidity_g_per_m3(1.0, temperature_K);
}

double HumidityRatio_kg_per_kg(double rh_fraction, double temperature_K, double total_pressure_Pa) {
  const double vapour_pressure_Pa = VapourPressure_Pa(rh_fraction, temperature_K);
  RequireInRange("total pressure", total_pressure_Pa, kTotalPressureLow_Pa, kTotalPressureHigh_Pa,
                 "Pa", kMoistAirName);
  if (!(total_pressure_Pa > vapour_pressure_Pa)) {
    throw RangeError(fmt::format(
        "total pressure = {:g} Pa must exceed the vapour pressure {:g} Pa for {} (humidity ratio)",
        total_pressure_Pa, vapour_pressure_Pa, kMoistAirName));
  }
  return kMolarMassRatioWaterToDryAir * vapour_pressure_Pa /
         (total_pressure_Pa - vapour_pressure_Pa);
}

double RhFromHumidityRatio(double humidity_ratio_kg_per_kg, double temperature_K,
                           double total_pressure_Pa) {
  RequireAirTemperature(temperature_K);
  RequireInRange("total pressure", total_pressure_Pa, kTotalPressureLow_Pa, kTotalPressureHigh_Pa,
                 "Pa", kMoistAirName);
  RequireInRange("humidity ratio", humidity_ratio_kg_per_kg, 0.0, HUGE_VAL, "kg/kg", kMoistAirName);
  const double vapour_pressure_Pa = humidity_ratio_kg_per_kg * total_pressure_Pa /
                                    (kMolarMassRatioWaterToDryAir + humidity_ratio_kg_per_kg);
  return RhFromVapourPressure(vapour_pressure_Pa, temperature_K);
}

double DewPoint_K(double rh_fraction, double temperature_K) {
  RequireAirTemperature(temperature_K);
  RequirePositiveRh(rh_fraction, "dew point");
  const double vapour_pressure_Pa = VapourPressure_Pa(rh_fraction, temperature_K);
  const double lowest_Pa = SaturationPressureOverWater_Pa(kLiquidRangeLow_K);
  if (vapour_pressure_Pa < lowest_Pa) {
    throw RangeError(fmt::format(
        "dew point: vapour pressure {:g} Pa (relative humidity {:g} at {:g} K) is below the "
        "saturation pressure at {:g} K ({:g} Pa); the dew point would lie below the valid range "
        "of the IAPWS SR1-86 equation, use the frost point",
        vapour_pressure_Pa, rh_fraction, temperature_K, kLiquidRangeLow_K, lowest_Pa));
  }
  if (rh_fraction == 1.0) return temperature_K;
  const double log_target = std::log(vapour_pressure_Pa);
  return SolveIncreasing(
      [log_target](double t_K) {
        return std::log(SaturationPressureOverWater_Pa(t_K)) - log_target;
      },
      kLiquidRangeLow_K, temperature_K);
}

double FrostPoint_K(double rh_fraction, double temperature_K) {
  RequireAirTemperature(temperature_K);
  RequirePositiveRh(rh_fraction, "frost point");
  const double vapour_pressure_Pa = VapourPressure_Pa(rh_fraction, temperature_K);
  const double triple_Pa = SaturationPressureOverIce_Pa(kTriplePoint_K);
  if (vapour_pressure_Pa > triple_Pa) {
    throw RangeError(fmt::format(
        "frost point: vapour pressure {:g} Pa (relative humidity {:g} at {:g} K) exceeds the "
        "triple-point pressure {:g} Pa; the frost point would lie above 273.16 K, use the dew "
        "point",
        vapour_pressure_Pa, rh_fraction, temperature_K, triple_Pa));
  }
  const double lowest_Pa = SaturationPressureOverIce_Pa(kIceLow_K);
  if (vapour_pressure_Pa < lowest_Pa) {
    throw RangeError(fmt::format(
        "frost point: vapour pressure {:g} Pa is below the sublimation pressure at {:g} K, the "
        "lower end of the IAPWS R14-08 equation",
        vapour_pressure_Pa, kIceLow_K));
  }
  const double log_target = std::log(vapour_pressure_Pa);
  return SolveIncreasing(
      [log_target](double t_K) { return std::log(SaturationPressureOverIce_Pa(t_K)) - log_target; },
      kIceLow_K, kTriplePoint_K);
}

}  // namespace sorbtrace::physics
