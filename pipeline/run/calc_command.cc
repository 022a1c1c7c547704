// `sorbtrace calc`: a calculator for the physical quantities the pipeline uses.
//
//   sorbtrace calc water  --temp 25C
//   sorbtrace calc air    --temp 23C --rh 50% [--pressure 101.325kPa]
//   sorbtrace calc salt   NaCl --temp 30C          (sorbtrace calc salt --list)
//   sorbtrace calc kelvin --temp 23C --rh 75% [--meniscus cylindrical] [--film 0.5nm]
//   sorbtrace calc kelvin --temp 23C --radius 10nm [--contact-angle 20deg]
//   sorbtrace calc suction --temp 20C --pf 4.2     (or --capillary-pressure 1.5MPa, --head 150m)
//
// Every quantity carries an explicit unit: temperatures "23C" or "296.15K", relative humidity
// "75%" (or the separate option --rh-fraction 0.75), lengths "nm", "um", "mm", "m", pressures
// "Pa", "hPa", "kPa", "MPa", angles "deg" or "rad". A bare number is refused rather than
// guessed. Negative temperatures need the `=` form: --temp=-5C.
//
// Output is a readable table by default (value, unit, correlation and its source) or, with
// --json, an ordered JSON object. Exit codes: 0 ok, 2 bad command line (unknown option,
// missing unit, unknown salt), 3 a value outside the validity range of a correlation.

#include <fmt/format.h>

#include <CLI/CLI.hpp>
#include <charconv>
#include <cmath>
#include <cstdio>
#include <functional>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <stdexcept>
#include <string>
#include <string_view>
#include <system_error>
#include <utility>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/physics/physics.h"
#include "pipeline/run/commands.h"

