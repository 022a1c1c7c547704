// Ingest stage: reads what a lab records — the job file (TOML), desiccator weighings (CSV),
// continuous vapour-sorption mass logs (CSV, streamed: millions of rows) and optional
// over-hygroscopic retention points (CSV) — into plain value types. Units are those declared
// in the job file or the CSV header; nothing is guessed silently. Every problem is an
// InputError naming file, line, column and what was expected.
//
// Internally everything is SI: masses in g (the lab's unit), times in s, RH as a fraction,
// temperatures in K.
#pragma once

#include <cstdint>
#include <filesystem>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "pipeline/common/diagnostics.h"
#include "pipeline/conform/conform.h"

namespace sorbtrace {
struct ParsedTomlFile;  // pipeline/common/toml_reader.h
}  // namespace sorbtrace

namespace sorbtrace::ingest {

// Direction of a humidity step, from the sequence of set points (never guessed from masses).
enum class Branch { kAdsorption, kDesorption, kDrying };
std::string_view BranchName(Branch branch);  // "adsorption", "desorption", "drying"

enum class Method { kDesiccator, kVaporLog };

// How the dry reference mass of each specimen is found.
enum class DryMassMethod {
  kOvenDrying,       // weighed after oven drying at drying_temperature_K (ISO 12570)
  kDesiccantStep,    // equilibrium mass over a desiccant / at 0 % RH (a "drying" step)
  kFinalDryingStep,  // the final 0 % RH step of a sequence (e.g. end of a vapour-sorption run)
};

// The kind of material tested ([job] material_class; docs/input-formats.md). Later stages
// decide from it whether a Kelvin pore analysis is a pore-size measurement: materials that swell
// or take water into their structure (wood and fibres, polymers, many pharmaceutical powders and
// foods) have no rigid pores for the Kelvin equation to size.
enum class MaterialClass {
  kUnstated,              // the job does not say
  kPorousMineral,         // "porous_mineral": plaster, mortar, brick, stone, ceramics
  kWoodOrFibre,           // "wood_or_fibre": wood, wood-based boards, cellulose, textiles
  kPolymer,               // "polymer"
  kPharmaceuticalPowder,  // "pharmaceutical_powder": excipients, active substances
  kFood,                  // "food"
  kOther,                 // "other"
};
// The job-file value of a class ("porous_mineral", ...; "" for kUnstated).
std::string_view MaterialClassName(MaterialClass material_class);

// The test method the job follows ([job] method), cited with its edition.
enum class TestMethod {
  kUnstated,                 // the job does not say
  kIso12571Desiccator,       // "iso_12571_desiccator"
  kIso12571ClimaticChamber,  // "iso_12571_climatic_chamber"
  kAstmC1498,                // "astm_c1498"
  kPhEur2939,                // "ph_eur_2_9_39": European Pharmacopoeia 2.9.39
};
// The job-file value of a method ("iso_12571_desiccator", ...; "" for kUnstated).
std::string_view TestMethodName(TestMethod method);
// The reference as a report cites it: "ISO 12571:2021, desiccator method",
// "ISO 12571:2021, climatic-chamber method", "ASTM C1498-04a", "Ph. Eur. 2.9.39 (...)"; ""
// for kUnstated.
std::string_view TestMethodCitation(TestMethod method);

// The laboratory that issues the report: a TOML file kept apart from the report templates
// and named by the job ([job] lab_profile; docs/input-formats.md, "Laboratory profile").
// Without one the sheet is a draft (DRAFT on every page). ISO/IEC 17025:2017, 7.8.2.1 b
// (name and address of the laboratory) and o (the person(s) authorizing the report).
struct Signatory {
  std::string name;
  std::string role;  // e.g. "technical manager"
};
// A place where the laboratory performs tests (7.8.2.1 c): its own premises, a site or a
// mobile facility.
struct LabLocation {
  std::string id;       // referred to by [job] location
  std::string address;  // as printed
};
// The image formats a laboratory logo may have: those libharu embeds without a soft mask
// (PDF/A-1 allows no transparency): PNG of 8-bit grey or RGB without a tRNS chunk, or JPEG
// (baseline or progressive, grey or RGB).
enum class LabLogoFormat { kNone, kPng, kJpeg };

struct LabProfile {
  std::filesystem::path file;   // resolved
  std::string file_as_written;  // as the job file gives it
  std::string name;
  std::string address;
  std::string contact;               // telephone / e-mail line, optional
  std::string accreditation_number;  // empty: not accredited (no accreditation printed)
  std::string accreditation_body;    // required with a number
  std::vector<Signatory> signatories;
  std::vector<LabLocation> locations;  // none: the work is done at `address`
  // [laboratory] logo (optional): the file relative to the profile's folder, its bytes as
  // read and checked (LoadLabLogo) and where the key is, for messages about the image.
  std::string logo_as_written;
  std::filesystem::path logo_file;  // resolved; empty: no logo
  std::string logo_bytes;
  LabLogoFormat logo_format = LabLogoFormat::kNone;
  int logo_width_px = 0;
  int logo_height_px = 0;
  SourceLocation logo_where;
};

// Reads a laboratory profile (`display`: the file as messages name it). Every key is known or
// refused; problems are InputErrors at the profile's line and column.
LabProfile LoadLabProfile(const std::filesystem::path& file, const std::string& display);

// Reads and checks the profile's logo, if it names one: under the data-path policy
// (LiesInsideFolder: inside `job_dir` unless `allow_outside`; `profile_as_written` is the
// profile's path as the job file gives it), a regular file of at most kMaxLabLogoBytes, a PNG
// or JPEG as LabLogoFormat describes, at most kMaxLabLogoPixels on a side. InputError at the
// profile's logo key otherwise.
inline constexpr std::size_t kMaxLabLogoBytes = 1 << 20;  // 1 MiB: far above a letterhead logo
inline constexpr int kMaxLabLogoPixels = 4096;            // (this program's limits)
void LoadLabLogo(const std::filesystem::path& job_dir, const std::string& profile_as_written,
                 bool allow_outside, LabProfile& profile);

// Who took the sample the lab tested ([sampling] by): 7.8.2.1 i, 7.8.2.2, 7.8.5.
enum class SamplingBy { kUnstated, kLaboratory, kCustomer };
std::string_view SamplingByName(SamplingBy by);  // "laboratory", "customer", ""

struct SamplingSpec {
  SamplingBy by = SamplingBy::kUnstated;
  std::string plan;  // reference of the sampling plan / method (by the laboratory)
  std::string date;  // ISO 8601 date of sampling, optional
};

// How a CSV file is written (declared in the job file; defaults in brackets). The unit
// fields are empty unless the job file declares them: normally the CSV header carries the
// unit in the column name ("mass_mg"); a declared unit serves a bare column name ("mass")
// and must agree with a suffixed one. See docs/input-formats.md.
struct CsvFormat {
  char delimiter = ',';        // [,] ';' or '\t' (';' with decimal_comma for spreadsheets)
  bool decimal_comma = false;  // "0,123" numbers
  std::string datetime_format = "iso8601";  // or a pattern, e.g. day-first "%d.%m.%Y %H:%M"
  std::string mass_unit;                    // "" (from header), "g", "mg" or "ug"
  std::string rh_unit;                      // "" (from header), "percent" or "fraction"
  std::string time_unit;         // "" (from header), elapsed time in logs: "s", "min", "h"
  std::string temperature_unit;  // "" (from header), "C" or "K"
};

// One specimen of the material.
struct SpecimenSpec {
  std::string id;
  std::optional<double> dry_mass_g;              // stated oven-dry mass, when weighed externally
  std::optional<double> bulk_density_kg_per_m3;  // for volumetric moisture content
  SourceLocation where;                          // its [[specimen]] entry in the job file
};

// One measured data set: a file, its method and nominal temperature.
struct DataSetSpec {
  std::string id;  // unique within the job, e.g. "desiccator-23C"
  Method method = Method::kDesiccator;
  std::filesystem::path file;     // resolved relative to the job file
  std::string file_as_written;    // as written in the job file
  double temperature_K = 296.15;  // nominal test temperature
  std::string specimen_id;        // vapour logs: the specimen in the balance
  CsvFormat format;
  SourceLocation where;  // its [[dataset]] (or [retention]) entry in the job file
};

// A specification limit the job states for one headline quantity ([[specification]];
// docs/input-formats.md), and the decision rule agreed with the customer (ISO/IEC 17025:2017
// 7.1.3). The report evaluates it with conform::AssessConformity on the headline value.
struct Specification {
  std::string quantity;  // a results.json headline key, e.g. "moisture_23C_80RH_adsorption"
  // Limits in `unit`; the absent one is infinite (a one-sided specification).
  conform::ToleranceInterval limits;
  std::string unit;           // as written: "%", "kg/kg", "m2/g", "mm3/g", "nm", ...
  conform::Options decision;  // rule, guard-band fraction of U, required probability
  std::string document;       // the specification's reference as written ("" when not stated)
  // "class at most X" (quantity = "hygroscopicity_class", at_most = X): the Ph. Eur. 5.11 class
  // X; quantity, limits and unit are then the mass increase below X's upper limit, in %.
  std::string class_at_most;
  SourceLocation where;  // its [[specification]] table
  SourceLocation quantity_where;
  SourceLocation unit_where;
};

// Everything the job file states about one material test.
struct JobSpec {
  std::filesystem::path job_file;
  // The job file as parsed (pipeline/common/toml_reader.h): the later stages read their tables
  // from it, so the file is parsed once per run.
  std::shared_ptr<const ParsedTomlFile> parsed;
  std::string job_id;  // e.g. "LAB-2026-0142"
  std::string material_name;
  std::string material_description;
  std::string client;
  std::string test_dates;              // free text, e.g. "2026-09-01 to 2026-10-12"
  std::string issue_date;              // ISO 8601 date printed on the sheet (deterministic)
  std::string template_name = "full";  // report template (templates/<name>.toml) or a path
  // Data files (and a template given as a path) may lie outside the job file's folder tree.
  bool allow_data_outside_job_folder = false;
  MaterialClass material_class = MaterialClass::kUnstated;  // [job] material_class
  TestMethod test_method = TestMethod::kUnstated;           // [job] method
  // Issue of the report (ISO/IEC 17025:2017, 7.8.2.1 and 7.8.8).
  std::optional<LabProfile> lab_profile;  // [job] lab_profile; none: a draft
  std::string work_location;              // where the work was done: the chosen location's
                                          // address ([job] location), else the lab's address
  int revision = 0;                       // [job] revision: 0 original, n-th amendment
  std::string supersedes;                 // [job] supersedes: report replaced (revision >= 1)
  std::string revision_reason;            // [job] revision_reason
  // The customer and the item ([material]): 7.8.2.1 e, i.
  std::string client_address;
  std::string client_contact;
  std::string received_date;   // ISO 8601 date of receipt of the item
  std::string item_condition;  // condition of the item on receipt
  SamplingSpec sampling;       // [sampling]
  DryMassMethod dry_mass_method = DryMassMethod::kOvenDrying;
  double drying_temperature_K = 378.15;  // 105 degC, ISO 12570 default
  double balance_resolution_g = 1e-4;
  double balance_standard_uncertainty_g = 1e-4;
  double rh_sensor_standard_uncertainty_fraction = 0.01;  // vapour-sorption RH sensor
  double temperature_standard_uncertainty_K = 0.2;
  // The balance keys in [measurement] (line of [measurement], column 0, when not stated).
  SourceLocation balance_resolution_where;
  SourceLocation balance_uncertainty_where;
  bool negative_moisture_expected = false;
  std::vector<SpecimenSpec> specimens;
  std::vector<DataSetSpec> datasets;
  std::optional<DataSetSpec> retention;       // over-hygroscopic retention points (CSV)
  std::vector<Specification> specifications;  // [[specification]], in job-file order
};

// One weighing of a specimen in a desiccator.
struct Weighing {
  double time_s = 0.0;    // seconds since the first weighing of the file
  std::string timestamp;  // as written
  double mass_g = 0.0;
  int line = 0;                // 1-based line in the file
  double temperature_K = 0.0;  // recorded at the weighing, else the nominal temperature
};

// One humidity step of one specimen in a desiccator series.
struct DesiccatorStep {
  std::string specimen_id;
  int step_index = 0;               // order of the step for this specimen (0-based)
  std::string atmosphere;           // as written: a salt ("NaCl"), "desiccant", "oven", "rh:50%"
  std::optional<std::string> salt;  // canonical formula, when over a saturated salt solution
  std::optional<double> set_rh_fraction;  // stated RH ("rh:50%"), 0 for "desiccant"
  Branch branch = Branch::kAdsorption;
  double temperature_K = 296.15;    // recorded (or nominal) temperature of the step
  std::vector<Weighing> weighings;  // in time order
  int first_line = 0;
  int last_line = 0;
  int step_number = 0;  // as written in the file's "step" column
};

struct DesiccatorSeries {
  std::string dataset_id;
  std::string file;
  std::vector<DesiccatorStep> steps;  // grouped by specimen, then step order
};

// Block mean of consecutive log rows (IngestOptions::log_block_s wide): the log is streamed
// and only these are kept, never every row.
struct LogBlock {
  double time_s = 0.0;                // mean elapsed time of the block
  double mass_g = 0.0;                // mean mass
  double rh_measured_fraction = 0.0;  // mean measured RH
  double temperature_K = 0.0;         // mean temperature
  std::int32_t num_rows = 0;
};

// A run of constant set-point RH in a continuous vapour-sorption log.
struct VaporLogStep {
  int step_index = 0;
  double set_rh_fraction = 0.0;
  // From the set-point sequence: 0 % is drying, a set point above the one before adsorption,
  // below it desorption. The first step has no set point before it: its own trace decides,
  // desorption when its mass falls from its first to its last block mean by more than
  // 2 sqrt(2) u_balance ([measurement] balance_standard_uncertainty_g), adsorption when it rises
  // by more; within that, desorption when the next set point is lower, else adsorption (a log
  // that starts wet at 90 % and dries is desorption from its first step).
  Branch branch = Branch::kAdsorption;
  // 0-based cycle: a new one begins each time the log comes back to the branch of its first wet
  // step after the other branch.
  int cycle = 0;
  double start_time_s = 0.0;
  double end_time_s = 0.0;
  std::int64_t first_line = 0;
  std::int64_t last_line = 0;
  std::int64_t num_rows = 0;
  double rh_measured_mean_fraction = 0.0;
  double rh_measured_std_fraction = 0.0;
  double temperature_mean_K = 0.0;
  double temperature_std_K = 0.0;
  std::vector<LogBlock> blocks;
};

struct VaporLog {
  std::string dataset_id;
  std::string file;
  std::string specimen_id;
  std::int64_t num_rows = 0;
  std::vector<VaporLogStep> steps;
};

// A moisture content measured above the hygroscopic range at a known capillary pressure
// (pressure plate / suction), for retention models fitted across both ranges.
struct RetentionPoint {
  std::string specimen_id;
  double capillary_pressure_Pa = 0.0;
  double moisture_kg_per_kg = 0.0;
  double u_moisture_kg_per_kg = 0.0;  // standard uncertainty
  Branch branch = Branch::kDesorption;
  int line = 0;
};

// An input file as read: for traceability (SHA-256 printed on the datasheet and checked by
// `sorbtrace verify`).
struct InputFileRecord {
  std::string role;  // "job", "desiccator", "vapor_log", "retention", "template"
  std::string path;  // as written (relative to the job file where applicable)
  std::string sha256;
  std::uint64_t size_bytes = 0;
};

struct IngestOptions {
  double log_block_s = 10.0;         // width of log block means [s]
  double log_gap_warning_s = 600.0;  // a gap between rows longer than this is a warning

