// The plausibility rules of the ingest stage (see plausibility.h for what, why and bounds).
#include "pipeline/ingest/plausibility.h"

#include <algorithm>
#include <cmath>
#include <cstdlib>
#include <filesystem>
#include <limits>
#include <map>
#include <optional>
#include <string>
#include <system_error>
#include <vector>

#include "fmt/format.h"
#include "pipeline/ingest/csv_reader.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::ingest::internal {
namespace {

// "[[dataset]] 'id' (line N)" or "[retention] (line N)".
std::string EntryName(const DataSetSpec& source, const InputFileRecord& record) {
  const std::string entry =
      record.role == "retention" ? std::string("[retention]") : "[[dataset]] '" + source.id + "'";
  return fmt::format("{} (line {})", entry, source.where.line);
}

std::filesystem::path Canonical(const std::filesystem::path& path) {
  std::error_code ec;
  std::filesystem::path canonical = std::filesystem::weakly_canonical(path, ec);
  return ec ? path.lexically_normal() : canonical;
}

std::string Grams(double mass_g) { return fmt::format("{:.7g} g", mass_g); }

std::string Percent(double fraction) {
  return fmt::format("{:.4g} %", fraction * physics::kPercent);
}

// "file:line" of a reading (streamed readings keep only the line).
std::string Where(const SourceLocation& where, const std::string& file) {
  return fmt::format("{}:{}", where.file.empty() ? file : where.file, where.line);
}

// The column of field `field` on line `line` of the dataset's file (0 when not found): read
// again, on the error path only, for readings whose line was kept without splitting it.
int ColumnOfField(const DataSetSpec& dataset, std::int64_t line, int field) {
  if (field < 0) return 0;
  CsvReader reader(dataset.file, dataset.file.string(), dataset.format.delimiter,
                   dataset.format.decimal_comma);
  reader.ReadHeader();
  while (reader.Next()) {
    if (reader.line() == line) return reader.Column(static_cast<std::size_t>(field));
    if (reader.line() > line) break;
  }
  return 0;
}

// The dry mass R6 compares against: stated, else the smallest mass of the drying steps.
struct DryReference {
  double mass_g = 0.0;
  std::string what;  // where it comes from, for messages
};

std::optional<DryReference> DryReferenceOf(const IngestResult& result,
                                           const SpecimenSpec& specimen) {
  if (specimen.dry_mass_g) {
    return DryReference{*specimen.dry_mass_g,
                        fmt::format("dry_mass_g of [[specimen]] at {}:{}", specimen.where.file,
                                    specimen.where.line)};
  }
  // The drying steps the job's dry-mass method reads: oven weighings for "oven" (any drying
  // step when there are none), every drying step otherwise.
  const bool oven_only = result.job.dry_mass_method == DryMassMethod::kOvenDrying;
  double smallest_oven = std::numeric_limits<double>::infinity();
  double smallest = std::numeric_limits<double>::infinity();
  for (const DesiccatorSeries& series : result.desiccator_series) {
    for (const DesiccatorStep& step : series.steps) {
      if (step.specimen_id != specimen.id || step.branch != Branch::kDrying) continue;
      const bool oven = !step.salt && !step.set_rh_fraction;
      for (const Weighing& weighing : step.weighings) {
        smallest = std::min(smallest, weighing.mass_g);
        if (oven) smallest_oven = std::min(smallest_oven, weighing.mass_g);
      }
    }
  }
  for (const VaporLog& log : result.vapor_logs) {
    if (log.specimen_id != specimen.id) continue;
    for (const VaporLogStep& step : log.steps) {
      if (step.branch != Branch::kDrying) continue;
      for (const LogBlock& block : step.blocks) smallest = std::min(smallest, block.mass_g);
    }
  }
  if (oven_only && std::isfinite(smallest_oven)) {
    return DryReference{smallest_oven, "the smallest mass of its oven drying"};
  }
  if (!std::isfinite(smallest)) return std::nullopt;
  return DryReference{smallest, "the smallest mass of its drying steps"};
}

const DataSetSpec* DataSetOf(const JobSpec& job, const std::string& id) {
  for (const DataSetSpec& dataset : job.datasets) {
    if (dataset.id == id) return &dataset;
  }
  return nullptr;
}

// The location of a reading, with its column found again when the reader kept only the line.
SourceLocation Located(const IngestResult& result, const SpecimenMasses& masses,
                       const MassReading& reading) {
  SourceLocation where = reading.where;
  if (where.file.empty()) where.file = masses.file;
  if (where.column == 0) {
    if (const DataSetSpec* dataset = DataSetOf(result.job, masses.dataset_id)) {
      where.column = ColumnOfField(*dataset, where.line, masses.mass_field);
    }
  }
  return where;
}

// R6 for the largest and the smallest reading against the dry reference.
void CheckMoisture(const IngestResult& result, const SpecimenMasses& masses,
                   const DryReference& dry, double lower_bound) {
  const bool too_high = masses.largest.mass_g / dry.mass_g - 1.0 > kMaxPlausibleMoisture_kg_per_kg;
  const MassReading& reading = too_high ? masses.largest : masses.smallest;
  const double ratio = reading.mass_g / dry.mass_g;
  const double moisture = ratio - 1.0;
  if (!too_high && moisture >= lower_bound) return;
  const std::string mix_up = MassUnitMixUp(ratio);
  std::string message = fmt::format(
      "mass {} in column '{}' of specimen '{}' is {:.4g} times its dry mass {} ({}): a moisture "
      "content of {} dry basis",
      Grams(reading.mass_g), masses.mass_column, masses.specimen_id, ratio, Grams(dry.mass_g),
      dry.what, Percent(moisture));
  if (!mix_up.empty()) message += "; " + mix_up;
  throw InputError(
      Located(result, masses, reading), message,
      fmt::format("a moisture content within {}..{} dry basis (the masses and the dry mass in "
                  "one unit: the column names it, mass_g, mass_mg or mass_ug)",
                  Percent(lower_bound), Percent(kMaxPlausibleMoisture_kg_per_kg)));
}

// R7 for the balance: `value_g` of `key` against the smallest mass weighed.
void CheckBalanceValue(const SpecimenMasses& smallest, std::string_view key, double value_g,
                       const SourceLocation& where) {
  const double limit_g = kMaxBalanceUncertaintyRelative * smallest.smallest.mass_g;
  if (value_g < limit_g) return;
  throw InputError(
      where,
      fmt::format("{} = {} is {} of the smallest mass weighed ({} of specimen '{}', {}){}", key,
                  Grams(value_g), Percent(value_g / smallest.smallest.mass_g),
                  Grams(smallest.smallest.mass_g), smallest.specimen_id,
                  Where(smallest.smallest.where, smallest.file),
                  where.column == 0 ? " (the default: [measurement] does not state it)" : ""),
      fmt::format("{} below 1 % of the smallest mass (below {}): at 1 % one weighing "
                  "exceeds ten times the 0.1 % constant-mass limit of ISO 12571",
                  key, Grams(limit_g)));
}

}  // namespace

