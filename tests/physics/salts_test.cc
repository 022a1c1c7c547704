// Saturated salt solutions against Greenspan (1977), J. Res. NBS 81A, 89-96.
//
// Greenspan's Table 2 lists the fitted RH truncated (not rounded) to 0.01 %RH, so values are
// compared with a tolerance of 0.01 %RH.

#include <gtest/gtest.h>

#include <cmath>
#include <stdexcept>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::physics {
namespace {

double K(double temperature_C) { return CelsiusToKelvin(temperature_C); }
double RhPercent(const char* salt, double temperature_C) {
  return 100.0 * SaltSolutionHumidity(salt, K(temperature_C)).rh_fraction;
}

struct TableValue {
  const char* salt;
  double temperature_C;
  double rh_percent;
};

TEST(SaltSolutionHumidity, AnchorsAt25C) {
  // Greenspan (1977) Table 2 at 25 degC, the universally cited values. These anchor the
  // signs of the coefficients, which some reprints of the paper print wrongly.
  const TableValue kAnchors[] = {
      {"LiCl", 25, 11.30},     {"CH3COOK", 25, 22.51}, {"MgCl2", 25, 32.78}, {"K2CO3", 25, 43.16},
      {"Mg(NO3)2", 25, 52.89}, {"NaBr", 25, 57.57},    {"NaCl", 25, 75.29},  {"KCl", 25, 84.34},
      {"KNO3", 25, 93.58},     {"K2SO4", 25, 97.30},
  };
  for (const TableValue& v : kAnchors) {
    EXPECT_NEAR(RhPercent(v.salt, v.temperature_C), v.rh_percent, 0.01) << v.salt;
  }
}

TEST(SaltSolutionHumidity, TableAtSeveralTemperatures) {
  // Greenspan (1977) Table 2 (values at 10, 20, 30 and 40 degC; from memory).
  const TableValue kTable[] = {
      {"LiCl", 10, 11.29},     {"LiCl", 20, 11.31},     {"LiCl", 30, 11.28},
      {"LiCl", 40, 11.21},     {"CH3COOK", 10, 23.38},  {"CH3COOK", 20, 23.11},
      {"CH3COOK", 30, 21.61},  {"MgCl2", 10, 33.47},    {"MgCl2", 20, 33.07},
      {"MgCl2", 30, 32.44},    {"MgCl2", 40, 31.60},    {"K2CO3", 10, 43.14},
      {"K2CO3", 20, 43.16},    {"K2CO3", 30, 43.17},    {"Mg(NO3)2", 10, 57.36},
      {"Mg(NO3)2", 20, 54.38}, {"Mg(NO3)2", 30, 51.40}, {"Mg(NO3)2", 40, 48.42},
      {"NaBr", 10, 62.15},     {"NaBr", 20, 59.14},     {"NaBr", 40, 53.17},
      {"NaCl", 10, 75.67},     {"NaCl", 20, 75.47},     {"NaCl", 30, 75.09},
      {"NaCl", 40, 74.68},     {"KCl", 10, 86.77},      {"KCl", 20, 85.11},
      {"KCl", 30, 83.62},      {"KCl", 40, 82.32},      {"KNO3", 10, 95.96},
      {"KNO3", 20, 94.62},     {"KNO3", 30, 92.31},     {"KNO3", 40, 89.03},
      {"K2SO4", 10, 98.18},    {"K2SO4", 20, 97.59},    {"K2SO4", 30, 97.00},
      {"K2SO4", 40, 96.41},
  };
  for (const TableValue& v : kTable) {
    EXPECT_NEAR(RhPercent(v.salt, v.temperature_C), v.rh_percent, 0.01)
        << v.salt << " at " << v.temperature_C << " degC";
  }
}

TEST(SaltSolutionHumidity, AgreesWithCrcExponentialFit) {
  // CRC Handbook of Chemistry and Physics, "Constant humidity solutions" (A. Wexler):
  // RH = A exp(B / T), "generally accurate to +/-2 %". At 20 degC:
  struct Crc {
    const char* salt;
    double a_percent;
    double b_K;
  };
  const Crc kCrc[] = {{"LiCl", 14.53, -75}, {"MgCl2", 29.26, 34}, {"Mg(NO3)2", 25.28, 220},
                      {"NaBr", 20.49, 308}, {"NaCl", 69.20, 25},  {"KCl", 49.38, 159},
                      {"KNO3", 43.22, 225}, {"K2SO4", 86.75, 34}};
  for (const Crc& c : kCrc) {
    const double crc_percent = c.a_percent * std::exp(c.b_K / K(20.0));
    EXPECT_NEAR(RhPercent(c.salt, 20.0), crc_percent, 2.0) << c.salt;
  }
}

TEST(SaltSolutionHumidity, NaBrIsInterpolatedLinearly) {
  // Halfway between Greenspan's 20 and 25 degC entries (59.14 and 57.57 %RH).
  EXPECT_NEAR(RhPercent("NaBr", 22.5), 0.5 * (59.14 + 57.57), 1e-9);
  // Temperature coefficient is the slope of that table segment: -1.57 %RH / 5 K.
  EXPECT_NEAR(SaltSolutionHumidity("NaBr", K(22.5)).drh_dT_per_K, -0.0157 / 5.0, 1e-12);
}

TEST(SaltSolutionHumidity, StandardUncertainty) {
  // Greenspan (1977) Table 2 estimated uncertainty of NaCl at 25 degC: +/-0.12 %RH (from
  // memory), taken as expanded with k = 2 (assumption, from memory): u = 0.06 %RH.
  EXPECT_NEAR(SaltSolutionHumidity("NaCl", K(25.0)).standard_uncertainty_fraction, 0.0006, 1e-12);
  // KCl at 20 degC: +/-0.29 %RH -> u = 0.145 %RH (same provenance).
  EXPECT_NEAR(SaltSolutionHumidity("KCl", K(20.0)).standard_uncertainty_fraction, 0.00145, 1e-12);
  // Linear in temperature between the 5 degC entries: NaCl 20 degC +/-0.14, 25 degC +/-0.12.
  EXPECT_NEAR(SaltSolutionHumidity("NaCl", K(22.5)).standard_uncertainty_fraction,
              0.5 * (0.0014 + 0.0012) / 2.0, 1e-12);
}

TEST(SaltSolutionHumidity, TemperatureCoefficient) {
  // The derivative of the fit agrees with the slope of Greenspan's table across 20..30 degC:
  // NaCl (75.09 - 75.47) / 10 K = -0.038 %RH/K, KCl (83.62 - 85.11) / 10 K = -0.149 %RH/K.
  EXPECT_NEAR(SaltSolutionHumidity("NaCl", K(25.0)).drh_dT_per_K, -0.00038, 0.00005);
  EXPECT_NEAR(SaltSolutionHumidity("KCl", K(25.0)).drh_dT_per_K, -0.00149, 0.00005);
  // And with a central difference of the returned RH (consistency of the derivative).
  for (const std::string& salt : KnownSalts()) {
    const double t_K = K(23.3);
    const double h = 1e-3;
    const double numeric = (SaltSolutionHumidity(salt, t_K + h).rh_fraction -
                            SaltSolutionHumidity(salt, t_K - h).rh_fraction) /
                           (2.0 * h);
    EXPECT_NEAR(SaltSolutionHumidity(salt, t_K).drh_dT_per_K, numeric, 1e-8) << salt;
  }
}

TEST(SaltSolutionHumidity, LookupAndRanges) {
  EXPECT_EQ(KnownSalts().size(), 10u);
  EXPECT_EQ(CanonicalSaltName("nacl"), "NaCl");
  EXPECT_EQ(CanonicalSaltName("MG(no3)2"), "Mg(NO3)2");
  EXPECT_DOUBLE_EQ(RhPercent("nacl", 25.0), RhPercent("NaCl", 25.0));
  const auto [low_K, high_K] = SaltTemperatureRange_K("NaCl");
  EXPECT_DOUBLE_EQ(low_K, K(0.0));
  EXPECT_DOUBLE_EQ(high_K, K(80.0));
  EXPECT_NE(SaltHumidityMethod("NaBr").find("interpolation"), std::string::npos);
  EXPECT_NE(SaltHumidityMethod("NaCl").find("polynomial"), std::string::npos);

  try {
    SaltSolutionHumidity("NaCl", K(90.0));
    FAIL() << "expected RangeError";
  } catch (const RangeError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("temperature = 363.15 K"), std::string::npos) << message;
    EXPECT_NE(message.find("NaCl"), std::string::npos) << message;
  }
  EXPECT_THROW(SaltSolutionHumidity("CH3COOK", K(35.0)), RangeError);
  EXPECT_THROW(SaltSolutionHumidity("NaBr", K(5.0)), RangeError);
  try {
    SaltSolutionHumidity("NaI", K(25.0));
    FAIL() << "expected std::invalid_argument";
  } catch (const std::invalid_argument& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("unknown salt 'NaI'"), std::string::npos) << message;
    EXPECT_NE(message.find("K2SO4"), std::string::npos) << message;
  }
  EXPECT_THROW(SaltTemperatureRange_K("sugar"), std::invalid_argument);
}

}  // namespace
}  // namespace sorbtrace::physics
