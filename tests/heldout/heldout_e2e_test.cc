// Held-out jobs and bad inputs (issues 13 and 16), made at run time by tests/heldout/
// heldout_jobs.h with a known truth and run through the real binary. Each good job must give
// exit code 0, labels naming its temperature and branch, GAB parameters within their expanded
// uncertainty U of the truth, no NaN, inf or "-0" anywhere on the sheet, byte-identical output
// on a second run and unchanged inputs. Each bad input must give exit code 3 with a located
// message saying what was expected, write nothing and change no input.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <regex>
#include <string>
#include <vector>

#include "tests/common/e2e_support.h"
#include "tests/heldout/heldout_jobs.h"

namespace sorbtrace::heldout {
namespace {

namespace fs = std::filesystem;
using e2e::FreshDir;
using e2e::ReadBytes;
using e2e::Snapshot;
using e2e::Sorbtrace;
using e2e::WriteBytes;

std::string JobHead(const std::string& id, const std::string& material_class,
                    const std::string& dry_mass_method, double balance_u_g) {
  return "[job]\nid = \"" + id +
         "\"\nissue_date = \"2026-11-30\"\nlab_profile = \"lab.toml\"\nmaterial_class = \"" +
         material_class + "\"\n\n[material]\nname = \"Held-out material " + id +
         " (fictional)\"\n\n[measurement]\ndry_mass_method = \"" + dry_mass_method +
         "\"\nbalance_resolution_g = " + Fixed(balance_u_g / 2.0, 9) +
         "\nbalance_standard_uncertainty_g = " + Fixed(balance_u_g, 9) +
         "\nrh_sensor_standard_uncertainty_percent = 0.8\n"
         "temperature_standard_uncertainty_K = 0.2\n";
}

// A job folder: `data` as job_dir/data/`data_name`, the laboratory profile lab.toml and
// `job_toml` as job.toml.
void WriteJobFolder(const fs::path& job_dir, const std::string& data_name, const std::string& data,
                    const std::string& job_toml) {
  WriteBytes(job_dir / "data" / data_name, data);
  WriteBytes(job_dir / "lab.toml", kLabProfile);
  WriteBytes(job_dir / "job.toml", job_toml);
}

// Every string in a results.json (the sheet's cells as printed are among them).
void CollectStrings(const nlohmann::json& node, std::vector<std::string>* out) {
  if (node.is_string()) {
    out->push_back(node.get<std::string>());
  } else if (node.is_structured()) {
    for (const auto& child : node) CollectStrings(child, out);
  }
}

// A number printed as NaN, infinity or a negative zero ("-0", "-0.00", with the Unicode minus).
void ExpectNoBadNumbers(const nlohmann::json& results, const std::string& html) {
  static const std::regex kBad(R"((^|[^\w.])(nan|inf)($|[^\w]))", std::regex::icase);
  static const std::regex kNegativeZero(R"((^|[^\w.])(-|\xE2\x88\x92)0(\.0*)?($|[^\d.]))");
  std::vector<std::string> texts;
  CollectStrings(results, &texts);
  for (const std::string& text : texts) {
    EXPECT_FALSE(std::regex_search(text, kBad)) << "results.json prints: " << text;
    EXPECT_FALSE(std::regex_search(text, kNegativeZero)) << "results.json prints: " << text;
  }
  EXPECT_EQ(html.find(">nan<"), std::string::npos);
  EXPECT_EQ(html.find(">inf<"), std::string::npos);
}

struct Truth {
  std::string branch;
  Gab gab;
};

// The GAB fit of each named branch within U of the truth, parameter by parameter.
void ExpectGabWithinU(const nlohmann::json& results, const std::vector<Truth>& truths) {
  for (const Truth& truth : truths) {
    bool found = false;
    for (const auto& model : results["fits"]["models"]) {
      if (model["model"] != "gab") continue;
      const auto& group = results["fits"]["groups"][model["group_index"].get<std::size_t>()];
      if (group["branch"] != truth.branch) continue;
      found = true;
      EXPECT_TRUE(model["converged"].get<bool>()) << truth.branch;
      const double expected[] = {truth.gab.x_m, truth.gab.c, truth.gab.k};
      const auto& parameters = model["parameters"];
      ASSERT_EQ(parameters.size(), 3u);
      for (std::size_t i = 0; i < 3; ++i) {
        const double value = parameters[i]["value"].get<double>();
        const double u = parameters[i]["expanded_uncertainty"].get<double>();
        EXPECT_GT(u, 0.0) << truth.branch << " " << parameters[i]["label"];
        EXPECT_LE(std::abs(value - expected[i]), u)
            << truth.branch << " " << parameters[i]["label"] << " = " << parameters[i]["text"]
            << ", truth " << expected[i];
      }
    }
    EXPECT_TRUE(found) << "no GAB fit of the " << truth.branch << " branch";
  }
}

// make twice into two new folders: exit 0, the same bytes, inputs unchanged. Returns results.json.
nlohmann::json MakeAndCheck(const fs::path& job_dir) {
  const auto inputs_before = Snapshot(job_dir);
  const fs::path first = job_dir.parent_path() / (job_dir.filename().string() + "_out1");
  const fs::path second = job_dir.parent_path() / (job_dir.filename().string() + "_out2");
  fs::remove_all(first);
  fs::remove_all(second);
  const auto run1 = Sorbtrace(job_dir, "make job.toml -q --out '" + first.string() + "'");
  EXPECT_EQ(run1.exit_code, 0) << run1.output;
  const auto run2 = Sorbtrace(job_dir, "make job.toml -q --out '" + second.string() + "'");
  EXPECT_EQ(run2.exit_code, 0) << run2.output;
  if (run1.exit_code != 0 || run2.exit_code != 0) return {};
  const auto files1 = Snapshot(first);
  const auto files2 = Snapshot(second);
  EXPECT_EQ(files1.size(), files2.size());
  for (const auto& [name, bytes] : files1) {
    const auto other = files2.find(name);
    EXPECT_TRUE(other != files2.end() && other->second == bytes) << name << " differs between runs";
  }
  EXPECT_EQ(Snapshot(job_dir), inputs_before) << "an input changed";
  const nlohmann::json results = nlohmann::json::parse(ReadBytes(first / "results.json"));
  ExpectNoBadNumbers(results, ReadBytes(first / "datasheet.html"));
  return results;
}

std::string IsoStamp(long minute, const char* offset) {
  const Stamp s = StampOf(minute);
  char buffer[48];
  std::snprintf(buffer, sizeof buffer, "%04d-%02d-%02dT%02d:%02d:00%s", s.year, s.month, s.day,
                s.hour, s.minute, offset);
  return buffer;
}

// Two specimens over stated humidities; M2 is oven-dried first, so its humidity steps are
// numbered 2..6 where M1's are 1..5. The same desiccator is one condition: every isotherm point
// combines both specimens (before the fix each specimen was a point of its own, n = 1).
TEST(HeldoutJobs, SpecimensWhoseStepNumbersDifferAreCombinedPerCondition) {
  const fs::path dir = FreshDir("heldout", "step_numbers");
  const Gab truth{0.006, 25.0, 0.88};
  const double rhs[] = {0.15, 0.35, 0.55, 0.70, 0.85};
  std::vector<DesiccatorStep> humid;
  for (double rh : rhs) {
    humid.push_back({"rh:" + Fixed(rh * 100.0, 0) + "%", "adsorption", truth.At(rh)});
  }
  std::vector<DesiccatorStep> oven_first{{"oven", "drying", 0.0}};
  oven_first.insert(oven_first.end(), humid.begin(), humid.end());
  Noise noise(20261203);
  DesiccatorOptions m1;
  m1.dry_mass_g = 8.0001;
  DesiccatorOptions m2;
  m2.dry_mass_g = 15.5;
  m2.start_moisture = 0.05;
  m2.offset_min = 4;
  std::vector<Weighing> rows = WeighSpecimen("M1", humid, m1, &noise);
  for (const Weighing& w : WeighSpecimen("M2", oven_first, m2, &noise)) rows.push_back(w);
  std::stable_sort(rows.begin(), rows.end(),
                   [](const Weighing& a, const Weighing& b) { return a.minute < b.minute; });
  std::string csv = "specimen,step,atmosphere,branch,temperature_C,weighed_at,mass_g\n";
  for (const Weighing& w : rows) {
    csv += w.specimen + "," + std::to_string(w.step) + "," + w.atmosphere + "," + w.branch + "," +
           Fixed(w.temperature_C, 1) + "," + IsoStamp(w.minute, "+01:00") + "," +
           Fixed(w.mass_g, 4) + "\n";
  }
  WriteJobFolder(
      dir / "job", "w.csv", csv,
      JobHead("HO-STEPS", "other", "oven", 0.00012) +
          "\n[[specimen]]\nid = \"M1\"\ndry_mass_g = 8.0001\n\n[[specimen]]\nid = \"M2\"\n"
          "\n[[dataset]]\nid = \"d23\"\nmethod = \"desiccator\"\nfile = \"data/w.csv\"\n"
          "temperature_C = 23.0\n");
  const nlohmann::json results = MakeAndCheck(dir / "job");
  ASSERT_FALSE(results.is_null());
  const auto& points = results["isotherm"]["points"];
  EXPECT_EQ(points.size(), 5u);
  for (const auto& point : points) {
    EXPECT_EQ(point["num_specimens"], 2) << point["step_label"];
    EXPECT_EQ(point["specimen_ids"], nlohmann::json::array({"M1", "M2"}));
  }
  ExpectGabWithinU(results, {{"adsorption", truth}});
}

// One specimen at 30 degC over five salts (adsorption, then desorption over four of them, the
// desorption branch above the adsorption branch), written as a spreadsheet with European
// settings would: ';' and decimal commas, day.month.year stamps, masses in mg, columns in
// another order, a byte-order mark, CRLF line ends, a comment and trailing blank lines.
TEST(HeldoutJobs, SpreadsheetExportAt30CWithHysteresis) {
  const fs::path dir = FreshDir("heldout", "spreadsheet_30C");
  const Gab adsorption{0.020, 8.0, 0.80};
  const Gab desorption{0.024, 10.0, 0.78};
  const std::vector<std::string> salts = {"LiCl", "MgCl2", "Mg(NO3)2", "NaCl", "KCl"};
  std::vector<DesiccatorStep> steps;
  for (const auto& salt : salts) {
    steps.push_back({salt, "adsorption", adsorption.At(SaltRhFraction(salt, 30.0))});
  }
  for (int i = 3; i >= 0; --i) {
    const auto& salt = salts[static_cast<std::size_t>(i)];
    steps.push_back({salt, "desorption", desorption.At(SaltRhFraction(salt, 30.0))});
  }
  Noise noise(30);
  DesiccatorOptions options;
  options.dry_mass_g = 20.5;
  options.temperature_C = 30.0;
  std::string csv =
      "\xEF\xBB\xBF# exported from a spreadsheet\r\n"
      "mass_mg;weighed_at;branch;atmosphere;step;specimen;temperature_C\r\n";
  for (const Weighing& w : WeighSpecimen("A", steps, options, &noise)) {
    const Stamp s = StampOf(w.minute);
    char stamp[32];
    std::snprintf(stamp, sizeof stamp, "%02d.%02d.%04d %02d:%02d", s.day, s.month, s.year, s.hour,
                  s.minute);
    std::string mass = Fixed(w.mass_g * 1000.0, 1);
    std::string temperature = Fixed(w.temperature_C, 1);
    for (std::string* number : {&mass, &temperature}) {
      std::replace(number->begin(), number->end(), '.', ',');
    }
    csv += mass + ";" + stamp + ";" + w.branch + ";" + w.atmosphere + ";" + std::to_string(w.step) +
           ";" + w.specimen + ";" + temperature + "\r\n";
  }
  csv += "\r\n\r\n";
  WriteJobFolder(dir / "job", "w.csv", csv,
                 JobHead("HO-EURO-30", "porous_mineral", "oven", 0.0001) +
                     "\n[[specimen]]\nid = \"A\"\ndry_mass_g = 20.5\n"
                     "\n[[dataset]]\nid = \"d30\"\nmethod = \"desiccator\"\nfile = \"data/w.csv\"\n"
                     "temperature_C = 30.0\ndelimiter = \";\"\ndecimal_comma = true\n"
                     "datetime_format = \"%d.%m.%Y %H:%M\"\n");
  const nlohmann::json results = MakeAndCheck(dir / "job");
  ASSERT_FALSE(results.is_null());
  EXPECT_EQ(results["isotherm"]["points"].size(), 9u);
  // Moisture contents are read at 30 degC and say so (the template's reference is 23 degC).
  int moisture_values = 0;
  for (const auto& headline : results["headline"]) {
    const std::string key = headline["key"];
    if (key.rfind("moisture_", 0) != 0) continue;
    ++moisture_values;
    EXPECT_NE(key.find("_30C_"), std::string::npos) << key;
    EXPECT_NE(headline["label"].get<std::string>().find("30 °C"), std::string::npos)
        << headline["label"];
  }
  EXPECT_GT(moisture_values, 0);
  ExpectGabWithinU(results, {{"adsorption", adsorption}, {"desorption", desorption}});
}

std::string LogCsv(const std::vector<LogReading>& rows, const std::string& header, double time_div,
                   bool rh_fraction, bool kelvin, double mass_mul) {
  std::string csv = header + "\n";
  for (const LogReading& r : rows) {
    const double rh_scale = rh_fraction ? 1.0 : 100.0;
    csv += Fixed(r.elapsed_s / time_div, 6) + "," + Fixed(r.set_rh_fraction * rh_scale, 6) + "," +
           Fixed(r.measured_rh_fraction * rh_scale, 6) + "," +
           Fixed(r.temperature_C + (kelvin ? 273.15 : 0.0), 3) + "," +
           Fixed(r.mass_g * mass_mul, 7) + "\n";
  }
  return csv;
}

// Set points from `first_percent` to `last_percent` RH in steps of `step_percent` (negative:
// drying), each with its GAB moisture content.
std::vector<LogStep> GabLogSteps(const Gab& truth, int first_percent, int last_percent,
                                 int step_percent) {
  std::vector<LogStep> steps;
  for (int percent = first_percent;
       step_percent > 0 ? percent <= last_percent : percent >= last_percent;
       percent += step_percent) {
    const double rh = percent / 100.0;
    steps.push_back({rh, truth.At(rh)});
  }
  return steps;
}

// A job folder of one specimen and one vapour log, data/log.csv: job.toml is `head`, the
// specimen and a vapor_log dataset `dataset_id` at `temperature_C`.
void WriteLogJob(const fs::path& job_dir, const std::string& log_csv, const std::string& head,
                 const std::string& specimen_id, const std::string& dataset_id,
                 double temperature_C) {
  WriteJobFolder(
      job_dir, "log.csv", log_csv,
      head + "\n[[specimen]]\nid = \"" + specimen_id + "\"\n" + "\n[[dataset]]\nid = \"" +
          dataset_id + "\"\nmethod = \"vapor_log\"\nfile = \"data/log.csv\"\n" +
          "temperature_C = " + Fixed(temperature_C, 1) + "\nspecimen = \"" + specimen_id + "\"\n");
}

// A vapour log that starts wet at 90 % and only dries (set points 90 .. 10 %, then 0 % for the
// dry mass), in hours and grams: the desorption isotherm is recovered.
TEST(HeldoutJobs, DesorptionOnlyLogInHoursAndGrams) {
  const fs::path dir = FreshDir("heldout", "desorption_log");
  const Gab truth{0.04, 9.0, 0.75};
  Noise noise(9);
  const auto rows =
      RunLog(GabLogSteps(truth, 90, 0, -10), 0.2, truth.At(0.9) + 0.01, 23.0, 1e-6, &noise);
  WriteLogJob(dir / "job",
              LogCsv(rows, "elapsed_h,set_rh_percent,measured_rh_percent,temperature_C,mass_g",
                     3600.0, false, false, 1.0),
              JobHead("HO-DES-LOG", "porous_mineral", "final_drying_step", 0.000001), "D1", "v23",
              23.0);
  const nlohmann::json results = MakeAndCheck(dir / "job");
  ASSERT_FALSE(results.is_null());
  int desorption_points = 0;
  for (const auto& point : results["isotherm"]["points"]) {
    desorption_points += point["branch"] == "desorption" ? 1 : 0;
  }
  EXPECT_EQ(desorption_points, 9);  // 90 .. 10 %: the first step dries too (VaporLogStep::branch)
  ExpectGabWithinU(results, {{"desorption", truth}});
}

// A food powder taking up 30 % at 80 % RH and 52 % at 90 % RH, 10 mg on the balance, logged in
// micrograms, minutes, RH fractions and kelvin.
TEST(HeldoutJobs, FoodPowderWithHighUptakeInMicrograms) {
  const fs::path dir = FreshDir("heldout", "food_powder");
  const Gab truth{0.08, 3.0, 0.95};
  Noise noise(25);
  const auto rows = RunLog(GabLogSteps(truth, 0, 90, 10), 0.0102345, 0.01, 25.0, 2e-7, &noise);
  WriteLogJob(dir / "job",
              LogCsv(rows, "elapsed_min,set_rh_fraction,measured_rh_fraction,temperature_K,mass_ug",
                     60.0, true, true, 1e6),
              JobHead("HO-FOOD", "food", "desiccant_step", 0.0000002), "F1", "v25", 25.0);
  const nlohmann::json results = MakeAndCheck(dir / "job");
  ASSERT_FALSE(results.is_null());
  bool found = false;
  for (const auto& headline : results["headline"]) {
    const std::string key = headline["key"];
    if (key.rfind("moisture_25C_80RH_adsorption", 0) != 0) continue;
    found = true;
    EXPECT_NEAR(headline["value"].get<double>(), truth.At(0.80),
                headline["expanded_uncertainty"].get<double>())
        << headline["text"];
  }
  EXPECT_TRUE(found) << "no moisture content at 80 % RH read at 25 degC";
  ExpectGabWithinU(results, {{"adsorption", truth}});
}

// ---- Bad inputs ----------------------------------------------------------------------------

// A small valid vapour-log job (three steps) to break one thing at a time.
fs::path SmallLogJob(const std::string& name) {
  const fs::path dir = FreshDir("heldout", name) / "job";
  const Gab truth{0.03, 6.0, 0.8};
  Noise noise(3);
  const auto rows = RunLog({{0.0, 0.0}, {0.3, truth.At(0.3)}, {0.6, truth.At(0.6)}}, 0.5, 0.01,
                           23.0, 2e-6, &noise);
  WriteLogJob(dir,
              LogCsv(rows, "elapsed_s,set_rh_percent,measured_rh_percent,temperature_C,mass_mg",
                     1.0, false, false, 1e3),
              JobHead("HO-BAD", "other", "desiccant_step", 0.000002), "R1", "v23", 23.0);
  return dir;
}

// check and make: exit 3, the first error line starts with `location` and contains `message`,
// no output folder, inputs unchanged.
void ExpectRefused(const fs::path& job_dir, const std::string& location,
                   const std::string& message) {
  const auto before = Snapshot(job_dir);
  const fs::path out = job_dir.parent_path() / "out";
  const std::vector<std::string> verbs = {"check job.toml",
                                          "make job.toml -q --out '" + out.string() + "'"};
  for (const std::string& verb : verbs) {
    const auto run = Sorbtrace(job_dir, verb);
    EXPECT_EQ(run.exit_code, 3) << verb << ": " << run.output;
    const std::size_t at = run.output.find(location + ": error: ");
    EXPECT_NE(at, std::string::npos) << verb << ": " << run.output.substr(0, 400);
    EXPECT_NE(run.output.find(message), std::string::npos) << run.output.substr(0, 400);
    EXPECT_NE(run.output.find("; expected "), std::string::npos) << run.output.substr(0, 400);
  }
  EXPECT_FALSE(fs::exists(out)) << "make wrote an output folder";
  EXPECT_EQ(Snapshot(job_dir), before) << "an input changed";
}

// A log whose last line never ends (3 MiB of digits, as a broken export writes): refused where
// the line passes 1 MiB, without holding the rest (before: the whole line was buffered, 890 MB
// and 20 s for a 200 MB line).
TEST(HeldoutBadInputs, EndlessLineIsRefusedWhereItPassesTheLimit) {
  const fs::path job = SmallLogJob("endless_line");
  std::string log = ReadBytes(job / "data" / "log.csv");
  const long lines = std::count(log.begin(), log.end(), '\n');
  log += std::string(std::size_t{3} << 20, '9');
  WriteBytes(job / "data" / "log.csv", log);
  ExpectRefused(job, "data/log.csv:" + std::to_string(lines + 1) + ":1048577",
                "is longer than 1048576 bytes");
}

// A specimen cell with bytes that are not UTF-8: quoted escaped, never raw.
TEST(HeldoutBadInputs, StrayBytesInACellAreQuotedEscaped) {
  const fs::path dir = FreshDir("heldout", "stray_bytes") / "job";
  WriteJobFolder(dir, "w.csv",
                 "specimen,step,atmosphere,branch,weighed_at,mass_g\n"
                 "S\xFF\xFE"
                 "1,1,NaCl,adsorption,2026-03-02T09:00,10.1000\n",
                 JobHead("HO-BYTES", "other", "oven", 0.0001) +
                     "\n[[specimen]]\nid = \"S1\"\ndry_mass_g = 10.0\n"
                     "\n[[dataset]]\nid = \"d23\"\nmethod = \"desiccator\"\nfile = \"data/w.csv\"\n"
                     "temperature_C = 23.0\n");
  ExpectRefused(dir, "data/w.csv:2:1", "specimen 'S\\xff\\xfe1' is not declared");
  const auto run = Sorbtrace(dir, "check job.toml");
  EXPECT_EQ(run.output.find('\xFF'), std::string::npos) << "a raw 0xFF byte reached the terminal";
}

// The report number is printed on every page: an empty, blank or control-character id is
// refused at its key.
TEST(HeldoutBadInputs, ReportNumberMustBeVisibleAndPrintable) {
  for (const char* id : {"", "   ", "HO\\nBAD"}) {
    SCOPED_TRACE(std::string("id = \"") + id + "\"");
    const fs::path job = SmallLogJob("report_number");
    std::string text = ReadBytes(job / "job.toml");
    text.replace(text.find("\"HO-BAD\""), 8, std::string("\"") + id + "\"");
    WriteBytes(job / "job.toml", text);
    ExpectRefused(job, "job.toml:2:6", "report number (id)");
  }
}

// make with --out `out`: exit 3, the refusal says `reason` for that folder, and neither the
// job folder nor `out` gains, loses or changes a file.
void ExpectOutputFolderRefused(const fs::path& job, const fs::path& out,
                               const std::string& reason) {
  const auto job_before = Snapshot(job);
  const auto out_before = Snapshot(out);
  const auto run = Sorbtrace(job, "make job.toml -q --out '" + out.string() + "'");
  EXPECT_EQ(run.exit_code, 3) << run.output;
  EXPECT_NE(run.output.find(out.string() + ": error: output folder refused: " + reason),
            std::string::npos)
      << run.output;
  EXPECT_EQ(Snapshot(out), out_before) << "the refused folder changed";
  EXPECT_EQ(Snapshot(job), job_before) << "an input changed";
}

// An existing folder of the user's as --out: refused (sorbtrace did not write it), its file
// kept.
TEST(HeldoutBadInputs, AUserFolderIsNeverTakenAsOutput) {
  const fs::path job = SmallLogJob("user_folder");
  const fs::path mine = job.parent_path() / "my_results";
  WriteBytes(mine / "notes.txt", "precious\n");
  ExpectOutputFolderRefused(job, mine, "it exists and was not written by sorbtrace");
  EXPECT_EQ(Snapshot(mine), (std::map<std::string, std::string>{{"notes.txt", "precious\n"}}));
}

// The job folder itself as --out (make runs in it): refused as the current folder.
TEST(HeldoutBadInputs, TheJobFolderIsNeverTakenAsOutput) {
  const fs::path job = SmallLogJob("job_folder");
  ExpectOutputFolderRefused(job, job, "it is or contains the current folder");
}

}  // namespace
}  // namespace sorbtrace::heldout