// ---- R1 ---------------------------------------------------------------------------------------

void CheckDistinctDataSources(const std::vector<const DataSetSpec*>& sources,
                              const std::vector<InputFileRecord>& records) {
  std::vector<std::filesystem::path> canonical;
  canonical.reserve(sources.size());
  for (const DataSetSpec* source : sources) canonical.push_back(Canonical(source->file));
  for (std::size_t j = 1; j < sources.size(); ++j) {
    for (std::size_t i = 0; i < j; ++i) {
      const bool same_file = canonical[i] == canonical[j];
      if (!same_file && records[i].sha256 != records[j].sha256) continue;
      const std::string what =
          same_file
              ? fmt::format("reads '{}', the file {} reads", sources[j]->file_as_written,
                            EntryName(*sources[i], records[i]))
              : fmt::format("reads '{}', whose bytes are those of '{}' of {} (SHA-256 {})",
                            sources[j]->file_as_written, sources[i]->file_as_written,
                            EntryName(*sources[i], records[i]), records[j].sha256.substr(0, 16));
      throw InputError(sources[j]->where,
                       EntryName(*sources[j], records[j]) + " " + what +
                           ": every reading would be counted twice",
                       "each data file under one entry (a second specimen or temperature "
                       "is a file of its own)");
    }
  }
}

// ---- R2 ---------------------------------------------------------------------------------------

bool StatedRhLooksLikeFraction(double rh_percent) { return rh_percent > 0.0 && rh_percent <= 1.0; }

bool PercentColumnLooksLikeFractions(double max_percent) {
  return max_percent > 0.0 && max_percent <= kMaxFractionLikeRh_percent;
}

// ---- R3 ---------------------------------------------------------------------------------------

