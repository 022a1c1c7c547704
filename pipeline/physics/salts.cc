// Equilibrium relative humidity above saturated aqueous salt solutions.
//
// Source: L. Greenspan, "Humidity fixed points of binary saturated aqueous solutions",
// J. Res. Natl. Bur. Stand. 81A (1977) 89-96. RH(t) = sum_i a_i t^i in %RH, t in degC.
//
// Coefficient notes:
//  * LiCl a1 is positive, CH3COOK a2 negative and K2CO3 a1 positive. Some reprints of
//    the paper print these signs the other way round; those signs contradict the paper's own
//    tabulated values (11.30, 22.51 and 43.16 %RH at 25 degC), which the signs used here
//    reproduce (tests/physics anchor every salt at 25 degC).
//  * NaBr: the fit coefficients could not be confirmed, so the tabulated values are
//    interpolated linearly instead, over 10..40 degC only (the part of the table we could
//    cross-check against an independent listing).
//
// Uncertainties: the +/- column of Greenspan's Table 2 at 5 degC steps, from memory (not
// confirmed against the paper), interpolated linearly in temperature. Greenspan calls them
// "estimated uncertainties"; we assume (from memory, unconfirmed) that they are expanded
// uncertainties with coverage factor k = 2 and divide by 2 to get a standard uncertainty.

#include <fmt/format.h>

#include <algorithm>
#include <array>
#include <cctype>
#include <cmath>
#include <span>
#include <stdexcept>
#include <string>

#include "pipeline/physics/physics.h"
#include "pipeline/physics/range_check.h"

