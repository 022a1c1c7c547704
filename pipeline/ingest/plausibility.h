// Internal to the ingest stage: the plausibility rules. A file can be well formed and still
// describe nothing a balance or a sensor could have measured: a unit mix-up, a data file named
// twice, a frozen instrument, an uncertainty larger than the quantity. Each rule below says
// what it checks, why, its bound and the source of the bound; it lives here and nowhere else.
// The readers call the row and file rules while they read (they know line and column); Ingest()
// calls CheckAcrossFiles() once every file is read. A rule either throws InputError (exit 3,
// nothing written) or adds a warning that the datasheet lists under its cautions.
//
// Rule                          | what is refused                                    | kind
// ------------------------------|----------------------------------------------------|--------
// R1 distinct data sources      | one file (path or bytes) under two data entries    | error
// R2 RH fraction under percent  | rh:0.5% atmospheres; a percent RH column <= 1.5    | error
// R3 one clock per specimen     | stamps with and without UTC offset; offsets > 1 h  | error
// R4 smallest mass              | masses below 1 ng (subnormal numbers included)     | error
// R5 frozen instrument          | one mass for a whole specimen or log; one RH for a | error
//                               | whole log | a frozen step, a frozen thermometer    | warning
// R6 moisture content and scale | CSV masses ~1000x the dry mass; moisture > 500 %   | error
//                               | or < -1 % dry basis                                |
// R7 uncertainty inputs         | RH u > 10 %RH, temperature u > 5 K, balance u or   | error
//                               | resolution >= 1 % of the smallest mass             |
#pragma once

#include <cstdint>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest::internal {

// ---- R1 distinct data sources --------------------------------------------------------------
// What: no two [[dataset]] entries (or a dataset and [retention]) may read the same file, found
// by its canonical path, nor two files with the same bytes (SHA-256).
// Why: every weighing would be counted twice; the between-specimen spread and the standard
// uncertainties of the combined points shrink by sqrt(2) and the sheet claims a precision that
// was never measured.
// `sources` are the data files in job order (datasets, then retention), `records` their input
// records (same order, with SHA-256). Throws InputError at the second entry.
void CheckDistinctDataSources(const std::vector<const DataSetSpec*>& sources,
                              const std::vector<InputFileRecord>& records);

// ---- R2 RH written as a fraction under a percent unit --------------------------------------
// What: a stated desiccator atmosphere "rh:X%" with 0 < X <= 1, and a vapour-log RH column in
// percent whose values are all <= 1.5 although some set point is above zero.
// Why: 0.113 read as percent instead of 11.3 % puts every point at the dry end of the isotherm;
// the fit then extrapolates over the whole range (moisture at 50 % RH of 10^7 %).
// Bound: a fraction never exceeds 1 (a sensor may read up to ~1.02 at saturation; 1.5 leaves
// room for that and for a calibration offset); humidity steps between 0 and 1.5 % RH other
// than a dry step (desiccant, rh:0%) are not used in sorption tests (common practice: the lowest
// saturated salt of ISO 12571 practice is LiCl at 11 %).
inline constexpr double kMaxFractionLikeRh_percent = 1.5;
bool StatedRhLooksLikeFraction(double rh_percent);
// max_percent: the largest value of the column; a column of zeros (a drying-only log) is not
// suspicious.
bool PercentColumnLooksLikeFractions(double max_percent);

