// Kelvin-Laplace equation, capillary pressure and pF.

#include <gtest/gtest.h>

#include <cmath>
#include <stdexcept>
#include <string>

#include "pipeline/physics/physics.h"

namespace sorbtrace::physics {
namespace {

double K(double temperature_C) { return CelsiusToKelvin(temperature_C); }
constexpr double kNm = 1e-9;

TEST(KelvinRadius, CheckValuesAt23C) {
  // Derived from the IAPWS equations (R1-76 surface tension 72.279 mN/m, Kell density
  // 997.541 kg/m3, 2 gamma V_m / RT = 1.0603 nm at 23 degC, contact angle 0).
  EXPECT_NEAR(KelvinRadius_m(0.50, K(23.0), Meniscus::kHemispherical) / kNm, 1.530, 0.001);
  EXPECT_NEAR(KelvinRadius_m(0.50, K(23.0), Meniscus::kCylindrical) / kNm, 0.765, 0.001);
  EXPECT_NEAR(KelvinRadius_m(0.75, K(23.0), Meniscus::kHemispherical) / kNm, 3.686, 0.001);
  EXPECT_NEAR(KelvinRadius_m(0.90, K(23.0), Meniscus::kHemispherical) / kNm, 10.063, 0.002);
  // Derived from the IAPWS equations at 25 degC: r_K(0.5) = 1.514 nm.
  EXPECT_NEAR(KelvinRadius_m(0.50, K(25.0), Meniscus::kHemispherical) / kNm, 1.514, 0.001);
}

TEST(KelvinRadius, RulesOfThumb) {
  // Common practice: at room temperature a pore of 10 nm (Kelvin) radius fills at about
  // 90 % RH with a hemispherical meniscus and at about 95 % RH with a cylindrical one.
  EXPECT_NEAR(RhForKelvinRadius(10 * kNm, K(23.0), Meniscus::kHemispherical), 0.90, 0.005);
  EXPECT_NEAR(RhForKelvinRadius(10 * kNm, K(23.0), Meniscus::kCylindrical), 0.95, 0.005);
}

TEST(KelvinRadius, ContactAngleScalesTheRadiusByCosine) {
  // Kelvin equation: r_K is proportional to cos(theta); cos(60 deg) = 1/2.
  const double theta = std::acos(0.5);
  EXPECT_NEAR(KelvinRadius_m(0.6, K(23.0), Meniscus::kHemispherical, theta),
              0.5 * KelvinRadius_m(0.6, K(23.0), Meniscus::kHemispherical), 1e-15);
}

TEST(KelvinRadius, RoundTrips) {
  for (Meniscus meniscus : {Meniscus::kHemispherical, Meniscus::kCylindrical}) {
    for (double rh : {0.05, 0.3, 0.5, 0.75, 0.9, 0.98, 0.999}) {
      const double r_m = KelvinRadius_m(rh, K(23.0), meniscus);
      EXPECT_NEAR(RhForKelvinRadius(r_m, K(23.0), meniscus), rh, 1e-12);
      const double pore_m = PoreRadius_m(rh, K(23.0), meniscus, 0.5 * kNm);
      EXPECT_NEAR(pore_m - r_m, 0.5 * kNm, 1e-18);
      EXPECT_NEAR(RhForPoreRadius(pore_m, K(23.0), meniscus, 0.5 * kNm), rh, 1e-12);
    }
  }
}

TEST(KelvinRadius, RangeErrors) {
  try {
    KelvinRadius_m(1.0, K(23.0), Meniscus::kHemispherical);
    FAIL() << "expected RangeError";
  } catch (const RangeError& error) {
    const std::string message = error.what();
    EXPECT_NE(message.find("relative humidity = 1"), std::string::npos) << message;
    EXPECT_NE(message.find("Kelvin"), std::string::npos) << message;
  }
  EXPECT_THROW(KelvinRadius_m(0.0, K(23.0), Meniscus::kHemispherical), RangeError);
  EXPECT_THROW(KelvinRadius_m(0.5, K(120.0), Meniscus::kHemispherical), RangeError);
  EXPECT_THROW(KelvinRadius_m(0.5, K(23.0), Meniscus::kHemispherical, 2.0), RangeError);
  EXPECT_THROW(RhForKelvinRadius(0.0, K(23.0), Meniscus::kCylindrical), RangeError);
  EXPECT_THROW(PoreRadius_m(0.5, K(23.0), Meniscus::kCylindrical, -1e-9), RangeError);
  try {
    RhForPoreRadius(1 * kNm, K(23.0), Meniscus::kCylindrical, 1 * kNm);
    FAIL() << "expected RangeError";
  } catch (const RangeError& error) {
    EXPECT_NE(std::string(error.what()).find("film thickness"), std::string::npos) << error.what();
  }
}

TEST(Meniscus, NamesRoundTrip) {
  EXPECT_EQ(MeniscusName(Meniscus::kHemispherical), "hemispherical");
  EXPECT_EQ(MeniscusName(Meniscus::kCylindrical), "cylindrical");
  EXPECT_EQ(ParseMeniscus("cylindrical"), Meniscus::kCylindrical);
  EXPECT_EQ(ParseMeniscus("Hemispherical"), Meniscus::kHemispherical);
  EXPECT_THROW(ParseMeniscus("spherical"), std::invalid_argument);
}

TEST(CapillaryPressure, CheckValuesAt23C) {
  // Derived from the IAPWS equations (Kell density, p_c = -(rho R T / M) ln RH) at 23 degC:
  // 94.51 MPa at RH 0.5, 14.37 MPa at 0.9, 2.755 MPa at 0.98.
  EXPECT_NEAR(CapillaryPressure_Pa(0.50, K(23.0)) / 1e6, 94.51, 0.01);
  EXPECT_NEAR(CapillaryPressure_Pa(0.90, K(23.0)) / 1e6, 14.37, 0.01);
  EXPECT_NEAR(CapillaryPressure_Pa(0.98, K(23.0)) / 1e6, 2.755, 0.001);
  // Common practice: pore water in equilibrium with 90 % RH is under a tension of about
  // -14 MPa.
  EXPECT_NEAR(-CapillaryPressure_Pa(0.90, K(23.0)) / 1e6, -14.0, 0.5);
  EXPECT_EQ(CapillaryPressure_Pa(1.0, K(23.0)), 0.0);
}

TEST(CapillaryPressure, RoundTripsAndPf) {
  for (double rh : {0.01, 0.3, 0.5, 0.9, 0.99, 1.0}) {
    const double pc = CapillaryPressure_Pa(rh, K(20.0));
    EXPECT_NEAR(RhFromCapillaryPressure(pc, K(20.0)), rh, 1e-12);
    if (pc > 0.0) {
      EXPECT_NEAR(CapillaryPressureFromPF(PF(pc, K(20.0)), K(20.0)), pc, 1e-9 * pc);
    }
  }
  // pF = log10(h / 1 cm): a suction head of 1 m is pF 2 (definition, Schofield 1935).
  const double one_metre_Pa = LiquidWaterDensity_kg_per_m3(K(20.0)) * kStandardGravity_m_per_s2;
  EXPECT_NEAR(SuctionHead_m(one_metre_Pa, K(20.0)), 1.0, 1e-12);
  EXPECT_NEAR(PF(one_metre_Pa, K(20.0)), 2.0, 1e-12);
  // Common practice (soil physics): the permanent wilting point pF 4.2 is about 1.5 MPa.
  EXPECT_NEAR(CapillaryPressureFromPF(4.2, K(20.0)) / 1e6, 1.5, 0.1);
}

TEST(CapillaryPressure, RangeErrors) {
  EXPECT_THROW(CapillaryPressure_Pa(0.0, K(23.0)), RangeError);
  EXPECT_THROW(CapillaryPressure_Pa(1.01, K(23.0)), RangeError);
  EXPECT_THROW(RhFromCapillaryPressure(-1.0, K(23.0)), RangeError);
  EXPECT_THROW(PF(0.0, K(23.0)), RangeError);
  EXPECT_THROW(CapillaryPressureFromPF(12.0, K(23.0)), RangeError);
}

}  // namespace
}  // namespace sorbtrace::physics
