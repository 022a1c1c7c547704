// Reader of over-hygroscopic retention points (pressure plate / suction measurements).
#include <map>
#include <stdexcept>
#include <string>
#include <vector>

#include "pipeline/ingest/csv_reader.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::ingest {

using internal::ColumnRole;
using internal::CsvReader;

std::vector<RetentionPoint> ReadRetentionPoints(const JobSpec& job, const DataSetSpec& dataset) {
  const CsvFormat& format = dataset.format;
  const std::string display = dataset.file.string();
  CsvReader reader(dataset.file, display, format.delimiter, format.decimal_comma);
  reader.ReadHeader();
  const std::vector<ColumnRole> roles = {
      {"specimen", true, {{"specimen", ""}}, "", ""},
      {"capillary pressure",
       true,
       {{"capillary_pressure_Pa", "Pa"},
        {"capillary_pressure_kPa", "kPa"},
        {"capillary_pressure_MPa", "MPa"},
        {"suction_head_m", "m"},
        {"pF", "pF"}},
       "",
       ""},
      {"moisture content",
       true,
       {{"moisture_kg_per_kg", "kg/kg"}, {"moisture_percent", "percent"}},
       "",
       ""},
      {"moisture uncertainty",
       true,
       {{"u_moisture_kg_per_kg", "kg/kg"}, {"u_moisture_percent", "percent"}},
       "",
       ""},
      {"branch", false, {{"branch", ""}}, "", ""},
  };
  const auto columns = internal::MapHeader(reader, roles);
  const auto specimen_index = static_cast<std::size_t>(columns[0].index);
  const auto pressure_index = static_cast<std::size_t>(columns[1].index);
  const auto moisture_index = static_cast<std::size_t>(columns[2].index);
  const auto u_index = static_cast<std::size_t>(columns[3].index);
  const bool has_branch = columns[4].index >= 0;
  const std::string& pressure_unit = columns[1].unit;
  // Mass percent to kg/kg.
  const double moisture_divisor = columns[2].unit == "percent" ? physics::kPercent : 1.0;
  const double u_divisor = columns[3].unit == "percent" ? physics::kPercent : 1.0;

  // Water density at the measurement temperature, for suction heads (Kell 1975 via physics).
  double water_density_kg_per_m3 = 0.0;
  try {
    water_density_kg_per_m3 = physics::LiquidWaterDensity_kg_per_m3(dataset.temperature_K);
  } catch (const physics::RangeError& error) {
    throw InputError(dataset.where, std::string("retention temperature: ") + error.what(),
                     "temperature_C within the range of the water properties");
  }

  std::map<std::string, bool, std::less<>> declared;
  std::string declared_list;
  for (const SpecimenSpec& specimen : job.specimens) {
    declared[specimen.id] = true;
    if (!declared_list.empty()) declared_list += ", ";
    declared_list += specimen.id;
  }

  std::vector<RetentionPoint> points;
  while (reader.Next()) {
    RetentionPoint point;
    const std::string_view specimen_id = reader.Text(specimen_index);
    if (declared.find(specimen_id) == declared.end()) {
      reader.Fail(reader.Column(specimen_index),
                  "specimen '" + std::string(specimen_id) + "' is not declared in the job file",
                  "a [[specimen]] id of the job (" + declared_list + ")");
    }
    point.specimen_id = std::string(specimen_id);
    const double pressure = reader.Number(pressure_index, columns[1].name);
    const int pressure_column = reader.Column(pressure_index);
    if (pressure_unit == "pF") {
      try {
        point.capillary_pressure_Pa =
            physics::CapillaryPressureFromPF(pressure, dataset.temperature_K);
      } catch (const physics::RangeError& error) {
        reader.Fail(pressure_column, std::string("pF value out of range: ") + error.what(),
                    "a pF of a capillary pressure");
      }
    } else {
      if (!(pressure > 0.0)) {
        reader.Fail(pressure_column,
                    "'" + std::string(reader.Text(pressure_index)) + "' in column '" +
                        columns[1].name + "' is not positive",
                    "a capillary pressure (suction) above zero");
      }
      if (pressure_unit == "Pa") {
        point.capillary_pressure_Pa = pressure;
      } else if (pressure_unit == "kPa") {
        point.capillary_pressure_Pa = pressure * 1e3;
      } else if (pressure_unit == "MPa") {
        point.capillary_pressure_Pa = pressure * 1e6;
      } else {  // suction head [m]: p = rho_w g h
        point.capillary_pressure_Pa =
            pressure * water_density_kg_per_m3 * physics::kStandardGravity_m_per_s2;
      }
    }
    const double moisture = reader.Number(moisture_index, columns[2].name);
    if (!(moisture >= 0.0)) {
      reader.Fail(reader.Column(moisture_index),
                  "moisture content " + std::string(reader.Text(moisture_index)) + " is negative",
                  "a moisture content of zero or more");
    }
    const double u = reader.Number(u_index, columns[3].name);
    if (!(u >= 0.0)) {
      reader.Fail(reader.Column(u_index),
                  "uncertainty " + std::string(reader.Text(u_index)) + " is negative",
                  "a standard uncertainty of zero or more");
    }
    point.moisture_kg_per_kg = moisture / moisture_divisor;
    point.u_moisture_kg_per_kg = u / u_divisor;
    if (has_branch) {
      const auto branch_index = static_cast<std::size_t>(columns[4].index);
      const std::string_view text = reader.Text(branch_index);
      if (!internal::ParseBranch(text, &point.branch) || point.branch == Branch::kDrying) {
        reader.Fail(reader.Column(branch_index), "branch '" + std::string(text) + "'",
                    "adsorption or desorption");
      }
    }
    point.line = static_cast<int>(reader.line());
    points.push_back(point);
  }
  if (points.empty()) {
    reader.FailAt(
        reader.line() + 1, 1,
        "no retention points after the header (line " + std::to_string(reader.header_line()) + ")",
        "one line per retention point");
  }
  return points;
}

}  // namespace sorbtrace::ingest