// ---- R3 one clock per specimen --------------------------------------------------------------
// What: the ISO 8601 stamps of one specimen's weighings either all carry a UTC offset or none
// does, and their offsets differ by at most 1 h.
// Why: a stamp without offset is taken as written; mixed with stamps that have one, the time
// between weighings (the 24 h of the constant-mass criterion) is off by the offset, and steps
// are judged "not equilibrated" or equilibrated on the wrong interval.
// Bound: a daylight-saving change moves a civil clock by 1 h (30 min on Lord Howe Island; IANA
// time-zone database, from memory), so offsets within 1 h of each other are a clock that
// changed to or from summer time; anything more is two clocks.
inline constexpr int kMaxUtcOffsetSpread_min = 60;
struct UtcOffset {
  bool stated = false;  // the stamp carries Z or +hh:mm
  int minutes = 0;      // east of UTC
};
// The offset written at the end of an ISO 8601 date-time (as accepted by ParseDateTime).
UtcOffset UtcOffsetOf(std::string_view iso_text);
std::string DescribeUtcOffset(const UtcOffset& offset);  // "no UTC offset", "UTC offset +02:00"

// Tracks the offsets of one specimen; Add() returns the problem (empty when consistent).
class UtcOffsetTracker {
 public:
  std::string Add(const UtcOffset& offset, std::int64_t line);

 private:
  struct Seen {
    UtcOffset offset;
    std::int64_t line = 0;
  };
  bool has_first_ = false;
  UtcOffset first_;
  std::int64_t first_line_ = 0;
  Seen min_;  // smallest and largest offset so far
  Seen max_;
};

// ---- R4 smallest mass -----------------------------------------------------------------------
// What: every mass, after conversion to grams, is at least 1 ng.
// Why: a subnormal or vanishing mass passes "above zero" but turns every moisture content into
// an overflow; no balance weighs it.
// Bound: 1e-9 g, three decimals below the smallest unit a file may declare (ug); the best
// sorption microbalances resolve 0.1 ug (from memory).
inline constexpr double kMinPlausibleMass_g = 1e-9;

// ---- R5 frozen instrument --------------------------------------------------------------------
// What: (a) every weighing of a specimen over two or more steps, or every row of a vapour log
// over two or more set points, reads the same mass: error. (b) The measured RH of a vapour log
// is one value over two or more set points: error. (c) A vapour-log step of at least
// kMinRowsForFrozenStep rows whose mass never changes, or whose measured RH never changes and
// equals the last reading of the step before although the set point moved: warning. (d) One
// temperature over a whole log of at least kMinRowsForFrozenStep rows and two steps: warning.
// Why: a specimen that neither gains nor loses a digit when the humidity changes is not being
// weighed (a balance that lost its connection repeats its last value); a fitted isotherm of such
// data describes the logger, not the material.
// Bound: steps of kMinRowsForFrozenStep rows or more; a working balance or sensor shows at least
// its last digit changing over that many readings across a humidity change (common practice).
// Vapour logs are judged on their block means (IngestOptions::log_block_s), off the per-row
// path: varying readings give block means that differ.
inline constexpr std::int64_t kMinRowsForFrozenStep = 10;

// Whether a reading stayed exactly the same since the first value.
struct ConstancyTracker {
  double first = 0.0;
  bool constant = true;
  void Start(double value) {
    first = value;
    constant = true;
  }
  void Add(double value) { constant &= value == first; }
  // Folds in the tracker of a later stretch (the next step of a log).
  void Merge(const ConstancyTracker& later) {
    constant = constant && later.constant && later.first == first;
  }
};

// ---- R6 moisture content and mass scale -----------------------------------------------------
// What: each weighed mass m of a specimen, against its dry mass m_dry (the stated dry_mass_g,
// else the smallest mass of its oven drying for dry_mass_method "oven", else the smallest mass
// of its drying steps): u = m / m_dry - 1 must lie within
// [kMinPlausibleMoisture_kg_per_kg, kMaxPlausibleMoisture_kg_per_kg]. A ratio m / m_dry near
// 10^3 or 10^6 (or their inverses) is named as a mass-unit mix-up (mg or ug under a g header).
// Why: masses in mg under a "mass_g" header with the dry mass in g give moisture contents of
// 10^5 % and pore volumes of 10^6 mm3/g.
// Bound: hygroscopic moisture contents stay below 100 % dry basis for building materials, wood,
// foods and excipients, and below a few hundred percent for hydrogels and superabsorbents at
// 98 % RH; 500 % is beyond any of them (common practice). Below the dry mass by more than 1 %
// is more than any oven-drying or balance error (common practice); a job that expects it
// (negative_moisture_expected) is held to -50 %: no sorption specimen loses half its dry mass.
inline constexpr double kMaxPlausibleMoisture_kg_per_kg = 5.0;
inline constexpr double kMinPlausibleMoisture_kg_per_kg = -0.01;
inline constexpr double kMinMoistureWhenNegativeExpected_kg_per_kg = -0.5;
// Names the unit mix-up a mass ratio points to ("" when none): within a factor sqrt(10) of
// 10^3 or 10^6 or of their inverses.
std::string MassUnitMixUp(double ratio);

