// Streaming reader of continuous vapour-sorption logs: one pass, one chunk in memory,
// segmentation into set-point steps with running statistics and block means.
#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>
#include <utility>
#include <vector>

#include "fmt/format.h"
#include "pipeline/ingest/csv_reader.h"
#include "pipeline/ingest/ingest.h"
#include "pipeline/ingest/plausibility.h"
#include "pipeline/physics/physics.h"

namespace sorbtrace::ingest {
namespace {

using internal::ColumnRole;

// Two set points closer than this (as RH fractions) are the same step: far below any
// controller resolution (0.1 % RH), far above the rounding of a written percentage.
constexpr double kSetPointTolerance_fraction = 1e-9;
// At most this many gap warnings per file are listed one by one; the rest are counted.
constexpr int kMaxGapWarnings = 20;

// Running mean and variance from sums shifted by the first value (Chan, Golub & LeVeque 1983,
// Am. Stat. 37, 242, "shifted data" algorithm): as accurate as Welford's update while the
// values stay near the first one (a sensor within one step), and free of divisions per row.
struct RunningStats {
  std::int64_t n = 0;
  double shift = 0.0;
  double sum = 0.0;     // of (x - shift)
  double sum_sq = 0.0;  // of (x - shift)^2
  void Add(double x) {
    if (n == 0) shift = x;
    const double d = x - shift;
    ++n;
    sum += d;
    sum_sq += d * d;
  }
  double Mean() const { return n > 0 ? shift + sum / static_cast<double>(n) : 0.0; }
  double StandardDeviation() const {
    if (n < 2) return 0.0;
    const double nd = static_cast<double>(n);
    const double m2 = sum_sq - sum * sum / nd;
    return m2 > 0.0 ? std::sqrt(m2 / (nd - 1.0)) : 0.0;
  }
};

class StepBuilder {
 public:
  explicit StepBuilder(double block_s) : block_s_(block_s) {}

  void Begin(int index, double set_rh, Branch branch, int cycle, double t, std::int64_t line) {
    step_ = VaporLogStep{};
    step_.step_index = index;
    step_.set_rh_fraction = set_rh;
    step_.branch = branch;
    step_.cycle = cycle;
    step_.start_time_s = t;
    step_.first_line = line;
    rh_ = RunningStats{};
    temperature_ = RunningStats{};
    next_block_start_s_ = t + block_s_;
    ResetBlock();
  }

  void Add(double t, double rh, double temperature_K, double mass_g, std::int64_t line) {
    if (t >= next_block_start_s_) {  // rows are in time order: only ever a later block
      FlushBlock();
      const double index = std::floor((t - step_.start_time_s) / block_s_);
      next_block_start_s_ = step_.start_time_s + (index + 1.0) * block_s_;
    }
    sum_t_ += t;
    sum_mass_ += mass_g;
    sum_rh_ += rh;
    sum_temperature_ += temperature_K;
    ++block_rows_;
    rh_.Add(rh);
    temperature_.Add(temperature_K);
    step_.end_time_s = t;
    step_.last_line = line;
    ++step_.num_rows;
  }

  VaporLogStep Finish() {
    FlushBlock();
    step_.rh_measured_mean_fraction = rh_.Mean();
    step_.rh_measured_std_fraction = rh_.StandardDeviation();
    step_.temperature_mean_K = temperature_.Mean();
    step_.temperature_std_K = temperature_.StandardDeviation();
    return std::move(step_);
  }

  const VaporLogStep& step() const { return step_; }

 private:
  void ResetBlock() {
    sum_t_ = sum_mass_ = sum_rh_ = sum_temperature_ = 0.0;
    block_rows_ = 0;
  }
  void FlushBlock() {
    if (block_rows_ == 0) return;
    const auto n = static_cast<double>(block_rows_);
    step_.blocks.push_back(
        LogBlock{sum_t_ / n, sum_mass_ / n, sum_rh_ / n, sum_temperature_ / n, block_rows_});
    ResetBlock();
  }