  bool IsValid(std::string* error) const;  // Ingest() throws std::invalid_argument if not
};

struct IngestSummary {
  std::vector<Diagnostic> warnings;  // e.g. long gaps in a log; never fatal
  std::int64_t rows_read = 0;
  int num_steps = 0;
  int num_specimens = 0;
};

struct IngestResult {
  JobSpec job;
  std::vector<DesiccatorSeries> desiccator_series;
  std::vector<VaporLog> vapor_logs;
  std::vector<RetentionPoint> retention_points;
  std::vector<InputFileRecord> inputs;  // job file first, then data files in job order
  IngestSummary summary;
};

// The dry reference of one specimen: the one rule that decides which mass is a specimen's dry
// mass (equilibrate takes the mass from here, reduce divides by it), per job.dry_mass_method:
//  "oven" (kOvenDrying): the stated dry_mass_g of its [[specimen]] entry, else its first oven
//    step (atmosphere "oven", branch drying) in data-set order.
//  "desiccant_step" (kDesiccantStep): its first 0 % RH drying step (desiccant or rh:0% in a
//    desiccator file, a drying step of a vapour log) in data-set order.
//  "final_drying_step" (kFinalDryingStep): a drying step that is the specimen's last step in its
//    data set; of several such data sets, the last in data-set order.
// Data-set order is the order of [[dataset]] in the job file.
struct DryMassSource {
  std::string specimen_id;
  std::optional<double> stated_mass_g;  // the stated dry_mass_g ("oven" only), else:
  std::string dataset_id;               // the data set of the drying step
  int step_index = -1;                  // and its step_index (DesiccatorStep, VaporLogStep)
};

// One source per declared specimen that has data, in [[specimen]] order. A declared specimen
// without data has no entry and, when `warnings` is not null, one warning there. A specimen
// with data but without a source is an InputError at its [[specimen]] entry saying what the
// dry-mass method needs.
std::vector<DryMassSource> FindDryMassSources(const IngestResult& result,
                                              std::vector<Diagnostic>* warnings);

// Parses and validates the job file (the sections that describe the test and its data:
// [job], [material], [measurement], [[specimen]], [[dataset]], [retention], [[specification]]; see
// docs/input-formats.md). Tables of later stages ([equilibrium], [fit], [pores], [report]) are
// left to their owners; any other top-level table or key is an error. Data files must exist
// (paths relative to the job file); their contents are read by Ingest().
JobSpec LoadJobSpec(const std::filesystem::path& job_file);

// Reads every data file named by the job, checks that each specimen with data has a dry
// mass source for job.dry_mass_method, and records SHA-256 and size of every input.
IngestResult Ingest(const JobSpec& job, const IngestOptions& options = {});

// The readers Ingest() uses, one file each (also used by tests and benchmarks). Errors
// name dataset.file as the file. Warnings are appended to summary->warnings (may be null).
DesiccatorSeries ReadDesiccatorSeries(const JobSpec& job, const DataSetSpec& dataset);
VaporLog ReadVaporLog(const DataSetSpec& dataset, const IngestOptions& options,
                      IngestSummary* summary);
std::vector<RetentionPoint> ReadRetentionPoints(const JobSpec& job, const DataSetSpec& dataset);

}  // namespace sorbtrace::ingest