namespace sorbtrace::physics {
namespace {

// Temperature step of Greenspan's Table 2 [K].
constexpr double kTableStep_K = 5.0;
// Greenspan's +/- taken as k = 2 (assumption, see file comment).
constexpr double kCoverageFactor = 2.0;

// Greenspan Table 2 +/- values in %RH at 5 degC steps from each salt's lower limit.
constexpr std::array<double, 21> kULiCl = {0.54, 0.47, 0.41, 0.35, 0.31, 0.27, 0.24,
                                           0.22, 0.21, 0.21, 0.22, 0.23, 0.26, 0.29,
                                           0.33, 0.38, 0.44, 0.51, 0.59, 0.67, 0.77};
constexpr std::array<double, 6> kUCh3cook = {0.53, 0.32, 0.25, 0.25, 0.32, 0.53};
constexpr std::array<double, 21> kUMgCl2 = {0.33, 0.28, 0.24, 0.21, 0.18, 0.16, 0.14,
                                            0.13, 0.13, 0.13, 0.14, 0.16, 0.18, 0.21,
                                            0.25, 0.29, 0.34, 0.39, 0.46, 0.52, 0.60};
constexpr std::array<double, 7> kUK2co3 = {0.66, 0.50, 0.39, 0.33, 0.33, 0.39, 0.50};
constexpr std::array<double, 12> kUMgNo3 = {0.55, 0.43, 0.33, 0.27, 0.23, 0.22,
                                            0.24, 0.29, 0.37, 0.47, 0.60, 0.74};
constexpr std::array<double, 7> kUNaBr = {0.60, 0.51, 0.44, 0.40, 0.38, 0.38, 0.41};
constexpr std::array<double, 17> kUNaCl = {0.34, 0.27, 0.22, 0.18, 0.14, 0.12, 0.11, 0.12, 0.13,
                                           0.16, 0.19, 0.24, 0.30, 0.37, 0.45, 0.55, 0.65};
constexpr std::array<double, 19> kUKCl = {0.53, 0.45, 0.39, 0.33, 0.29, 0.26, 0.25,
                                          0.25, 0.25, 0.28, 0.31, 0.35, 0.41, 0.48,
                                          0.57, 0.66, 0.77, 0.89, 1.0};
constexpr std::array<double, 11> kUKNO3 = {2.9,  2.1,  1.4, 0.96, 0.66, 0.55,
                                           0.60, 0.83, 1.2, 1.8,  2.5};
constexpr std::array<double, 21> kUK2so4 = {1.1,  0.91, 0.76, 0.63, 0.53, 0.45, 0.40,
                                            0.38, 0.38, 0.41, 0.45, 0.51, 0.59, 0.68,
                                            0.79, 0.92, 1.1,  1.2,  1.4,  1.6,  1.8};
// Greenspan Table 2 RH values for NaBr in %RH, 10..40 degC (from memory).
constexpr std::array<double, 7> kRhNaBr = {62.15, 60.68, 59.14, 57.57, 56.03, 54.55, 53.17};

struct SaltEntry {
  const char* name;
  // Polynomial coefficients a0..a3 in %RH / degC^i; unused when `rh_table` is not empty.
  std::array<double, 4> a;
  double low_C;  // tabulated range [degC]
  double high_C;
  std::span<const double> expanded_uncertainty_percent;  // from low_C, 5 degC steps
  std::span<const double> rh_table_percent;              // empty: use the polynomial
};

// Order of Greenspan's table (increasing RH at 25 degC). Ranges are those of the table.
const std::array<SaltEntry, 10>& Salts() {
  static const std::array<SaltEntry, 10> kSalts = {{
      {"LiCl", {11.2323, 0.00824245, -0.214890e-3, 0.0}, 0.0, 100.0, kULiCl, {}},
      {"CH3COOK", {22.4388, 0.156288, -0.612268e-2, 0.0}, 5.0, 30.0, kUCh3cook, {}},
      {"MgCl2", {33.6686, -0.00797397, -0.108988e-2, 0.0}, 0.0, 100.0, kUMgCl2, {}},
      {"K2CO3", {43.1315, 0.00147523, 0.0, 0.0}, 0.0, 30.0, kUK2co3, {}},
      {"Mg(NO3)2", {60.3514, -0.298153, 0.0, 0.0}, 0.0, 55.0, kUMgNo3, {}},
      {"NaBr", {0.0, 0.0, 0.0, 0.0}, 10.0, 40.0, kUNaBr, kRhNaBr},
      {"NaCl", {75.5164, 0.0398321, -0.265459e-2, 0.2848e-4}, 0.0, 80.0, kUNaCl, {}},
      {"KCl", {88.6190, -0.193340, 0.899706e-3, 0.0}, 0.0, 90.0, kUKCl, {}},
      {"KNO3", {96.3361, 0.0112371, -0.484514e-2, 0.0}, 0.0, 50.0, kUKNO3, {}},
      {"K2SO4", {98.7792, -0.0590502, 0.0, 0.0}, 0.0, 100.0, kUK2so4, {}},
  }};
  return kSalts;
}

std::string ToLower(std::string_view text) {
  std::string lower(text);
  for (char& c : lower) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return lower;
}

const SaltEntry& FindSalt(std::string_view salt) {
  const std::string wanted = ToLower(salt);
  for (const SaltEntry& entry : Salts()) {
    if (ToLower(entry.name) == wanted) return entry;
  }
  std::string known;
  for (const SaltEntry& entry : Salts()) {
    if (!known.empty()) known += ", ";
    known += entry.name;
  }
  throw std::invalid_argument(fmt::format("unknown salt '{}'; known salts: {}", salt, known));
}

// Position in a 5 degC table: index of the segment's lower node and the fraction within it.
struct TablePosition {
  std::size_t index;
  double fraction;
};

TablePosition Locate(const SaltEntry& entry, std::size_t nodes, double temperature_C) {
  const double x = (temperature_C - entry.low_C) / kTableStep_K;
  const std::size_t last_segment = nodes - 2;
  const std::size_t index =
      std::min(static_cast<std::size_t>(std::max(0.0, std::floor(x))), last_segment);
  return {index, x - static_cast<double>(index)};
}

double Interpolate(std::span<const double> table, const TablePosition& at) {
  return table[at.index] + at.fraction * (table[at.index + 1] - table[at.index]);
}

}  // namespace

SaltHumidity SaltSolutionHumidity(std::string_view salt, double temperature_K) {
  const SaltEntry& entry = FindSalt(salt);
  internal::RequireInRange(
      "temperature", temperature_K, CelsiusToKelvin(entry.low_C), CelsiusToKelvin(entry.high_C),
      "K",
      fmt::format("the Greenspan (1977) saturated {} solution ({:g} .. {:g} degC)", entry.name,
                  entry.low_C, entry.high_C));
  const double t = KelvinToCelsius(temperature_K);
  const TablePosition at = Locate(entry, entry.expanded_uncertainty_percent.size(), t);

  SaltHumidity result;
  if (entry.rh_table_percent.empty()) {
    const auto& a = entry.a;
    result.rh_fraction = (a[0] + t * (a[1] + t * (a[2] + t * a[3]))) / kPercent;
    result.drh_dT_per_K = (a[1] + t * (2.0 * a[2] + t * 3.0 * a[3])) / kPercent;
  } else {
    const std::span<const double> rh = entry.rh_table_percent;
    result.rh_fraction = Interpolate(rh, at) / kPercent;
    result.drh_dT_per_K = (rh[at.index + 1] - rh[at.index]) / kTableStep_K / kPercent;
  }
  result.standard_uncertainty_fraction =
      Interpolate(entry.expanded_uncertainty_percent, at) / kCoverageFactor / kPercent;
  return result;
}

std::vector<std::string> KnownSalts() {
  std::vector<std::string> names;
  for (const SaltEntry& entry : Salts()) names.emplace_back(entry.name);
  return names;
}

std::pair<double, double> SaltTemperatureRange_K(std::string_view salt) {
  const SaltEntry& entry = FindSalt(salt);
  return {CelsiusToKelvin(entry.low_C), CelsiusToKelvin(entry.high_C)};
}

std::string CanonicalSaltName(std::string_view salt) { return FindSalt(salt).name; }

std::string SaltHumidityMethod(std::string_view salt) {
  const SaltEntry& entry = FindSalt(salt);
  if (!entry.rh_table_percent.empty()) {
    return "Greenspan (1977) J. Res. NBS 81A 89, Table 2, linear interpolation";
  }
  return "Greenspan (1977) J. Res. NBS 81A 89, polynomial fit";
}

}  // namespace sorbtrace::physics