  double block_s_;
  VaporLogStep step_;
  RunningStats rh_;
  RunningStats temperature_;
  double next_block_start_s_ = 0.0;  // start time of the block after the current one
  double sum_t_ = 0.0, sum_mass_ = 0.0, sum_rh_ = 0.0, sum_temperature_ = 0.0;
  std::int32_t block_rows_ = 0;
};

std::string FormatValue(double value) { return fmt::format("{:g}", value); }

// Coverage factor of the test "the first step's mass changed" (FirstStepBranch): k = 2, about
// 95 % for a normal distribution (JCGM 100:2008, 6.3.3).
constexpr double kMassChangeCoverageFactor = 2.0;

// The branch of a log's first step (the rule is stated at VaporLogStep::branch, ingest.h). No
// earlier set point tells which way the specimen went, so the step's own trace decides: the
// change from its first to its last block mean, significant when larger than k u with
// u = sqrt(2) u_balance (two readings, each block mean taken as no better than one reading:
// balance drift does not average out). Within that, the direction of the next set point (a
// lower one: the log dries from here, desorption); without a next step, adsorption.
Branch FirstStepBranch(const VaporLogStep& first, const VaporLogStep* next,
                       double balance_standard_uncertainty_g) {
  if (first.set_rh_fraction <= kSetPointTolerance_fraction) return Branch::kDrying;
  const double change_g = first.blocks.back().mass_g - first.blocks.front().mass_g;
  const double u_change_g = std::sqrt(2.0) * balance_standard_uncertainty_g;
  if (std::abs(change_g) > kMassChangeCoverageFactor * u_change_g) {
    return change_g < 0.0 ? Branch::kDesorption : Branch::kAdsorption;
  }
  if (next != nullptr && next->set_rh_fraction < first.set_rh_fraction) {
    return Branch::kDesorption;
  }
  return Branch::kAdsorption;
}

// Numbers the adsorption/desorption cycles of a log (VaporLogStep::cycle): a new cycle begins
// each time the log comes back to the branch of its first wet step after the other branch;
// drying steps keep the cycle they fall in.
class CycleCounter {
 public:
  int Enter(Branch branch) {
    if (branch == Branch::kDrying) return cycle_;
    if (first_wet_ == Branch::kDrying) {
      first_wet_ = branch;
    } else if (branch == first_wet_ && last_wet_ != first_wet_) {
      ++cycle_;
    }
    last_wet_ = branch;
    return cycle_;
  }