namespace sorbtrace::run {
namespace {

namespace physics = sorbtrace::physics;
using Json = nlohmann::ordered_json;

using physics::kPercent;
using physics::kPi;
// Coverage factor used to state expanded uncertainties (about 95 % for a normal
// distribution, JCGM 100:2008 clause 6.3.3).
constexpr double kCoverageFactor = 2.0;

// ---- Quantities with units ------------------------------------------------------------

// Splits "12.5nm" into 12.5 and "nm" (surrounding blanks allowed). Returns false if the
// text does not start with a complete number.
bool SplitNumberAndUnit(std::string_view text, double* value, std::string* unit) {
  while (!text.empty() && text.front() == ' ') text.remove_prefix(1);
  while (!text.empty() && text.back() == ' ') text.remove_suffix(1);
  const char* begin = text.data();
  const char* end = text.data() + text.size();
  if (begin != end && *begin == '+') ++begin;  // from_chars refuses a leading '+'
  const std::from_chars_result parsed = std::from_chars(begin, end, *value);
  if (parsed.ec != std::errc() || !std::isfinite(*value)) return false;
  std::string_view rest(parsed.ptr, static_cast<std::size_t>(end - parsed.ptr));
  while (!rest.empty() && rest.front() == ' ') rest.remove_prefix(1);
  *unit = std::string(rest);
  return true;
}

struct UnitFactor {
  const char* unit;
  double factor;  // multiply to get SI
};

// Parses "<number><unit>" against a table of accepted units; throws CLI::ValidationError
// naming the option, the text and the accepted units.
double ParseWithUnits(const std::string& option, const std::string& text,
                      const std::vector<UnitFactor>& units, const char* what) {
  double value = 0.0;
  std::string unit;
  std::string accepted;
  for (const UnitFactor& u : units) {
    if (!accepted.empty()) accepted += ", ";
    accepted += u.unit;
  }
  if (!SplitNumberAndUnit(text, &value, &unit)) {
    throw CLI::ValidationError(
        option, fmt::format("'{}' is not a {} (expected a number followed by one of: {})", text,
                            what, accepted));
  }
  if (unit.empty()) {
    throw CLI::ValidationError(
        option, fmt::format("'{}' has no unit; write the {} with one of: {} (e.g. '{}{}')", text,
                            what, accepted, text, units.front().unit));
  }
  for (const UnitFactor& u : units) {
    if (unit == u.unit) return value * u.factor;
  }
  throw CLI::ValidationError(
      option, fmt::format("unknown unit '{}' in '{}'; accepted units for a {}: {}", unit, text,
                          what, accepted));
}

// Temperature in K from "23C", "23degC", "23°C" or "296.15K".
double ParseTemperature_K(const std::string& option, const std::string& text) {
  double value = 0.0;
  std::string unit;
  const bool number = SplitNumberAndUnit(text, &value, &unit);
  if (number && (unit == "C" || unit == "degC" || unit == "\u00B0C")) {
    return physics::CelsiusToKelvin(value);
  }
  if (number && unit == "K") return value;
  if (number && unit.empty()) {
    throw CLI::ValidationError(
        option, fmt::format("'{}' has no unit; write the temperature as e.g. '{}C' or '{}K'", text,
                            text, text));
  }
  throw CLI::ValidationError(
      option,
      fmt::format("'{}' is not a temperature (expected e.g. '23C', '23degC' or '296.15K')", text));
}

// Relative humidity fraction from "75%" (the percent sign is required).
double ParseRhPercent(const std::string& option, const std::string& text) {
  double value = 0.0;
  std::string unit;
  if (SplitNumberAndUnit(text, &value, &unit) && unit == "%") return value / kPercent;
  if (SplitNumberAndUnit(text, &value, &unit) && unit.empty()) {
    throw CLI::ValidationError(
        option, fmt::format("'{}' has no unit; write a percentage such as '{}%', or give a "
                            "fraction with --rh-fraction",
                            text, text));
  }
  throw CLI::ValidationError(
      option, fmt::format("'{}' is not a relative humidity (expected e.g. '75%')", text));
}

double ParseLength_m(const std::string& option, const std::string& text) {
  return ParseWithUnits(
      option, text,
      {{"nm", 1e-9}, {"um", 1e-6}, {"\u00B5m", 1e-6}, {"mm", 1e-3}, {"cm", 1e-2}, {"m", 1.0}},
      "length");
}

double ParsePressure_Pa(const std::string& option, const std::string& text) {
  return ParseWithUnits(option, text,
                        {{"Pa", 1.0}, {"hPa", 1e2}, {"kPa", 1e3}, {"MPa", 1e6}, {"bar", 1e5}},
                        "pressure");
}

double ParseAngle_rad(const std::string& option, const std::string& text) {
  return ParseWithUnits(option, text, {{"deg", kPi / 180.0}, {"rad", 1.0}}, "angle");
}

// ---- Output -----------------------------------------------------------------------------

// One line of the human-readable table.
struct Row {
  std::string label;
  std::string value;
  std::string unit;
  std::string source;
};

std::string Num(double value) { return fmt::format("{:.6g}", value); }

void PrintTable(const std::string& title, const std::vector<Row>& rows,
                const std::vector<std::string>& notes) {
  std::string out = title + "\n";
  for (const Row& row : rows) {
    std::string line = fmt::format("  {:<30} {:>12} {:<9}", row.label, row.value, row.unit);
    if (!row.source.empty()) line += "  " + row.source;
    while (!line.empty() && line.back() == ' ') line.pop_back();
    out += line + "\n";
  }
  for (const std::string& note : notes) out += "  note: " + note + "\n";
  std::fputs(out.c_str(), stdout);
}

void PrintJson(const Json& json) { std::fputs((json.dump(2) + "\n").c_str(), stdout); }

std::string TemperatureText(double temperature_K) {
  return fmt::format("{:.2f} degC ({:.2f} K)", physics::KelvinToCelsius(temperature_K),
                     temperature_K);
}

constexpr char kSourcePs[] = "IAPWS SR1-86(1992) / Wagner & Pruss (2002)";
constexpr char kSourceIce[] = "IAPWS R14-08(2011)";
constexpr char kSourceRho[] = "Kell (1975) J. Chem. Eng. Data 20, 97";
constexpr char kSourceSigma[] = "IAPWS R1-76(2014)";
constexpr char kSourceKelvin[] = "Kelvin equation with IAPWS sigma, Kell rho";
constexpr char kSourceCapillary[] = "p_c = -(rho R T / M_w) ln(RH)";

// Runs `body`; a physics::RangeError is reported on stderr and becomes exit code 3 (the
// value is outside what a correlation covers). Unknown names become usage errors.
void RunReportingRangeErrors(int& exit_code, const std::function<void()>& body) {
  try {
    body();
    exit_code = static_cast<int>(ExitCode::kOk);
  } catch (const physics::RangeError& error) {
    std::fprintf(stderr, "sorbtrace calc: out of range: %s\n", error.what());
    exit_code = static_cast<int>(ExitCode::kBadInput);
  } catch (const std::invalid_argument& error) {
    throw CLI::ValidationError(error.what());
  }
}

// ---- calc water ---------------------------------------------------------------------------

struct WaterArgs {
  std::string temperature;
  bool json = false;
};

void RunWater(const WaterArgs& args) {
  const double t_K = ParseTemperature_K("--temp", args.temperature);
  const double ps_Pa = physics::SaturationPressureOverWater_Pa(t_K);
  const double rho = physics::LiquidWaterDensity_kg_per_m3(t_K);
  const double sigma = physics::SurfaceTension_N_per_m(t_K);
  const double vm = physics::LiquidWaterMolarVolume_m3_per_mol(t_K);
  std::optional<double> p_ice_Pa;
  if (t_K <= physics::kTriplePoint_K) p_ice_Pa = physics::SaturationPressureOverIce_Pa(t_K);
  if (args.json) {
    Json json;
    json["calculation"] = "water";
    json["inputs"] = {{"temperature_K", t_K}};
    Json results;
    results["saturation_pressure_over_water_Pa"] = ps_Pa;
    if (p_ice_Pa) results["saturation_pressure_over_ice_Pa"] = *p_ice_Pa;
    results["liquid_density_kg_per_m3"] = rho;
    results["molar_volume_m3_per_mol"] = vm;
    results["surface_tension_N_per_m"] = sigma;
    json["results"] = results;
    Json sources = {{"saturation_pressure_over_water", kSourcePs},
                    {"liquid_density", kSourceRho},
                    {"surface_tension", kSourceSigma}};
    if (p_ice_Pa) sources["saturation_pressure_over_ice"] = kSourceIce;
    json["sources"] = sources;
    PrintJson(json);
    return;
  }
  std::vector<Row> rows = {{"saturation pressure (liquid)", Num(ps_Pa), "Pa", kSourcePs}};
  if (p_ice_Pa) rows.push_back({"saturation pressure (ice)", Num(*p_ice_Pa), "Pa", kSourceIce});
  rows.push_back({"liquid density", Num(rho), "kg/m3", kSourceRho});
  rows.push_back({"molar volume", Num(vm * 1e6), "cm3/mol", "M_w / rho"});
  rows.push_back({"surface tension", Num(sigma * 1e3), "mN/m", kSourceSigma});
  PrintTable("Water at " + TemperatureText(t_K), rows, {});
}

// ---- calc air -----------------------------------------------------------------------------

struct RhArgs {
  std::string rh_percent;
  std::optional<double> rh_fraction;
};

void AddRhOptions(CLI::App* command, RhArgs* args) {
  CLI::Option* percent =
      command->add_option("--rh", args->rh_percent, "relative humidity with a % sign, e.g. 75%");
  CLI::Option* fraction = command->add_option("--rh-fraction", args->rh_fraction,
                                              "relative humidity as a fraction, e.g. 0.75");
  percent->excludes(fraction);
  fraction->excludes(percent);
}

// The RH given by either option, or nothing if neither was given.
std::optional<double> RhFraction(const RhArgs& args) {
  if (args.rh_fraction) return *args.rh_fraction;
  if (!args.rh_percent.empty()) return ParseRhPercent("--rh", args.rh_percent);
  return std::nullopt;
}

struct AirArgs {
  std::string temperature;
  RhArgs rh;
  std::string pressure = "101325Pa";
  bool json = false;
};

void RunAir(const AirArgs& args) {
  const double t_K = ParseTemperature_K("--temp", args.temperature);
  const std::optional<double> rh_opt = RhFraction(args.rh);
  if (!rh_opt) throw CLI::RequiredError("--rh or --rh-fraction");
  const double rh = *rh_opt;
  const double p_Pa = ParsePressure_Pa("--pressure", args.pressure);

  const double ps_Pa = physics::SaturationPressureOverWater_Pa(t_K);
  const double pv_Pa = physics::VapourPressure_Pa(rh, t_K);
  const double ah = physics::AbsoluteHumidity_g_per_m3(rh, t_K);
  const double w = physics::HumidityRatio_kg_per_kg(rh, t_K, p_Pa);
  // Condensation temperature: over liquid water when at or above 0 degC, else over ice.
  std::optional<double> dew_K;
  std::optional<double> frost_K;
  if (rh > 0.0) {
    if (pv_Pa >= physics::SaturationPressureOverWater_Pa(physics::kZeroCelsius_K)) {
      dew_K = physics::DewPoint_K(rh, t_K);
    } else {
      frost_K = physics::FrostPoint_K(rh, t_K);
    }
  }
  std::optional<double> pc_Pa;
  std::optional<double> pf;
  if (rh > 0.0) pc_Pa = physics::CapillaryPressure_Pa(rh, t_K);
  if (pc_Pa && *pc_Pa > 0.0) pf = physics::PF(*pc_Pa, t_K);

  if (args.json) {
    Json json;
    json["calculation"] = "air";
    json["inputs"] = {{"temperature_K", t_K}, {"rh_fraction", rh}, {"total_pressure_Pa", p_Pa}};
    Json results;
    results["saturation_pressure_Pa"] = ps_Pa;
    results["vapour_pressure_Pa"] = pv_Pa;
    results["absolute_humidity_g_per_m3"] = ah;
    results["humidity_ratio_kg_per_kg"] = w;
    results["dew_point_K"] = dew_K ? Json(*dew_K) : Json(nullptr);
    results["frost_point_K"] = frost_K ? Json(*frost_K) : Json(nullptr);
    results["capillary_pressure_Pa"] = pc_Pa ? Json(*pc_Pa) : Json(nullptr);
    results["pF"] = pf ? Json(*pf) : Json(nullptr);
    json["results"] = results;
    json["sources"] = {
        {"saturation_pressure", kSourcePs},
        {"frost_point", kSourceIce},
        {"moist_air", "ideal-gas vapour, enhancement factor 1, RH over liquid water (WMO)"},
        {"capillary_pressure", std::string(kSourceCapillary) + ", rho from " + kSourceRho}};
    PrintJson(json);
    return;
  }
  std::vector<Row> rows = {
      {"saturation pressure", Num(ps_Pa), "Pa", kSourcePs},
      {"vapour pressure", Num(pv_Pa), "Pa", "RH x p_s"},
      {"absolute humidity", Num(ah), "g/m3", "ideal gas, p_v M_w / (R T)"},
      {"humidity ratio", Num(w * 1e3), "g/kg", fmt::format("at {} Pa total", Num(p_Pa))},
  };
  if (dew_K) {
    rows.push_back({"dew point", fmt::format("{:.2f}", physics::KelvinToCelsius(*dew_K)), "degC",
                    "inverse of " + std::string(kSourcePs)});
  }
  if (frost_K) {
    rows.push_back({"frost point", fmt::format("{:.2f}", physics::KelvinToCelsius(*frost_K)),
                    "degC", std::string("inverse of ") + kSourceIce});
  }
  if (pc_Pa) {
    rows.push_back({"capillary pressure (suction)", Num(*pc_Pa / 1e6), "MPa", kSourceCapillary});
    rows.push_back({"pore-water pressure", Num(-*pc_Pa / 1e6), "MPa", "minus the suction"});
  }
  if (pf) rows.push_back({"pF", fmt::format("{:.3f}", *pf), "", "log10(head / 1 cm)"});
  PrintTable(fmt::format("Moist air at {}, RH {:.4g} %", TemperatureText(t_K), rh * kPercent), rows,
             {"enhancement factor taken as 1 (ideal-gas vapour)"});
}

// ---- calc salt ----------------------------------------------------------------------------

struct SaltArgs {
  std::string salt;
  std::string temperature;
  bool list = false;
  bool json = false;
};

void RunSaltList(bool json_output) {
  if (json_output) {
    Json salts = Json::array();
    for (const std::string& salt : physics::KnownSalts()) {
      const auto [low_K, high_K] = physics::SaltTemperatureRange_K(salt);
      salts.push_back({{"salt", salt},
                       {"temperature_min_K", low_K},
                       {"temperature_max_K", high_K},
                       {"method", physics::SaltHumidityMethod(salt)}});
    }
    PrintJson(Json{{"calculation", "salt-list"}, {"salts", salts}});
    return;
  }
  std::vector<Row> rows;
  for (const std::string& salt : physics::KnownSalts()) {
    const auto [low_K, high_K] = physics::SaltTemperatureRange_K(salt);
    const physics::SaltHumidity at_25 =
        physics::SaltSolutionHumidity(salt, physics::CelsiusToKelvin(25.0));
    rows.push_back(
        {salt, fmt::format("{:.2f}", at_25.rh_fraction * kPercent), "%RH",
         fmt::format("at 25 degC; valid {:g} .. {:g} degC", physics::KelvinToCelsius(low_K),
                     physics::KelvinToCelsius(high_K))});
  }
  PrintTable("Saturated salt solutions (Greenspan 1977, J. Res. NBS 81A, 89)", rows, {});
}

void RunSalt(const SaltArgs& args) {
  if (args.list) {
    RunSaltList(args.json);
    return;
  }
  if (args.salt.empty()) throw CLI::RequiredError("SALT (or --list)");
  if (args.temperature.empty()) throw CLI::RequiredError("--temp");
  const double t_K = ParseTemperature_K("--temp", args.temperature);
  const std::string salt = physics::CanonicalSaltName(args.salt);
  const physics::SaltHumidity h = physics::SaltSolutionHumidity(salt, t_K);
  const auto [low_K, high_K] = physics::SaltTemperatureRange_K(salt);
  const std::string method = physics::SaltHumidityMethod(salt);
  const std::string uncertainty_note =
      "standard uncertainty = Greenspan's estimated uncertainty / 2 (taken as k = 2)";
  if (args.json) {
    Json json;
    json["calculation"] = "salt";
    json["inputs"] = {{"salt", salt}, {"temperature_K", t_K}};
    json["results"] = {
        {"rh_fraction", h.rh_fraction},
        {"standard_uncertainty_fraction", h.standard_uncertainty_fraction},
        {"expanded_uncertainty_fraction", kCoverageFactor * h.standard_uncertainty_fraction},
        {"coverage_factor", kCoverageFactor},
        {"drh_dT_per_K", h.drh_dT_per_K},
        {"valid_temperature_min_K", low_K},
        {"valid_temperature_max_K", high_K}};
    json["sources"] = {{"rh", method}, {"uncertainty", uncertainty_note}};
    PrintJson(json);
    return;
  }
  PrintTable(fmt::format("Saturated {} solution at {}", salt, TemperatureText(t_K)),
             {{"equilibrium RH", fmt::format("{:.2f}", h.rh_fraction * kPercent), "%RH", method},
              {"standard uncertainty u",
               fmt::format("{:.3f}", h.standard_uncertainty_fraction * kPercent), "%RH", "k = 1"},
              {"expanded uncertainty U",
               fmt::format("{:.3f}", kCoverageFactor * h.standard_uncertainty_fraction * kPercent),
               "%RH", "k = 2"},
              {"temperature coefficient", fmt::format("{:.4f}", h.drh_dT_per_K * kPercent), "%RH/K",
               "d(RH)/dT"},
              {"valid temperature range",
               fmt::format("{:g} .. {:g}", physics::KelvinToCelsius(low_K),
                           physics::KelvinToCelsius(high_K)),
               "degC", ""}},
             {uncertainty_note});
}

// ---- calc kelvin --------------------------------------------------------------------------

struct KelvinArgs {
  std::string temperature;
  RhArgs rh;
  std::string radius;
  std::string meniscus = "hemispherical";
  std::string film = "0nm";
  std::string contact_angle = "0deg";
  bool json = false;
};

void RunKelvin(const KelvinArgs& args) {
  const double t_K = ParseTemperature_K("--temp", args.temperature);
  const std::optional<double> rh_given = RhFraction(args.rh);
  if (rh_given.has_value() == !args.radius.empty()) {
    throw CLI::ValidationError(
        "give exactly one of --rh / --rh-fraction (radius from RH) or "
        "--radius (RH from pore radius)");
  }
  const physics::Meniscus meniscus = physics::ParseMeniscus(args.meniscus);
  const double film_m = ParseLength_m("--film", args.film);
  const double angle_rad = ParseAngle_rad("--contact-angle", args.contact_angle);

  double rh = 0.0;
  double pore_m = 0.0;
  if (rh_given) {
    rh = *rh_given;
    pore_m = physics::PoreRadius_m(rh, t_K, meniscus, film_m, angle_rad);
  } else {
    pore_m = ParseLength_m("--radius", args.radius);
    rh = physics::RhForPoreRadius(pore_m, t_K, meniscus, film_m, angle_rad);
  }
  const double kelvin_m = pore_m - film_m;
  const double pc_Pa = physics::CapillaryPressure_Pa(rh, t_K);

  if (args.json) {
    Json json;
    json["calculation"] = "kelvin";
    Json inputs = {{"temperature_K", t_K}};
    if (rh_given) {
      inputs["rh_fraction"] = rh;
    } else {
      inputs["pore_radius_m"] = pore_m;
    }
    inputs["meniscus"] = std::string(physics::MeniscusName(meniscus));
    inputs["film_thickness_m"] = film_m;
    inputs["contact_angle_rad"] = angle_rad;
    json["inputs"] = inputs;
    json["results"] = {{"rh_fraction", rh},
                       {"kelvin_radius_m", kelvin_m},
                       {"pore_radius_m", pore_m},
                       {"capillary_pressure_Pa", pc_Pa}};
    json["sources"] = {{"kelvin", kSourceKelvin},
                       {"surface_tension", kSourceSigma},
                       {"liquid_density", kSourceRho}};
    PrintJson(json);
    return;
  }
  const std::string direction = rh_given ? "radius from RH" : "RH from pore radius";
  PrintTable(fmt::format("Kelvin equation ({}), {} meniscus, at {}", direction,
                         physics::MeniscusName(meniscus), TemperatureText(t_K)),
             {{"relative humidity", fmt::format("{:.4f}", rh * kPercent), "%", ""},
              {"Kelvin radius r_K", Num(kelvin_m * 1e9), "nm", kSourceKelvin},
              {"adsorbed film t", Num(film_m * 1e9), "nm", "given"},
              {"pore radius r_K + t", Num(pore_m * 1e9), "nm", ""},
              {"contact angle", Num(angle_rad * 180.0 / kPi), "deg", "given"},
              {"capillary pressure", Num(pc_Pa / 1e6), "MPa", kSourceCapillary}},
             {});
}

// ---- calc suction -------------------------------------------------------------------------

struct SuctionArgs {
  std::string temperature;
  std::optional<double> pf;
  std::string capillary_pressure;
  std::string head;
  bool json = false;
};

void RunSuction(const SuctionArgs& args) {
  const double t_K = ParseTemperature_K("--temp", args.temperature);
  const int given =
      (args.pf ? 1 : 0) + (args.capillary_pressure.empty() ? 0 : 1) + (args.head.empty() ? 0 : 1);
  if (given != 1) {
    throw CLI::ValidationError("give exactly one of --pf, --capillary-pressure or --head");
  }
  double pc_Pa = 0.0;
  if (args.pf) {
    pc_Pa = physics::CapillaryPressureFromPF(*args.pf, t_K);
  } else if (!args.capillary_pressure.empty()) {
    pc_Pa = ParsePressure_Pa("--capillary-pressure", args.capillary_pressure);
  } else {
    const double head_m = ParseLength_m("--head", args.head);
    pc_Pa =
        head_m * physics::LiquidWaterDensity_kg_per_m3(t_K) * physics::kStandardGravity_m_per_s2;
  }
  const double rh = physics::RhFromCapillaryPressure(pc_Pa, t_K);
  const double head_m = physics::SuctionHead_m(pc_Pa, t_K);
  std::optional<double> pf;
  if (pc_Pa > 0.0) pf = physics::PF(pc_Pa, t_K);
  if (args.json) {
    Json json;
    json["calculation"] = "suction";
    Json inputs = {{"temperature_K", t_K}};
    if (args.pf) {
      inputs["pF"] = *args.pf;
    } else if (!args.capillary_pressure.empty()) {
      inputs["capillary_pressure_Pa"] = pc_Pa;
    } else {
      inputs["suction_head_m"] = head_m;
    }
    json["inputs"] = inputs;
    json["results"] = {{"capillary_pressure_Pa", pc_Pa},
                       {"suction_head_m", head_m},
                       {"pF", pf ? Json(*pf) : Json(nullptr)},
                       {"rh_fraction", rh}};
    json["sources"] = {{"capillary_pressure", kSourceCapillary}, {"liquid_density", kSourceRho}};
    PrintJson(json);
    return;
  }
  std::vector<Row> rows = {{"capillary pressure", Num(pc_Pa / 1e6), "MPa", ""},
                           {"suction head", Num(head_m), "m", "p_c / (rho g_n)"}};
  if (pf) rows.push_back({"pF", fmt::format("{:.3f}", *pf), "", "log10(head / 1 cm)"});
  rows.push_back({"equilibrium RH", fmt::format("{:.4f}", rh * kPercent), "%", kSourceCapillary});
  PrintTable("Suction at " + TemperatureText(t_K), rows, {});
}

void AddJsonFlag(CLI::App* command, bool* json) {
  command->add_flag("--json", *json, "print the result as JSON instead of a table");
}

}  // namespace

void AddCalcCommand(CLI::App& app, int& exit_code) {
  CLI::App* calc = app.add_subcommand(
      "calc", "physical-property calculator: water, moist air, salts, Kelvin equation, suction");
  calc->require_subcommand(1);

  auto water = std::make_shared<WaterArgs>();
  CLI::App* water_cmd =
      calc->add_subcommand("water", "saturation pressure, density and surface tension of water");
  water_cmd
      ->add_option("--temp", water->temperature,
                   "temperature, e.g. 25C or 298.15K (below zero: --temp=-5C)")
      ->required();
  AddJsonFlag(water_cmd, &water->json);
  water_cmd->callback(
      [water, &exit_code] { RunReportingRangeErrors(exit_code, [&] { RunWater(*water); }); });

  auto air = std::make_shared<AirArgs>();
  CLI::App* air_cmd = calc->add_subcommand(
      "air", "vapour pressure, absolute humidity, humidity ratio, dew point, suction and pF");
  air_cmd->add_option("--temp", air->temperature, "air temperature, e.g. 23C or 296.15K")
      ->required();
  AddRhOptions(air_cmd, &air->rh);
  air_cmd->add_option("--pressure", air->pressure, "total pressure, e.g. 101.325kPa")
      ->capture_default_str();
  AddJsonFlag(air_cmd, &air->json);
  air_cmd->callback(
      [air, &exit_code] { RunReportingRangeErrors(exit_code, [&] { RunAir(*air); }); });

  auto salt = std::make_shared<SaltArgs>();
  CLI::App* salt_cmd = calc->add_subcommand(
      "salt", "equilibrium RH above a saturated salt solution, with its uncertainty");
  salt_cmd->add_option("salt", salt->salt, "salt formula, e.g. NaCl, MgCl2, Mg(NO3)2");
  salt_cmd->add_option("--temp", salt->temperature, "solution temperature, e.g. 23C");
  salt_cmd->add_flag("--list", salt->list, "list the known salts and their ranges");
  AddJsonFlag(salt_cmd, &salt->json);
  salt_cmd->callback(
      [salt, &exit_code] { RunReportingRangeErrors(exit_code, [&] { RunSalt(*salt); }); });

  auto kelvin = std::make_shared<KelvinArgs>();
  CLI::App* kelvin_cmd = calc->add_subcommand(
      "kelvin", "Kelvin equation: pore radius from RH (--rh) or RH from pore radius (--radius)");
  kelvin_cmd->add_option("--temp", kelvin->temperature, "temperature, e.g. 23C")->required();
  AddRhOptions(kelvin_cmd, &kelvin->rh);
  kelvin_cmd->add_option("--radius", kelvin->radius,
                         "pore radius r_K + t, e.g. 10nm (gives the RH)");
  kelvin_cmd->add_option("--meniscus", kelvin->meniscus, "hemispherical or cylindrical")
      ->capture_default_str()
      ->check(CLI::IsMember({"hemispherical", "cylindrical"}));
  kelvin_cmd->add_option("--film", kelvin->film, "adsorbed film thickness t, e.g. 0.5nm")
      ->capture_default_str();
  kelvin_cmd->add_option("--contact-angle", kelvin->contact_angle, "e.g. 0deg or 0.3rad")
      ->capture_default_str();
  AddJsonFlag(kelvin_cmd, &kelvin->json);
  kelvin_cmd->callback(
      [kelvin, &exit_code] { RunReportingRangeErrors(exit_code, [&] { RunKelvin(*kelvin); }); });

  auto suction = std::make_shared<SuctionArgs>();
  CLI::App* suction_cmd = calc->add_subcommand(
      "suction", "capillary pressure, suction head, pF and equilibrium RH (give one of them)");
  suction_cmd->add_option("--temp", suction->temperature, "temperature, e.g. 20C")->required();
  suction_cmd->add_option("--pf", suction->pf, "pF = log10(head / 1 cm), e.g. 4.2");
  suction_cmd->add_option("--capillary-pressure", suction->capillary_pressure, "e.g. 1.5MPa");
  suction_cmd->add_option("--head", suction->head, "suction head, e.g. 150m");
  AddJsonFlag(suction_cmd, &suction->json);
  suction_cmd->callback(
      [suction, &exit_code] { RunReportingRangeErrors(exit_code, [&] { RunSuction(*suction); }); });
}

}  // namespace sorbtrace::run
