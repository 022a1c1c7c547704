// The stage settings of a job file ([equilibrium], [fit], [pores], [report]) as one table:
// one SettingKey per key holds its name, where it lands in JobSettings, its unit and factor,
// its allowed range, whether it is a work setting, and its documentation. That one row drives
// reading and validating the job file (pipeline/run/settings.cc), the record of the effective
// settings (results.json "settings", the sheet's settings list) and the README settings table
// (SettingsMarkdownTable; tests/run/settings_table_test.cc checks the README against it).
// Internal to the run stage.
#pragma once

#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "pipeline/run/run.h"

namespace sorbtrace::run::internal {

class TableReader;  // settings.cc: typed, located reads of one TOML table

enum class SettingKind {
  kNumber,   // a finite number in [min, max] (written units); stored as written * factor
  kInteger,  // a whole number in [min, max]
  kSeed,     // a whole number in [min, max], stored as std::uint64_t
  kBool,     // true or false
  kChoice,   // one of `choices`, stored as the index (the enum's order)
  kCustom,   // a list or table value: `read` and `record` do the work
};

// Bounds the stage's Options::IsValid enforces at exactly the key's table bound (converted to
// the stage's units). tests/run/settings_table_test.cc checks that a value just beyond such a
// bound is refused by the stage too, and that every value the table admits is accepted.
enum StageBound : unsigned { kStageNone = 0, kStageMin = 1, kStageMax = 2 };

// Reads and writes the member a key lands in, as a double (integers, booleans and enum indices
// are exact in a double).
struct Accessor {
  double (*get)(const JobSettings&) = nullptr;
  void (*set)(JobSettings&, double) = nullptr;
};

struct SettingKey {
  const char* section = "";  // "equilibrium", "fit", "pores", "report"
  const char* name = "";     // the job-file key, unit in the name
  SettingKind kind = SettingKind::kNumber;
  double factor = 1.0;  // stored value = written value * factor (e.g. 0.01 for "_percent")
  double min = 0.0;     // allowed range of the written value (inclusive)
  double max = 0.0;
  Accessor access = {};  // the stored value (number, integer, seed, bool, choice index)
  std::vector<std::string> choices = {};  // kChoice: the accepted strings, in enum order
  bool work = false;  // bounds the cost of a job (README "Cost of a job"; CheckWorkBudget)
  unsigned stage_bound = kStageNone;
  void (*read)(TableReader&, JobSettings&) = nullptr;              // kCustom
  nlohmann::ordered_json (*record)(const JobSettings&) = nullptr;  // kCustom
  const char* default_text = nullptr;  // README default where it is not a plain value
  const char* allowed_text = nullptr;  // README "allowed" where min..max does not say it
  const char* doc = "";                // README "meaning"
};

// Every key, in section order and, within a section, in the order they are recorded.
const std::vector<SettingKey>& SettingKeys();

// The recorded value of one key, in the units the job file writes it (a number is rounded
// to 15 significant digits, so a value written as 0.1 is recorded as 0.1, not as
// 0.1 / 0.01 * 0.01).
nlohmann::ordered_json RecordSetting(const SettingKey& key, const JobSettings& settings);

// The README's stage-settings table (Markdown), generated from SettingKeys() and the built-in
// defaults.
std::string SettingsMarkdownTable();

}  // namespace sorbtrace::run::internal