UtcOffset UtcOffsetOf(std::string_view iso_text) {
  UtcOffset offset;
  constexpr std::size_t kTimeStart = 10;  // after YYYY-MM-DD
  if (iso_text.size() <= kTimeStart) return offset;
  if (iso_text.back() == 'Z') {
    offset.stated = true;
    return offset;
  }
  const std::size_t sign_at = iso_text.find_first_of("+-", kTimeStart);
  if (sign_at == std::string_view::npos) return offset;
  const std::string_view zone = iso_text.substr(sign_at + 1);
  int digits[4] = {0, 0, 0, 0};
  int n = 0;
  for (char c : zone) {
    if (c >= '0' && c <= '9' && n < 4) digits[n++] = c - '0';
  }
  offset.stated = true;
  offset.minutes = (digits[0] * 10 + digits[1]) * 60 + digits[2] * 10 + digits[3];
  if (iso_text[sign_at] == '-') offset.minutes = -offset.minutes;
  return offset;
}

std::string DescribeUtcOffset(const UtcOffset& offset) {
  if (!offset.stated) return "no UTC offset";
  const int magnitude = std::abs(offset.minutes);
  return fmt::format("UTC offset {}{:02d}:{:02d}", offset.minutes < 0 ? '-' : '+', magnitude / 60,
                     magnitude % 60);
}

std::string UtcOffsetTracker::Add(const UtcOffset& offset, std::int64_t line) {
  if (!has_first_) {
    has_first_ = true;
    first_ = offset;
    first_line_ = line;
    min_ = max_ = Seen{offset, line};
    return {};
  }
  if (offset.stated != first_.stated) {
    return fmt::format(
        "a stamp with {} among stamps with {} (from line {}): the time between "
        "weighings is unknown by the offset",
        DescribeUtcOffset(offset), DescribeUtcOffset(first_), first_line_);
  }
  if (!offset.stated) return {};
  if (offset.minutes < min_.offset.minutes) min_ = Seen{offset, line};
  if (offset.minutes > max_.offset.minutes) max_ = Seen{offset, line};
  if (max_.offset.minutes - min_.offset.minutes > kMaxUtcOffsetSpread_min) {
    const Seen& other = min_.line == line ? max_ : min_;
    return fmt::format(
        "{} is more than 1 h from {} of line {}: two clocks, not a "
        "daylight-saving change",
        DescribeUtcOffset(offset), DescribeUtcOffset(other.offset), other.line);
  }
  return {};
}

// ---- R6 ---------------------------------------------------------------------------------------

std::string MassUnitMixUp(double ratio) {
  if (!(ratio > 0.0)) return {};
  const double decades = std::log10(ratio);
  // Within a factor sqrt(10) of the ratio of two mass units.
  constexpr double kHalfDecade = 0.5;
  if (std::abs(decades - 3.0) <= kHalfDecade) {
    return "about 1000 times: masses in mg under a g column (or the dry mass in kg)?";
  }
  if (std::abs(decades - 6.0) <= kHalfDecade) {
    return "about 10^6 times: masses in ug under a g column?";
  }
  if (std::abs(decades + 3.0) <= kHalfDecade) {
    return "about 1/1000: masses in g under a mg column, or the dry mass in mg?";
  }
  if (std::abs(decades + 6.0) <= kHalfDecade) {
    return "about 1/10^6: masses in g under a ug column, or the dry mass in ug?";
  }
  return {};
}

void SpecimenMasses::Add(double mass_g, const SourceLocation& where) {
  if (!has_value_ || mass_g < smallest.mass_g) smallest = MassReading{mass_g, where};
  if (!has_value_ || mass_g > largest.mass_g) largest = MassReading{mass_g, where};
  has_value_ = true;
}

// ---- R6 and R7 across files ------------------------------------------------------------------

void CheckAcrossFiles(const IngestResult& result, const std::vector<SpecimenMasses>& masses) {
  const JobSpec& job = result.job;
  const double lower_bound = job.negative_moisture_expected
                                 ? kMinMoistureWhenNegativeExpected_kg_per_kg
                                 : kMinPlausibleMoisture_kg_per_kg;
  for (const SpecimenSpec& specimen : job.specimens) {
    const std::optional<DryReference> dry = DryReferenceOf(result, specimen);
    if (!dry) continue;
    for (const SpecimenMasses& m : masses) {
      if (m.specimen_id != specimen.id || m.empty()) continue;
      CheckMoisture(result, m, *dry, lower_bound);
    }
  }
  const SpecimenMasses* smallest = nullptr;
  for (const SpecimenMasses& m : masses) {
    if (!m.empty() && (smallest == nullptr || m.smallest.mass_g < smallest->smallest.mass_g)) {
      smallest = &m;
    }
  }
  if (smallest == nullptr) return;
  CheckBalanceValue(*smallest, "balance_standard_uncertainty_g", job.balance_standard_uncertainty_g,
                    job.balance_uncertainty_where);
  CheckBalanceValue(*smallest, "balance_resolution_g", job.balance_resolution_g,
                    job.balance_resolution_where);
}

}  // namespace sorbtrace::ingest::internal