// ---- R7 uncertainty inputs ------------------------------------------------------------------
// What: the standard uncertainties of [measurement] within what the instruments can have.
// Why: a 1000 %RH sensor uncertainty or a 1000 g balance uncertainty makes every interval on
// the sheet meaningless while it still looks signed.
// Bounds: RH sensors of sorption tests have standard uncertainties of 0.5-3 %RH (capacitive
// sensors, chilled-mirror references; common practice): 10 %RH is the most a result can carry.
// Temperature: a thermostat of a sorption test holds +-0.1-0.5 K (ISO 12571 asks +-0.5 K, from
// memory); 5 K is the most. Balance uncertainty and resolution: below 1 % of the smallest mass
// weighed, since at 1 % one weighing is ten times the 0.1 % constant-mass limit of ISO 12571.
inline constexpr double kMaxRhSensorUncertainty_percent = 10.0;
inline constexpr double kMaxTemperatureUncertainty_K = 5.0;
inline constexpr double kMaxBalanceUncertaintyRelative = 0.01;

// ---- What the readers gather for the rules across files --------------------------------------
struct MassReading {
  double mass_g = 0.0;
  SourceLocation where;  // file:line:column of the mass cell
};
// One specimen in one file: its smallest and largest mass and the mass column's name.
struct SpecimenMasses {
  std::string specimen_id;
  std::string dataset_id;
  std::string file;         // as errors name it (the resolved path)
  std::string mass_column;  // header name, e.g. "mass_g"
  int mass_field = -1;      // index of the mass field in a record
  MassReading smallest;
  MassReading largest;
  // A reading with its cell's location.
  void Add(double mass_g, const SourceLocation& where);
  // A reading of a line that was not split into fields (streamed logs): only its line is kept
  // (no string per row); file and column are filled in when a rule reports it.
  void Add(double mass_g, std::int64_t line) {
    if (!has_value_ || mass_g < smallest.mass_g) {
      smallest.mass_g = mass_g;
      smallest.where.line = static_cast<int>(line);
    }
    if (!has_value_ || mass_g > largest.mass_g) {
      largest.mass_g = mass_g;
      largest.where.line = static_cast<int>(line);
    }
    has_value_ = true;
  }
  bool empty() const { return !has_value_; }

 private:
  bool has_value_ = false;
};

// Readers that also gather the masses (the public ones of ingest.h call these with nullptr).
DesiccatorSeries ReadDesiccatorSeries(const JobSpec& job, const DataSetSpec& dataset,
                                      std::vector<SpecimenMasses>* masses);
// balance_standard_uncertainty_g: the job's [measurement] value (the public reader: JobSpec's
// default), for the branch of the log's first step (VaporLogStep::branch).
VaporLog ReadVaporLog(const DataSetSpec& dataset, const IngestOptions& options,
                      double balance_standard_uncertainty_g, IngestSummary* summary,
                      std::vector<SpecimenMasses>* masses);

// R6 and R7 (balance) on everything read; throws InputError for the first violation.
void CheckAcrossFiles(const IngestResult& result, const std::vector<SpecimenMasses>& masses);

}  // namespace sorbtrace::ingest::internal
