// Moist-air conversions against psychrometric tables, and their round trips.

#include <gtest/gtest.h>

#include <cmath>
#include <limits>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::physics {
namespace {

double K(double temperature_C) { return CelsiusToKelvin(temperature_C); }

TEST(DewPoint, PsychrometricTableExample) {
  // Dew point of air at 23 degC / 50 % RH: 12.0 degC (ASHRAE Handbook Fundamentals ch. 1,
  // psychrometric table values; from memory).
  EXPECT_NEAR(KelvinToCelsius(DewPoint_K(0.50, K(23.0))), 12.0, 0.1);
  // Dew point of 20 degC / 50 % RH: 9.3 degC (common psychrometric charts; from memory).
  EXPECT_NEAR(KelvinToCelsius(DewPoint_K(0.50, K(20.0))), 9.3, 0.1);
}

TEST(DewPoint, SaturatedAirIsAtItsDewPoint) { EXPECT_DOUBLE_EQ(DewPoint_K(1.0, K(23.0)), K(23.0)); }

TEST(DewPoint, InvertsTheSaturationPressure) {
  for (double rh : {0.15, 0.3, 0.5, 0.75, 0.999}) {
    const double dew_K = DewPoint_K(rh, K(30.0));
    EXPECT_NEAR(SaturationPressureOverWater_Pa(dew_K), VapourPressure_Pa(rh, K(30.0)),
                1e-9 * VapourPressure_Pa(rh, K(30.0)))
        << "rh " << rh;
  }
}

TEST(DewPoint, BelowZeroCelsiusPointsToTheFrostPoint) {
  try {
    DewPoint_K(0.2, K(5.0));
    FAIL() << "expected RangeError";
  } catch (const RangeError& error) {
    EXPECT_NE(std::string(error.what()).find("frost point"), std::string::npos) << error.what();
  }
  EXPECT_THROW(DewPoint_K(0.0, K(23.0)), RangeError);
  EXPECT_THROW(DewPoint_K(1.2, K(23.0)), RangeError);
}

TEST(FrostPoint, InvertsTheSublimationPressure) {
  // Air whose vapour pressure equals the sublimation pressure at -20 degC has its frost
  // point at -20 degC (definition; IAPWS R14-08 for the ice curve).
  const double air_K = K(5.0);
  const double rh = SaturationPressureOverIce_Pa(K(-20.0)) / SaturationPressureOverWater_Pa(air_K);
  EXPECT_NEAR(KelvinToCelsius(FrostPoint_K(rh, air_K)), -20.0, 1e-6);
  // Air at 5 degC / 30 % RH: frost point -9.9 degC (psychrometric tables over ice, e.g.
  // ASHRAE Handbook Fundamentals ch. 1; from memory).
  EXPECT_NEAR(KelvinToCelsius(FrostPoint_K(0.30, air_K)), -9.9, 0.1);
  // Vapour above the triple-point pressure has a dew point, not a frost point.
  EXPECT_THROW(FrostPoint_K(0.9, K(23.0)), RangeError);
}

TEST(AbsoluteHumidity, SaturationAt20C) {
  // Saturated air at 20 degC holds 17.3 g/m3 of water vapour (CRC Handbook / psychrometric
  // tables; from memory).
  EXPECT_NEAR(AbsoluteHumidity_g_per_m3(1.0, K(20.0)), 17.3, 0.05);
  // 23 degC / 50 % RH: half of the saturation value at the same temperature.
  EXPECT_DOUBLE_EQ(AbsoluteHumidity_g_per_m3(0.5, K(23.0)),
                   0.5 * AbsoluteHumidity_g_per_m3(1.0, K(23.0)));
}

TEST(HumidityRatio, SaturationAt20C) {
  // ASHRAE Handbook Fundamentals ch. 1, Table 2: W_s = 0.014758 kg/kg at 20 degC and
  // 101.325 kPa (from memory). ASHRAE includes the enhancement factor (about 1.004), which
  // this ideal-gas relation omits, so the value here is lower by about 0.4 %.
  const double w = HumidityRatio_kg_per_kg(1.0, K(20.0), kStandardAtmosphere_Pa);
  EXPECT_NEAR(w, 0.014758, 0.01 * 0.014758);
  EXPECT_LT(w, 0.014758);
}

TEST(MoistAir, RoundTrips) {
  for (double t_C : {0.5, 10.0, 23.0, 40.0, 80.0}) {
    for (double rh : {0.0, 0.11, 0.5, 0.9, 1.0}) {
      const double t_K = K(t_C);
      EXPECT_NEAR(RhFromVapourPressure(VapourPressure_Pa(rh, t_K), t_K), rh, 1e-12);
      EXPECT_NEAR(RhFromAbsoluteHumidity(AbsoluteHumidity_g_per_m3(rh, t_K), t_K), rh, 1e-12);
      EXPECT_NEAR(RhFromHumidityRatio(HumidityRatio_kg_per_kg(rh, t_K, kStandardAtmosphere_Pa), t_K,
                                      kStandardAtmosphere_Pa),
                  rh, 1e-12);
    }
  }
}

TEST(MoistAir, RangeErrors) {
  try {
    VapourPressure_Pa(1.5, K(23.0));
    FAIL() << "expected RangeError";
  } catch (const RangeError& error) {
    EXPECT_NE(std::string(error.what()).find("relative humidity = 1.5"), std::string::npos)
        << error.what();
  }
  EXPECT_THROW(VapourPressure_Pa(-0.1, K(23.0)), RangeError);
  EXPECT_THROW(VapourPressure_Pa(0.5, K(-5.0)), RangeError);
  EXPECT_THROW(VapourPressure_Pa(std::numeric_limits<double>::quiet_NaN(), K(23.0)), RangeError);
  // Supersaturated inputs to the inverse conversions.
  EXPECT_THROW(RhFromVapourPressure(3000.0, K(23.0)), RangeError);
  EXPECT_THROW(RhFromAbsoluteHumidity(30.0, K(23.0)), RangeError);
  // Water at 90 degC, 100 % RH in a 50 kPa atmosphere: vapour pressure exceeds the total.
  EXPECT_THROW(HumidityRatio_kg_per_kg(1.0, K(90.0), 50e3), RangeError);
  EXPECT_THROW(HumidityRatio_kg_per_kg(0.5, K(23.0), 0.0), RangeError);
}

}  // namespace
}  // namespace sorbtrace::physics
