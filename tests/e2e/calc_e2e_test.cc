// End-to-end: `sorbtrace calc ...` run as a process; JSON output parsed and checked against
// published values, exit codes of bad command lines checked.

#include <gtest/gtest.h>
#include <sys/wait.h>

#include <array>
#include <cstdio>
#include <nlohmann/json.hpp>
#include <string>

namespace {

struct RunResult {
  int exit_code = -1;
  std::string output;  // stdout, plus stderr when requested
};

// Runs the sorbtrace binary with `arguments` (shell syntax).
RunResult RunSorbtrace(const std::string& arguments, bool merge_stderr = false) {
  const std::string command = std::string("'") + SORBTRACE_BINARY + "' " + arguments +
                              (merge_stderr ? " 2>&1" : " 2>/dev/null");
  RunResult result;
  FILE* pipe = popen(command.c_str(), "r");
  if (pipe == nullptr) return result;
  std::array<char, 4096> buffer{};
  std::size_t n = 0;
  while ((n = std::fread(buffer.data(), 1, buffer.size(), pipe)) > 0) {
    result.output.append(buffer.data(), n);
  }
  const int status = pclose(pipe);
  result.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return result;
}

nlohmann::json RunJson(const std::string& arguments) {
  const RunResult result = RunSorbtrace(arguments + " --json");
  EXPECT_EQ(result.exit_code, 0) << arguments;
  return nlohmann::json::parse(result.output);
}

TEST(CalcE2e, WaterProperties) {
  const nlohmann::json json = RunJson("calc water --temp 25C");
  EXPECT_EQ(json["calculation"], "water");
  EXPECT_DOUBLE_EQ(json["inputs"]["temperature_K"].get<double>(), 298.15);
  const nlohmann::json& r = json["results"];
  // IAPWS SR1-86(1992) Eq. 1 at 25 degC: 3169.82 Pa (evaluated from the published equation).
  EXPECT_NEAR(r["saturation_pressure_over_water_Pa"].get<double>(), 3169.82, 0.03);
  // Tanaka et al., Metrologia 38 (2001) 301: 997.0470 kg/m3 at 25 degC.
  EXPECT_NEAR(r["liquid_density_kg_per_m3"].get<double>(), 997.0470, 0.01);
  // IAPWS R1-76(2014) table: 71.97 mN/m at 25 degC (from memory).
  EXPECT_NEAR(r["surface_tension_N_per_m"].get<double>() * 1e3, 71.97, 0.006);
}

TEST(CalcE2e, MoistAir) {
  const nlohmann::json json = RunJson("calc air --temp 23C --rh 50%");
  EXPECT_DOUBLE_EQ(json["inputs"]["rh_fraction"].get<double>(), 0.5);
  const nlohmann::json& r = json["results"];
  // ASHRAE Handbook Fundamentals ch. 1: dew point of 23 degC / 50 % RH is 12.0 degC (from
  // memory).
  EXPECT_NEAR(r["dew_point_K"].get<double>() - 273.15, 12.0, 0.1);
  EXPECT_TRUE(r["frost_point_K"].is_null());
  // Derived from the IAPWS equations: suction 94.51 MPa at RH 0.5 and 23 degC.
  EXPECT_NEAR(r["capillary_pressure_Pa"].get<double>() / 1e6, 94.51, 0.01);
  // Percent and fraction spellings give byte-identical output (and the output is
  // deterministic).
  EXPECT_EQ(RunSorbtrace("calc air --temp 23C --rh 50% --json").output,
            RunSorbtrace("calc air --temp 296.15K --rh-fraction 0.5 --json").output);
}

TEST(CalcE2e, SaltSolution) {
  const nlohmann::json json = RunJson("calc salt NaCl --temp 25C");
  EXPECT_EQ(json["inputs"]["salt"], "NaCl");
  const nlohmann::json& r = json["results"];
  // Greenspan (1977) J. Res. NBS 81A 89, Table 2: NaCl 75.29 +/- 0.12 %RH at 25 degC (the
  // table truncates to 0.01; the +/- is from memory and taken as k = 2).
  EXPECT_NEAR(r["rh_fraction"].get<double>(), 0.7529, 0.0001);
  EXPECT_NEAR(r["standard_uncertainty_fraction"].get<double>(), 0.0006, 1e-9);
  EXPECT_NEAR(r["expanded_uncertainty_fraction"].get<double>(), 0.0012, 1e-9);
  // Lookup ignores case.
  EXPECT_EQ(RunJson("calc salt mgcl2 --temp 25C")["inputs"]["salt"], "MgCl2");
}

TEST(CalcE2e, KelvinBothDirections) {
  // Derived from the IAPWS equations: r_K(0.5) = 1.530 nm at 23 degC, hemispherical.
  const nlohmann::json radius = RunJson("calc kelvin --temp 23C --rh 50%");
  EXPECT_NEAR(radius["results"]["kelvin_radius_m"].get<double>() * 1e9, 1.530, 0.001);
  // With a 0.5 nm film the pore radius is r_K + t.
  const nlohmann::json film = RunJson("calc kelvin --temp 23C --rh 50% --film 0.5nm");
  EXPECT_NEAR(film["results"]["pore_radius_m"].get<double>() * 1e9, 2.030, 0.001);
  // Common practice: a 10 nm pore fills at about 95 % RH with a cylindrical meniscus.
  const nlohmann::json rh = RunJson("calc kelvin --temp 23C --radius 10nm --meniscus cylindrical");
  EXPECT_NEAR(rh["results"]["rh_fraction"].get<double>(), 0.95, 0.005);
  EXPECT_EQ(rh["inputs"]["meniscus"], "cylindrical");
}

TEST(CalcE2e, Suction) {
  // Common practice (soil physics): pF 4.2, the permanent wilting point, is about 1.5 MPa.
  const nlohmann::json json = RunJson("calc suction --temp 20C --pf 4.2");
  EXPECT_NEAR(json["results"]["capillary_pressure_Pa"].get<double>() / 1e6, 1.5, 0.1);
  EXPECT_NEAR(json["results"]["suction_head_m"].get<double>(), 158.49, 0.01);  // 10^4.2 cm
}

TEST(CalcE2e, HumanReadableOutputNamesSources) {
  const RunResult result = RunSorbtrace("calc salt KCl --temp 23C");
  EXPECT_EQ(result.exit_code, 0);
  EXPECT_NE(result.output.find("Greenspan (1977)"), std::string::npos) << result.output;
  EXPECT_NE(result.output.find("%RH"), std::string::npos) << result.output;
  const RunResult water = RunSorbtrace("calc water --temp 20C");
  EXPECT_NE(water.output.find("IAPWS R1-76(2014)"), std::string::npos) << water.output;
  EXPECT_NE(water.output.find("mN/m"), std::string::npos) << water.output;
}

TEST(CalcE2e, UsageErrorsExitWith2) {
  // A number without a unit is refused, not guessed.
  RunResult r = RunSorbtrace("calc water --temp 25", true);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.output.find("no unit"), std::string::npos) << r.output;
  r = RunSorbtrace("calc air --temp 23C --rh 50", true);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.output.find("--rh-fraction"), std::string::npos) << r.output;
  r = RunSorbtrace("calc salt NaI --temp 25C", true);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.output.find("unknown salt 'NaI'"), std::string::npos) << r.output;
  EXPECT_EQ(RunSorbtrace("calc kelvin --temp 23C").exit_code, 2);  // neither --rh nor --radius
  EXPECT_EQ(RunSorbtrace("calc kelvin --temp 23C --rh 50% --meniscus flat").exit_code, 2);
  EXPECT_EQ(RunSorbtrace("calc kelvin --temp 23C --radius 10furlong").exit_code, 2);
  EXPECT_EQ(RunSorbtrace("calc").exit_code, 2);
}

TEST(CalcE2e, OutOfRangeExitsWith3) {
  RunResult r = RunSorbtrace("calc salt NaCl --temp 95C", true);
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_NE(r.output.find("NaCl"), std::string::npos) << r.output;
  EXPECT_NE(r.output.find("temperature = 368.15 K"), std::string::npos) << r.output;
  r = RunSorbtrace("calc kelvin --temp 23C --rh 100%", true);
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_NE(r.output.find("relative humidity"), std::string::npos) << r.output;
  EXPECT_EQ(RunSorbtrace("calc air --temp 23C --rh 120%").exit_code, 3);
  EXPECT_EQ(RunSorbtrace("calc water --temp=-30C").exit_code, 3);
}

}  // namespace