 private:
  Branch first_wet_ = Branch::kDrying;  // kDrying: no wet step yet
  Branch last_wet_ = Branch::kDrying;
  int cycle_ = 0;
};

// "step 3 (set 40 %RH, lines 120-250)".
std::string DescribeStep(const VaporLogStep& step) {
  return fmt::format("step {} (set {:g} %RH, lines {}-{})", step.step_index + 1,
                     step.set_rh_fraction * physics::kPercent, step.first_line, step.last_line);
}

// Plausibility rule R5 (plausibility.h): whether the mass, measured RH and temperature of a
// finished step never changed. Read from the block means, off the per-row path: readings that
// vary give block means that differ (equal means of varying rows would need every block's sum
// to agree to the last bit).
struct StepReadings {
  internal::ConstancyTracker mass;
  internal::ConstancyTracker rh;
  internal::ConstancyTracker temperature;
};

StepReadings ReadingsOf(const VaporLogStep& step) {
  StepReadings readings;
  const LogBlock& first = step.blocks.front();  // a step has at least one row
  readings.mass.Start(first.mass_g);
  readings.rh.Start(first.rh_measured_fraction);
  readings.temperature.Start(first.temperature_K);
  for (const LogBlock& block : step.blocks) {
    readings.mass.Add(block.mass_g);
    readings.rh.Add(block.rh_measured_fraction);
    readings.temperature.Add(block.temperature_K);
  }
  return readings;
}

// R5 warnings for one step of at least kMinRowsForFrozenStep rows; `previous` is the step
// before (null for the first). `where` is the mass cell of the step's first row.
void WarnAboutFrozenStep(const VaporLog& log, const VaporLogStep& step,
                         const StepReadings& readings, const VaporLogStep* previous,
                         const SourceLocation& where, IngestSummary* summary) {
  if (step.num_rows < internal::kMinRowsForFrozenStep) return;
  if (readings.mass.constant) {
    summary->warnings.push_back(Diagnostic{
        Severity::kWarning, where,
        fmt::format("vapour log {}, {}: the mass reads {:.7g} g throughout its {} rows (a frozen "
                    "balance?); the equilibrium mass of this step is a repeated reading, not a "
                    "measurement",
                    log.file, DescribeStep(step), readings.mass.first, step.num_rows),
        "a balance reading that changes within a humidity step"});
  }
  if (readings.rh.constant && previous != nullptr &&
      readings.rh.first == previous->blocks.back().rh_measured_fraction &&
      step.set_rh_fraction != previous->set_rh_fraction) {
    summary->warnings.push_back(Diagnostic{
        Severity::kWarning, where,
        fmt::format("vapour log {}, {}: the measured RH stays at {:g} %, the last reading of the "
                    "step before, throughout its {} rows although the set point moved from {:g} % "
                    "(a frozen sensor?); the RH of this step is not measured",
                    log.file, DescribeStep(step), readings.rh.first * physics::kPercent,
                    step.num_rows, previous->set_rh_fraction * physics::kPercent),
        "a measured RH that follows the set point"});
  }
}

}  // namespace

VaporLog ReadVaporLog(const DataSetSpec& dataset, const IngestOptions& options,
                      IngestSummary* summary) {
  return internal::ReadVaporLog(dataset, options, JobSpec{}.balance_standard_uncertainty_g, summary,
                                nullptr);
}

VaporLog internal::ReadVaporLog(const DataSetSpec& dataset, const IngestOptions& options,
                                double balance_standard_uncertainty_g, IngestSummary* summary,
                                std::vector<SpecimenMasses>* masses) {
  const CsvFormat& format = dataset.format;
  const std::string display = dataset.file.string();
  CsvReader reader(dataset.file, display, format.delimiter, format.decimal_comma);
  const std::vector<internal::CsvField> header = reader.ReadHeader();
  const std::vector<ColumnRole> roles = {
      {"elapsed time",
       true,
       {{"elapsed_s", "s"}, {"elapsed_min", "min"}, {"elapsed_h", "h"}, {"elapsed", ""}},
       format.time_unit,
       "time_unit"},
      {"set-point RH",
       true,
       {{"set_rh_percent", "percent"}, {"set_rh_fraction", "fraction"}, {"set_rh", ""}},
       format.rh_unit,
       "rh_unit"},
      {"measured RH",
       true,
       {{"measured_rh_percent", "percent"},
        {"measured_rh_fraction", "fraction"},
        {"measured_rh", ""}},
       format.rh_unit,
       "rh_unit"},
      {"temperature",
       true,
       {{"temperature_C", "C"}, {"temperature_K", "K"}, {"temperature", ""}},
       format.temperature_unit,
       "temperature_unit"},
      {"mass",
       true,
       {{"mass_g", "g"}, {"mass_mg", "mg"}, {"mass_ug", "ug"}, {"mass", ""}},
       format.mass_unit,
       "mass_unit"},
  };
  const auto columns = internal::MapHeader(reader, roles);
  const auto time_index = static_cast<std::size_t>(columns[0].index);
  const auto set_index = static_cast<std::size_t>(columns[1].index);
  const auto rh_index = static_cast<std::size_t>(columns[2].index);
  const auto temperature_index = static_cast<std::size_t>(columns[3].index);
  const auto mass_index = static_cast<std::size_t>(columns[4].index);
  std::string names[5];  // header names in field order
  for (const auto& column : columns) names[column.index] = column.name;
  const internal::UnitScale time_scale = internal::TimeUnitToSecond(columns[0].unit);
  const internal::UnitScale set_scale = internal::RhUnitToFraction(columns[1].unit);
  const internal::UnitScale rh_scale = internal::RhUnitToFraction(columns[2].unit);
  const internal::UnitScale temperature_scale = internal::TemperatureUnitToKelvin(columns[3].unit);
  const internal::UnitScale mass_scale = internal::MassUnitToGram(columns[4].unit);
  const std::string rh_range = columns[2].unit == "percent" ? "0..100 %" : "0..1";
  const std::string set_range = columns[1].unit == "percent" ? "0..100 %" : "0..1";

  // Plausibility rules R2, R4 and R5 (plausibility.h).
  std::vector<SourceLocation> step_mass_cells;  // mass cell of the first row of each step
  SourceLocation second_step_rh;                // measured-RH cell of the first row of step 2
  internal::SpecimenMasses* gathered = nullptr;
  if (masses != nullptr) {
    masses->emplace_back();
    gathered = &masses->back();
    gathered->specimen_id = dataset.specimen_id;
    gathered->dataset_id = dataset.id;
    gathered->file = display;
    gathered->mass_column = columns[4].name;
    gathered->mass_field = columns[4].index;
  }

  VaporLog log;
  log.dataset_id = dataset.id;
  log.file = dataset.file_as_written.empty() ? display : dataset.file_as_written;
  log.specimen_id = dataset.specimen_id;

  StepBuilder builder(options.log_block_s);
  bool in_step = false;
  double previous_t = 0.0;
  std::int64_t previous_line = 0;
  double current_set = 0.0;
  CycleCounter cycles;
  // Once the first step has ended: its branch from its own trace and the next set point.
  const auto settle_first_step = [&](const VaporLogStep* next) {
    VaporLogStep& first = log.steps.front();
    first.branch = FirstStepBranch(first, next, balance_standard_uncertainty_g);
    first.cycle = cycles.Enter(first.branch);
  };
  int num_gaps = 0;

  double values[5];    // in header order
  bool split = false;  // whether reader.fields() holds the current record
  // The current record split into fields, for messages that name a column.
  auto fields = [&]() -> const CsvReader& {
    if (!split) {
      reader.SplitCurrentLine();
      split = true;
    }
    return reader;
  };
  for (;;) {
    const CsvReader::Record record = reader.NextNumbers(values);
    if (record == CsvReader::Record::kEnd) break;
    split = record == CsvReader::Record::kFields;
    if (split) {
      for (std::size_t i = 0; i < 5; ++i) {
        values[i] = reader.Number(i, names[i]);
      }
    }
    const double t = time_scale.ToSi(values[time_index]);
    const double set_raw = values[set_index];
    const double rh_raw = values[rh_index];
    const double temperature_raw = values[temperature_index];
    const double mass_raw = values[mass_index];
    const double set_rh = set_scale.ToSi(set_raw);
    const double rh = rh_scale.ToSi(rh_raw);
    const double temperature_K = temperature_scale.ToSi(temperature_raw);
    const double mass_g = mass_scale.ToSi(mass_raw);

    if (in_step || log.num_rows > 0) {
      if (t <= previous_t) {
        const std::string was = fmt::format("line {}", previous_line);
        if (t == previous_t) {
          reader.Fail(fields().Column(time_index),
                      "duplicate time stamp: " + std::string(fields().Text(time_index)) +
                          " in column '" + columns[0].name + "' repeats that of " + was,
                      "strictly increasing elapsed times");
        }
        reader.Fail(fields().Column(time_index),
                    "time goes backwards: " + std::string(fields().Text(time_index)) +
                        " in column '" + columns[0].name + "' is earlier than on " + was,
                    "strictly increasing elapsed times");
      }
      if (t - previous_t > options.log_gap_warning_s) {
        ++num_gaps;
        if (summary != nullptr && num_gaps <= kMaxGapWarnings) {
          summary->warnings.push_back(Diagnostic{
              Severity::kWarning, fields().Where(fields().Column(time_index)),
              fmt::format("gap of {} s in the log after line {}", FormatValue(t - previous_t),
                          previous_line),
              fmt::format("readings at most {} s apart", FormatValue(options.log_gap_warning_s))});
        }
      }
    }
    if (!(set_rh >= 0.0 && set_rh <= 1.0)) {
      reader.Fail(fields().Column(set_index),
                  "set-point RH " + std::string(fields().Text(set_index)) + " in column '" +
                      columns[1].name + "' is outside " + set_range,
                  "a relative humidity within " + set_range);
    }
    if (!(rh >= 0.0 && rh <= 1.0)) {
      reader.Fail(fields().Column(rh_index),
                  "measured RH " + std::string(fields().Text(rh_index)) + " in column '" +
                      columns[2].name + "' is outside " + rh_range,
                  "a relative humidity within " + rh_range);
    }
    if (!(temperature_K >= kMinPlausibleTemperature_K &&
          temperature_K <= kMaxPlausibleTemperature_K)) {
      reader.Fail(fields().Column(temperature_index),
                  "temperature " + std::string(fields().Text(temperature_index)) + " in column '" +
                      columns[3].name + "' is implausible for a sorption test",
                  "a temperature within -50..150 degC (223.15..423.15 K)");
    }
    if (!(mass_g > 0.0)) {
      reader.Fail(fields().Column(mass_index),
                  "mass " + std::string(fields().Text(mass_index)) + " in column '" +
                      columns[4].name + "' is not positive",
                  "a balance reading above zero");
    }
    if (mass_g < internal::kMinPlausibleMass_g) {  // plausibility rule R4
      reader.Fail(fields().Column(mass_index),
                  "mass " + std::string(fields().Text(mass_index)) + " in column '" +
                      columns[4].name + "' is below 1 ng: no balance weighs it",
                  "a balance reading of at least 1 ng (1e-9 g)");
    }

    if (!in_step || std::abs(set_rh - current_set) > kSetPointTolerance_fraction) {
      Branch branch = Branch::kAdsorption;
      if (set_rh <= kSetPointTolerance_fraction) {
        branch = Branch::kDrying;
      } else if (in_step && set_rh < current_set) {
        branch = Branch::kDesorption;
      }
      if (in_step) {
        log.steps.push_back(builder.Finish());
      }
      int cycle = 0;  // the first step: settled when it ends
      if (!log.steps.empty()) {
        if (log.steps.size() == 1) {
          VaporLogStep next;
          next.set_rh_fraction = set_rh;
          settle_first_step(&next);
        }
        cycle = cycles.Enter(branch);
      }
      builder.Begin(static_cast<int>(log.steps.size()), set_rh, branch, cycle, t, reader.line());
      step_mass_cells.push_back(fields().Where(fields().Column(mass_index)));
      if (log.steps.size() == 1) second_step_rh = fields().Where(fields().Column(rh_index));
      current_set = set_rh;
      in_step = true;
    }
    builder.Add(t, rh, temperature_K, mass_g, reader.line());
    if (gathered != nullptr) gathered->Add(mass_g, reader.line());
    previous_t = t;
    previous_line = reader.line();
    ++log.num_rows;
  }
  if (!in_step) {
    reader.FailAt(
        reader.line() + 1, 1,
        "no data lines after the header (line " + std::to_string(reader.header_line()) + ")",
        "at least one reading per line");
  }
  log.steps.push_back(builder.Finish());
  if (log.steps.size() == 1) settle_first_step(nullptr);

  // Plausibility rule R2: RH fractions under a percent column.
  const auto fail_fractions = [&](const internal::MappedColumn& column, std::string message) {
    reader.FailAt(reader.header_line(), header[static_cast<std::size_t>(column.index)].column,
                  std::move(message),
                  "RH in percent in a percent column (11.3 for 0.113), or the fractions in a "
                  "*_fraction column (rh_unit = \"fraction\" for a bare column name)");
  };
  // The largest set point and block-mean measured RH, in the column's unit (the range checks
  // keep them >= 0). Block means, not rows: a percent column has block means near its set
  // points, fractions never exceed 1.
  double max_set_fraction = 0.0;
  double max_rh_fraction = 0.0;
  for (const VaporLogStep& step : log.steps) {
    max_set_fraction = std::max(max_set_fraction, step.set_rh_fraction);
    for (const LogBlock& block : step.blocks) {
      max_rh_fraction = std::max(max_rh_fraction, block.rh_measured_fraction);
    }
  }
  constexpr double kPercentPerFraction = physics::kPercent;
  const double max_set_percent = max_set_fraction * kPercentPerFraction;
  const double max_rh_raw = max_rh_fraction * kPercentPerFraction;
  if (columns[1].unit == "percent" && internal::PercentColumnLooksLikeFractions(max_set_percent)) {
    fail_fractions(
        columns[1],
        fmt::format("every set point in column '{}' is at most {:g} % (largest {:g}): "
                    "fractions in a percent column?",
                    columns[1].name, internal::kMaxFractionLikeRh_percent, max_set_percent));
  }
  if (columns[2].unit == "percent" && internal::PercentColumnLooksLikeFractions(max_rh_raw) &&
      max_set_percent > internal::kMaxFractionLikeRh_percent) {
    fail_fractions(columns[2],
                   fmt::format("the measured RH in column '{}' stays at or below {:g} % (largest "
                               "block mean {:.4g}) while the set points reach {:g} %: fractions "
                               "in a percent column?",
                               columns[2].name, internal::kMaxFractionLikeRh_percent, max_rh_raw,
                               max_set_percent));
  }

  // Plausibility rule R5: frozen steps (warnings), then the whole log (errors).
  const std::size_t num_steps = log.steps.size();
  StepReadings whole_log;
  for (std::size_t i = 0; i < num_steps; ++i) {
    const StepReadings readings = ReadingsOf(log.steps[i]);
    if (summary != nullptr) {
      WarnAboutFrozenStep(log, log.steps[i], readings, i > 0 ? &log.steps[i - 1] : nullptr,
                          step_mass_cells[i], summary);
    }
    if (i == 0) {
      whole_log = readings;
    } else {
      whole_log.mass.Merge(readings.mass);
      whole_log.rh.Merge(readings.rh);
      whole_log.temperature.Merge(readings.temperature);
    }
  }
  const internal::ConstancyTracker& log_mass = whole_log.mass;
  const internal::ConstancyTracker& log_rh = whole_log.rh;
  const internal::ConstancyTracker& log_temperature = whole_log.temperature;
  if (num_steps >= 2 && log_mass.constant) {
    throw InputError(
        step_mass_cells[1],
        fmt::format("the mass reads {:.7g} g throughout all {} rows over {} set points: no "
                    "uptake or loss at any humidity (a frozen balance or a copied "
                    "column)",
                    log_mass.first, log.num_rows, num_steps),
        "a mass log that follows the humidity steps");
  }
  if (num_steps >= 2 && log_rh.constant) {
    throw InputError(
        second_step_rh,
        fmt::format("the measured RH reads {:g} % throughout all {} rows over {} set points "
                    "(a frozen sensor)",
                    log_rh.first * physics::kPercent, log.num_rows, num_steps),
        "a measured RH that follows the set point");
  }
  if (summary != nullptr && num_steps >= 2 && log.num_rows >= internal::kMinRowsForFrozenStep &&
      log_temperature.constant) {
    summary->warnings.push_back(Diagnostic{
        Severity::kWarning, SourceLocation{display, static_cast<int>(log.steps[0].first_line), 0},
        fmt::format(
            "vapour log {}: the temperature reads {:g} degC throughout all {} rows (a frozen "
            "sensor or a logged set point); the test temperature is not measured",
            log.file, physics::KelvinToCelsius(log_temperature.first), log.num_rows),
        "a temperature reading that shows its sensor's noise"});
  }
  if (summary != nullptr && num_gaps > kMaxGapWarnings) {
    summary->warnings.push_back(
        Diagnostic{Severity::kWarning, SourceLocation{display, 0, 0},
                   fmt::format("{} more gaps longer than {} s in the log",
                               num_gaps - kMaxGapWarnings, FormatValue(options.log_gap_warning_s)),
                   ""});
  }
  return log;
}

}  // namespace sorbtrace::ingest
