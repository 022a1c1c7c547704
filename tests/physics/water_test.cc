// Water substance properties against published check values.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::physics {
namespace {

double K(double temperature_C) { return CelsiusToKelvin(temperature_C); }

// Relative difference |a - b| / |b|.
double RelativeError(double a, double b) { return std::abs(a - b) / std::abs(b); }

TEST(SaturationPressureOverWater, EquationCheckValues) {
  // Values of IAPWS SR1-86(1992) Eq. 1 (Wagner & Pruss 2002, JPCRD 31, Eq. 2.5), evaluated
  // independently from the published coefficients; 6 significant digits.
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(0.0)), 611.21), 1e-5);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(20.0)), 2339.19), 1e-5);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(25.0)), 3169.82), 1e-5);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(50.0)), 12352.48), 1e-5);
}

TEST(SaturationPressureOverWater, SteamTableValues) {
  // IAPWS-95 saturation pressures as printed in steam tables (5 significant digits), from
  // memory: 2.3392 kPa at 20 degC, 3.1699 kPa at 25 degC, 12.352 kPa at 50 degC,
  // 101.42 kPa at 100 degC. The auxiliary equation agrees with IAPWS-95 to a few 1e-5.
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(20.0)), 2339.2), 1e-4);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(25.0)), 3169.9), 1e-4);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(50.0)), 12352.0), 1e-4);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(K(100.0)), 101420.0), 1e-4);
}

TEST(SaturationPressureOverWater, Iapws95SaturationCheckValues) {
  // IAPWS-95 release (2018 revision), Table 8 saturation check values, from memory:
  // 275 K: 0.698451167e-3 MPa; 450 K: 0.932203564 MPa; 625 K: 0.169082693e2 MPa.
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(275.0), 698.451167), 1e-4);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(450.0), 932203.564), 1e-4);
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(625.0), 16908269.3), 1e-4);
}

TEST(SaturationPressureOverWater, TriplePoint) {
  // 611.657 Pa at the triple point: A. Wexler, J. Res. NBS 80A (1976) 775.
  EXPECT_LT(RelativeError(SaturationPressureOverWater_Pa(kTriplePoint_K), 611.657), 1e-5);
}

TEST(SaturationPressureOverWater, RangeErrorsNameTheQuantity) {
  try {
    SaturationPressureOverWater_Pa(K(-10.0));
    FAIL() << "expected RangeError";
  } catch (const RangeError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("temperature = 263.15 K"), std::string::npos) << message;
    EXPECT_NE(message.find("273.15 .. 647.096 K"), std::string::npos) << message;
    EXPECT_NE(message.find("SR1-86"), std::string::npos) << message;
  }
  EXPECT_THROW(SaturationPressureOverWater_Pa(700.0), RangeError);
  EXPECT_THROW(SaturationPressureOverWater_Pa(std::numeric_limits<double>::quiet_NaN()),
               RangeError);
}

TEST(SaturationPressureOverIce, CheckValues) {
  // IAPWS R14-08(2011), check value of the release: 8.94735 Pa at 230 K.
  EXPECT_LT(RelativeError(SaturationPressureOverIce_Pa(230.0), 8.94735), 1e-6);
  // IAPWS R14-08: the sublimation curve ends at the triple point p_t = 611.657 Pa.
  EXPECT_LT(RelativeError(SaturationPressureOverIce_Pa(kTriplePoint_K), 611.657), 1e-9);
  // Vapour pressure over ice at -20 degC, about 103.2 Pa (psychrometric tables, e.g. ASHRAE
  // Handbook Fundamentals ch. 1; from memory).
  EXPECT_NEAR(SaturationPressureOverIce_Pa(K(-20.0)), 103.2, 0.1);
  EXPECT_THROW(SaturationPressureOverIce_Pa(K(5.0)), RangeError);
  EXPECT_THROW(SaturationPressureOverIce_Pa(40.0), RangeError);
}

