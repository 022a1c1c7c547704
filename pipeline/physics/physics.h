// Physical properties of water and moist air, the Kelvin-Laplace equation and the
// saturated-salt humidity references. SI units throughout, units in every name.
// Every function documents its validity range and throws physics::RangeError outside it.
//
// Used by every later stage: ingest (salt humidities), reduce (RH uncertainty vs
// temperature), fitters (RH -> capillary pressure for retention models), pores
// (Kelvin inversion).
#pragma once

#include <stdexcept>
#include <string>
#include <string_view>
#include <utility>
#include <vector>

namespace sorbtrace::physics {

// Thrown when an argument lies outside the documented validity range of a correlation.
// The message names the quantity, its value and the valid range.
class RangeError : public std::domain_error {
 public:
  using std::domain_error::domain_error;
};

// ---- Constants -------------------------------------------------------------------------
inline constexpr double kZeroCelsius_K = 273.15;                      // ITS-90 definition offset
inline constexpr double kTriplePoint_K = 273.16;                      // IAPWS
inline constexpr double kCriticalTemperature_K = 647.096;             // IAPWS-95
inline constexpr double kCriticalPressure_Pa = 22.064e6;              // IAPWS-95
inline constexpr double kMolarGasConstant_J_per_mol_K = 8.314462618;  // CODATA 2018, exact
inline constexpr double kMolarMassWater_kg_per_mol = 18.015268e-3;    // IAPWS-95
inline constexpr double kAvogadro_per_mol = 6.02214076e23;            // SI 2019, exact
inline constexpr double kStandardGravity_m_per_s2 = 9.80665;          // CGPM 1901
inline constexpr double kStandardAtmosphere_Pa = 101325.0;            // ISO 2533
inline constexpr double kMolarMassRatioWaterToDryAir = 0.621945;      // ASHRAE Fundamentals ch. 1

// ---- Unit factors (SI Brochure, 9th ed. 2019: definitions of the units, exact) ------------
// value_in_SI = value_in_unit * factor; e.g. rh_fraction = rh_percent / kPercent.
inline constexpr double kPercent = 100.0;                         // 1 = 100 %
inline constexpr double kSecondsPerMinute = 60.0;                 // min
inline constexpr double kSecondsPerHour = 3600.0;                 // h
inline constexpr double kSecondsPerDay = 86400.0;                 // d
inline constexpr double kMetresPerNanometre = 1e-9;               // nm
inline constexpr double kSquareMetresPerSquareNanometre = 1e-18;  // nm^2
inline constexpr double kPi = 3.14159265358979323846;             // pi to double precision
inline constexpr double kRadiansPerDegree = kPi / 180.0;          // degree (plane angle)

inline double CelsiusToKelvin(double temperature_C) { return temperature_C + kZeroCelsius_K; }
inline double KelvinToCelsius(double temperature_K) { return temperature_K - kZeroCelsius_K; }

// ---- Water substance -------------------------------------------------------------------
// Saturation vapour pressure over liquid water, IAPWS SR1-86(1992) / Wagner & Pruss (2002)
// Eq. 2.5. Valid 273.15 K (0.01 K extrapolation below the triple point) .. 647.096 K.
double SaturationPressureOverWater_Pa(double temperature_K);

// Sublimation pressure over ice Ih, IAPWS R14-08(2011) Eq. 6. Valid 50 K .. 273.16 K.
double SaturationPressureOverIce_Pa(double temperature_K);

// Liquid water density at 0.101325 MPa, Kell (1975) J. Chem. Eng. Data 20, 97. Valid 0..150 degC.
double LiquidWaterDensity_kg_per_m3(double temperature_K);

// Molar volume of liquid water M_w / rho_w [m3/mol], same validity as the density.
double LiquidWaterMolarVolume_m3_per_mol(double temperature_K);

// Surface tension of water against its vapour, IAPWS R1-76(2014). Valid 273.16 K .. 647.096 K
// (and, per the release, reasonable down to 248.15 K for supercooled water; accepted down to 248.15
// K).
double SurfaceTension_N_per_m(double temperature_K);

// ---- Moist air -------------------------------------------------------------------------
// All take rh_fraction in [0, 1] (vapour pressure relative to saturation over liquid water,
// the WMO definition) and the air temperature. Ideal-gas vapour; enhancement factor taken as 1.
double VapourPressure_Pa(double rh_fraction, double temperature_K);
double RhFromVapourPressure(double vapour_pressure_Pa, double temperature_K);
// Water vapour mass concentration rho_v = p_v M_w / (R T) [g/m3].
double AbsoluteHumidity_g_per_m3(double rh_fraction, double temperature_K);
double RhFromAbsoluteHumidity(double absolute_humidity_g_per_m3, double temperature_K);
// Humidity ratio (mixing ratio) W = 0.621945 p_v / (p - p_v) [kg water / kg dry air].
double HumidityRatio_kg_per_kg(double rh_fraction, double temperature_K, double total_pressure_Pa);
double RhFromHumidityRatio(double humidity_ratio_kg_per_kg, double temperature_K,
                           double total_pressure_Pa);
// Dew point over liquid water (inverse of SaturationPressureOverWater_Pa) [K]; throws if
// the dew point would fall below 273.15 K (use FrostPoint_K there).
double DewPoint_K(double rh_fraction, double temperature_K);
// Frost point over ice [K]; for dew points below 273.16 K.
double FrostPoint_K(double rh_fraction, double temperature_K);

// ---- Kelvin-Laplace --------------------------------------------------------------------
// Meniscus shape in a pore of radius r:
//  kHemispherical: curvature 2/r (both principal radii r): the closed end of a pore, and the
//                  receding meniscus when an open pore empties (desorption).
//  kCylindrical:   curvature 1/r (one principal radius infinite): the film-lined wall of an
//                  open-ended pore filling on adsorption (Cohan 1938).
enum class Meniscus { kHemispherical, kCylindrical };
std::string_view MeniscusName(Meniscus meniscus);  // "hemispherical" / "cylindrical"
Meniscus ParseMeniscus(std::string_view name);     // throws std::invalid_argument

// Kelvin radius r_K at which a meniscus of the given shape is in equilibrium with vapour at
// rh_fraction: r_K = k * gamma * V_m * cos(theta) / (R T ln(1/rh)), k = 2 (hemispherical) or
// 1 (cylindrical). Valid 0 < rh < 1, 273.15..373.15 K, 0 <= contact angle < pi/2.
double KelvinRadius_m(double rh_fraction, double temperature_K, Meniscus meniscus,
                      double contact_angle_rad = 0.0);
// Inverse: the RH at which a meniscus of Kelvin radius r_K is in equilibrium.
double RhForKelvinRadius(double kelvin_radius_m, double temperature_K, Meniscus meniscus,
                         double contact_angle_rad = 0.0);

// Pore radius that fills/empties at rh_fraction: r_p = r_K(rh) + t, with an adsorbed film of
// thickness t already on the wall.
double PoreRadius_m(double rh_fraction, double temperature_K, Meniscus meniscus,
                    double film_thickness_m, double contact_angle_rad = 0.0);
// Inverse for a constant film: RH at which a pore of radius r_p fills/empties. Throws
// RangeError if the film is as thick as the pore (film_thickness_m >= pore_radius_m).
double RhForPoreRadius(double pore_radius_m, double temperature_K, Meniscus meniscus,
                       double film_thickness_m, double contact_angle_rad = 0.0);

// Capillary pressure (suction, positive) of pore water in equilibrium with rh_fraction:
// p_c = -(rho_w R T / M_w) ln(rh). The liquid pressure (tension) is minus this.
// Valid 0 < rh <= 1, 273.15..373.15 K.
double CapillaryPressure_Pa(double rh_fraction, double temperature_K);
double RhFromCapillaryPressure(double capillary_pressure_Pa, double temperature_K);
// Suction head h = p_c / (rho_w g) [m] and pF = log10(h / 1 cm).
double SuctionHead_m(double capillary_pressure_Pa, double temperature_K);
double PF(double capillary_pressure_Pa, double temperature_K);
double CapillaryPressureFromPF(double pf, double temperature_K);

// ---- Saturated salt solutions ----------------------------------------------------------
// Equilibrium RH above a saturated aqueous salt solution, Greenspan (1977),
// J. Res. NBS 81A, 89-96: value from the published fit, standard uncertainty from the
// published table, interpolated in temperature.
struct SaltHumidity {
  double rh_fraction = 0.0;
  double standard_uncertainty_fraction = 0.0;  // standard uncertainty (k = 1)
  double drh_dT_per_K = 0.0;                   // temperature coefficient d(rh)/dT [1/K]
};

// `salt` is a formula as written in the table ("LiCl", "CH3COOK", "MgCl2", "K2CO3",
// "Mg(NO3)2", "NaBr", "NaCl", "KCl", "KNO3", "K2SO4"; lookup ignores case).
// Throws std::invalid_argument for an unknown salt (message lists the known ones) and
// RangeError outside the salt's tabulated temperature range.
SaltHumidity SaltSolutionHumidity(std::string_view salt, double temperature_K);
std::vector<std::string> KnownSalts();
// Tabulated validity range of a salt [K]; throws std::invalid_argument if unknown.
std::pair<double, double> SaltTemperatureRange_K(std::string_view salt);
// Canonical spelling of a salt as listed by KnownSalts() (lookup ignores case); throws
// std::invalid_argument if unknown.
std::string CanonicalSaltName(std::string_view salt);
// How SaltSolutionHumidity obtains the value for `salt` (the publication and whether the fit
// or the interpolated table is used), for reports; throws std::invalid_argument if unknown.
std::string SaltHumidityMethod(std::string_view salt);

}  // namespace sorbtrace::physics
