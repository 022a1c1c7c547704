// Kelvin-Laplace equation, pore radius with an adsorbed film, capillary pressure and pF.

#include <fmt/format.h>

#include <cctype>
#include <cmath>
#include <stdexcept>
#include <string>

#include "pipeline/physics/physics.h"
#include "pipeline/physics/range_check.h"

namespace sorbtrace::physics {
namespace {

using internal::kLiquidRangeHigh_K;
using internal::kLiquidRangeLow_K;
using internal::RequireFinite;
using internal::RequireInOpenRange;
using internal::RequireInRange;

constexpr char kKelvinName[] = "the Kelvin equation";
constexpr char kCapillaryName[] = "the capillary pressure relation";
constexpr double kHalfPi = 1.57079632679489661923;  // pi / 2
// pF is log10 of the suction head in centimetres (Schofield 1935): 1 cm = 0.01 m.
constexpr double kPfReferenceHead_m = 0.01;
// Accepted pF range: pF 7 is about 1 GPa suction (RH ~ 0.0006 at room temperature), so -3..8
// covers everything from a saturated sample to an oven-dry one without overflow.
constexpr double kPfLow = -3.0;
constexpr double kPfHigh = 8.0;

void RequireTemperature(double temperature_K, const char* correlation) {
  RequireInRange("temperature", temperature_K, kLiquidRangeLow_K, kLiquidRangeHigh_K, "K",
                 correlation);
}

void RequireContactAngle(double contact_angle_rad) {
  // 0 <= theta < pi/2: a wetting liquid; at pi/2 the meniscus is flat.
  if (contact_angle_rad >= 0.0 && contact_angle_rad < kHalfPi) return;
  throw RangeError(fmt::format(
      "contact angle = {:g} rad is outside the valid range 0 <= contact angle < {:g} rad "
      "(pi/2) of {}",
      contact_angle_rad, kHalfPi, kKelvinName));
}

// 1 for a cylindrical meniscus (curvature 1/r), 2 for a hemispherical one (2/r).
double CurvatureFactor(Meniscus meniscus) {
  return meniscus == Meniscus::kHemispherical ? 2.0 : 1.0;
}

// k * gamma * V_m * cos(theta) / (R T) [m]: the Kelvin length for the meniscus.
double KelvinLength_m(double temperature_K, Meniscus meniscus, double contact_angle_rad) {
  return CurvatureFactor(meniscus) * SurfaceTension_N_per_m(temperature_K) *
         LiquidWaterMolarVolume_m3_per_mol(temperature_K) * std::cos(contact_angle_rad) /
         (kMolarGasConstant_J_per_mol_K * temperature_K);
}

// rho_w R T / M_w [Pa]: multiplies -ln(rh) to give the capillary pressure.
double CapillaryPressureScale_Pa(double temperature_K) {
  return LiquidWaterDensity_kg_per_m3(temperature_K) * kMolarGasConstant_J_per_mol_K *
         temperature_K / kMolarMassWater_kg_per_mol;
}

}  // namespace

std::string_view MeniscusName(Meniscus meniscus) {
  switch (meniscus) {
    case Meniscus::kHemispherical:
      return "hemispherical";
    case Meniscus::kCylindrical:
      return "cylindrical";
  }
  return "hemispherical";  // unreachable: all enumerators handled above
}

Meniscus ParseMeniscus(std::string_view name) {
  std::string lower(name);
  for (char& c : lower) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  if (lower == "hemispherical") return Meniscus::kHemispherical;
  if (lower == "cylindrical") return Meniscus::kCylindrical;
  throw std::invalid_argument(
      fmt::format("unknown meniscus '{}'; expected 'hemispherical' or 'cylindrical'", name));
}

double KelvinRadius_m(double rh_fraction, double temperature_K, Meniscus meniscus,
                      double contact_angle_rad) {
  RequireInOpenRange("relative humidity", rh_fraction, 0.0, 1.0, "", kKelvinName);
  RequireTemperature(temperature_K, kKelvinName);
  RequireContactAngle(contact_angle_rad);
  return KelvinLength_m(temperature_K, meniscus, contact_angle_rad) / -std::log(rh_fraction);
}

double RhForKelvinRadius(double kelvin_radius_m, double temperature_K, Meniscus meniscus,
                         double contact_angle_rad) {
  RequireInOpenRange("Kelvin radius", kelvin_radius_m, 0.0, HUGE_VAL, "m", kKelvinName);
  RequireTemperature(temperature_K, kKelvinName);
  RequireContactAngle(contact_angle_rad);
  return std::exp(-KelvinLength_m(temperature_K, meniscus, contact_angle_rad) / kelvin_radius_m);
}

double PoreRadius_m(double rh_fraction, double temperature_K, Meniscus meniscus,
                    double film_thickness_m, double contact_angle_rad) {
  RequireInRange("film thickness", film_thickness_m, 0.0, HUGE_VAL, "m", kKelvinName);
  return KelvinRadius_m(rh_fraction, temperature_K, meniscus, contact_angle_rad) + film_thickness_m;
}

double RhForPoreRadius(double pore_radius_m, double temperature_K, Meniscus meniscus,
                       double film_thickness_m, double contact_angle_rad) {
  RequireInOpenRange("pore radius", pore_radius_m, 0.0, HUGE_VAL, "m", kKelvinName);
  RequireInRange("film thickness", film_thickness_m, 0.0, HUGE_VAL, "m", kKelvinName);
  if (!(film_thickness_m < pore_radius_m)) {
    throw RangeError(fmt::format(
        "film thickness = {:g} m must be smaller than the pore radius {:g} m for {} (no core "
        "left for a meniscus)",
        film_thickness_m, pore_radius_m, kKelvinName));
  }
  return RhForKelvinRadius(pore_radius_m - film_thickness_m, temperature_K, meniscus,
                           contact_angle_rad);
}

double CapillaryPressure_Pa(double rh_fraction, double temperature_K) {
  // rh = 1 gives p_c = 0 (free water); rh = 0 would be infinite suction.
  if (!(rh_fraction > 0.0 && rh_fraction <= 1.0)) {
    throw RangeError(fmt::format(
        "relative humidity = {:g} is outside the valid range 0 < relative humidity <= 1 of {}",
        rh_fraction, kCapillaryName));
  }
  RequireTemperature(temperature_K, kCapillaryName);
  return -CapillaryPressureScale_Pa(temperature_K) * std::log(rh_fraction);
}

double RhFromCapillaryPressure(double capillary_pressure_Pa, double temperature_K) {
  RequireInRange("capillary pressure", capillary_pressure_Pa, 0.0, HUGE_VAL, "Pa", kCapillaryName);
  RequireTemperature(temperature_K, kCapillaryName);
  return std::exp(-capillary_pressure_Pa / CapillaryPressureScale_Pa(temperature_K));
}

double SuctionHead_m(double capillary_pressure_Pa, double temperature_K) {
  RequireInRange("capillary pressure", capillary_pressure_Pa, 0.0, HUGE_VAL, "Pa", kCapillaryName);
  RequireTemperature(temperature_K, kCapillaryName);
  return capillary_pressure_Pa /
         (LiquidWaterDensity_kg_per_m3(temperature_K) * kStandardGravity_m_per_s2);
}

double PF(double capillary_pressure_Pa, double temperature_K) {
  RequireInOpenRange("capillary pressure", capillary_pressure_Pa, 0.0, HUGE_VAL, "Pa",
                     "pF (log10 of the suction head in cm)");
  return std::log10(SuctionHead_m(capillary_pressure_Pa, temperature_K) / kPfReferenceHead_m);
}

double CapillaryPressureFromPF(double pf, double temperature_K) {
  RequireFinite("pF", pf, "", "pF (log10 of the suction head in cm)");
  RequireInRange("pF", pf, kPfLow, kPfHigh, "", "pF (log10 of the suction head in cm)");
  RequireTemperature(temperature_K, kCapillaryName);
  return std::pow(10.0, pf) * kPfReferenceHead_m * LiquidWaterDensity_kg_per_m3(temperature_K) *
         kStandardGravity_m_per_s2;
}

}  // namespace sorbtrace::physics
