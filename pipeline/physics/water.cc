// Water substance: saturation pressure over liquid and ice, liquid density, surface tension.

#include <array>
#include <cmath>

#include "pipeline/physics/physics.h"
#include "pipeline/physics/range_check.h"

namespace sorbtrace::physics {
namespace {

using internal::RequireInRange;

// IAPWS SR1-86(1992) Eq. 1 = Wagner & Pruss (2002) JPCRD 31, 387, Eq. 2.5:
// ln(p_s / p_c) = (T_c / T) * sum_i a_i * v^e_i, v = 1 - T / T_c.
constexpr std::array<double, 6> kWagnerA = {-7.85951783, 1.84408259,  -11.7866497,
                                            22.6807411,  -15.9618719, 1.80122502};
constexpr std::array<double, 6> kWagnerE = {1.0, 1.5, 3.0, 3.5, 4.0, 7.5};
// Lower end: 0.01 K below the triple point (0 degC), a harmless extrapolation.
constexpr double kWagnerLow_K = 273.15;
constexpr char kWagnerName[] = "the IAPWS SR1-86 saturation pressure over liquid water";

// IAPWS R14-08(2011) Eq. 6: ln(p / p_t) = theta^-1 * sum_i a_i theta^b_i, theta = T / T_t.
constexpr std::array<double, 3> kIceA = {-0.212144006e2, 0.273203819e2, -0.610598130e1};
constexpr std::array<double, 3> kIceB = {0.333333333e-2, 0.120666667e1, 0.170333333e1};
constexpr double kTriplePointPressure_Pa = 611.657;  // IAPWS R14-08 p_t
constexpr double kIceLow_K = 50.0;                   // IAPWS R14-08 validity
constexpr char kIceName[] = "the IAPWS R14-08 sublimation pressure over ice Ih";

// Kell (1975) J. Chem. Eng. Data 20, 97: density of air-free water at 1 atm, ITS
// temperature t in degC, 0 .. 150 degC.
constexpr std::array<double, 6> kKellNumerator = {999.83952,     16.945176,    -7.9870401e-3,
                                                  -46.170461e-6, 105.56302e-9, -280.54253e-12};
constexpr double kKellDenominator = 16.879850e-3;
constexpr double kKellLow_K = 273.15;
constexpr double kKellHigh_K = 423.15;
constexpr char kKellName[] = "the Kell (1975) liquid water density";

// IAPWS R1-76(2014): sigma = B tau^mu (1 + b tau), tau = 1 - T / T_c.
constexpr double kSurfaceTensionB_N_per_m = 235.8e-3;
constexpr double kSurfaceTensionSmallB = -0.625;
constexpr double kSurfaceTensionMu = 1.256;
// The release states the equation is reasonable for supercooled water to at least -25 degC.
constexpr double kSurfaceTensionLow_K = 248.15;
constexpr char kSurfaceTensionName[] = "the IAPWS R1-76(2014) surface tension of water";

}  // namespace

double SaturationPressureOverWater_Pa(double temperature_K) {
  RequireInRange("temperature", temperature_K, kWagnerLow_K, kCriticalTemperature_K, "K",
                 kWagnerName);
  const double v = 1.0 - temperature_K / kCriticalTemperature_K;
  double sum = 0.0;
  for (std::size_t i = 0; i < kWagnerA.size(); ++i) sum += kWagnerA[i] * std::pow(v, kWagnerE[i]);
  return kCriticalPressure_Pa * std::exp(kCriticalTemperature_K / temperature_K * sum);
}

double SaturationPressureOverIce_Pa(double temperature_K) {
  RequireInRange("temperature", temperature_K, kIceLow_K, kTriplePoint_K, "K", kIceName);
  const double theta = temperature_K / kTriplePoint_K;
  double sum = 0.0;
  for (std::size_t i = 0; i < kIceA.size(); ++i) sum += kIceA[i] * std::pow(theta, kIceB[i]);
  return kTriplePointPressure_Pa * std::exp(sum / theta);
}

double LiquidWaterDensity_kg_per_m3(double temperature_K) {
  RequireInRange("temperature", temperature_K, kKellLow_K, kKellHigh_K, "K", kKellName);
  const double t = KelvinToCelsius(temperature_K);
  double numerator = 0.0;
  for (std::size_t i = kKellNumerator.size(); i-- > 0;)
    numerator = numerator * t + kKellNumerator[i];
  return numerator / (1.0 + kKellDenominator * t);
}

double LiquidWaterMolarVolume_m3_per_mol(double temperature_K) {
  return kMolarMassWater_kg_per_mol / LiquidWaterDensity_kg_per_m3(temperature_K);
}

double SurfaceTension_N_per_m(double temperature_K) {
  RequireInRange("temperature", temperature_K, kSurfaceTensionLow_K, kCriticalTemperature_K, "K",
                 kSurfaceTensionName);
  const double tau = 1.0 - temperature_K / kCriticalTemperature_K;
  return kSurfaceTensionB_N_per_m * std::pow(tau, kSurfaceTensionMu) *
         (1.0 + kSurfaceTensionSmallB * tau);
}

}  // namespace sorbtrace::physics