TEST(SaturationPressure, IceBelowLiquidUnderTheTriplePoint) {
  // Ice is the stable phase below 0 degC, so its vapour pressure is lower than that of
  // (supercooled) liquid at the same temperature; both agree at the triple point.
  EXPECT_LT(SaturationPressureOverIce_Pa(K(0.0)), SaturationPressureOverWater_Pa(K(0.0)));
  EXPECT_NEAR(SaturationPressureOverIce_Pa(kTriplePoint_K),
              SaturationPressureOverWater_Pa(kTriplePoint_K), 0.01);
}

TEST(LiquidWaterDensity, AgreesWithTanaka2001Reference) {
  // M. Tanaka et al., Metrologia 38 (2001) 301, recommended table (SMOW, air-free, 101.325 kPa):
  // 998.2067 kg/m3 at 20 degC and 997.0470 kg/m3 at 25 degC. Kell (1975) agrees to 0.01 kg/m3.
  EXPECT_NEAR(LiquidWaterDensity_kg_per_m3(K(20.0)), 998.2067, 0.01);
  EXPECT_NEAR(LiquidWaterDensity_kg_per_m3(K(25.0)), 997.0470, 0.01);
}

TEST(LiquidWaterDensity, KellCheckValues) {
  // G. S. Kell, J. Chem. Eng. Data 20 (1975) 97: 999.8395 kg/m3 at 0 degC (the leading
  // coefficient) and 997.0449 kg/m3 at 25 degC.
  EXPECT_NEAR(LiquidWaterDensity_kg_per_m3(K(0.0)), 999.8395, 1e-3);
  EXPECT_NEAR(LiquidWaterDensity_kg_per_m3(K(25.0)), 997.0449, 1e-3);
  // IAPWS-95 at 0.101325 MPa and 50 degC: 988.03 kg/m3 (from memory).
  EXPECT_NEAR(LiquidWaterDensity_kg_per_m3(K(50.0)), 988.03, 0.01);
  // Molar volume at 25 degC: M_w / rho = 18.015268 g/mol / 997.045 kg/m3 = 18.0687 cm3/mol.
  EXPECT_NEAR(LiquidWaterMolarVolume_m3_per_mol(K(25.0)) * 1e6, 18.0687, 1e-3);
  EXPECT_THROW(LiquidWaterDensity_kg_per_m3(K(-1.0)), RangeError);
  EXPECT_THROW(LiquidWaterDensity_kg_per_m3(K(151.0)), RangeError);
}

TEST(SurfaceTension, IapwsTableValues) {
  // IAPWS R1-76(2014) table of recommended values, mN/m (from memory): 75.65 at 0.01 degC,
  // 72.74 at 20 degC, 71.97 at 25 degC, 67.94 at 50 degC, 58.91 at 100 degC. Values are
  // rounded to 0.01 mN/m, so the tolerance is half a unit plus margin.
  EXPECT_NEAR(SurfaceTension_N_per_m(kTriplePoint_K) * 1e3, 75.65, 0.006);
  EXPECT_NEAR(SurfaceTension_N_per_m(K(20.0)) * 1e3, 72.74, 0.006);
  EXPECT_NEAR(SurfaceTension_N_per_m(K(25.0)) * 1e3, 71.97, 0.006);
  EXPECT_NEAR(SurfaceTension_N_per_m(K(50.0)) * 1e3, 67.94, 0.006);
  EXPECT_NEAR(SurfaceTension_N_per_m(K(100.0)) * 1e3, 58.91, 0.006);
}

TEST(SurfaceTension, Range) {
  // IAPWS R1-76(2014): reasonable for supercooled water down to at least -25 degC.
  EXPECT_GT(SurfaceTension_N_per_m(K(-25.0)), SurfaceTension_N_per_m(K(0.0)));
  EXPECT_THROW(SurfaceTension_N_per_m(K(-30.0)), RangeError);
  EXPECT_THROW(SurfaceTension_N_per_m(650.0), RangeError);
}

}  // namespace
}  // namespace sorbtrace::physics
