// The method and traceability section: procedure, equilibrium criteria, dry masses, the
// budget of one reported point, the inputs with their SHA-256, software and settings.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <functional>

#include "pipeline/report/format.h"
#include "pipeline/report/sections.h"

namespace sorbtrace::report::internal {
namespace {

// A recorded setting as the user wrote it: numbers by FormatSetting (0.106, not
// 0.10600000000000001), text in quotes, lists in brackets.
std::string SettingText(const nlohmann::ordered_json& j) {
  if (j.is_number_float()) return FormatSetting(j.get<double>());
  if (j.is_array()) {
    std::string out;
    for (const auto& item : j) out += (out.empty() ? "" : ", ") + SettingText(item);
    return "[" + out + "]";
  }
  if (j.is_object()) {
    std::string out;
    for (auto it = j.begin(); it != j.end(); ++it) {
      out += (out.empty() ? "" : ", ") + it.key() + " = " + SettingText(it.value());
    }
    return "{ " + out + " }";
  }
  return j.dump(-1, ' ', false, nlohmann::ordered_json::error_handler_t::replace);
}

void AddProcedure(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(SubheadingBlock{"Procedure"});
  if (ctx.inputs.ingested != nullptr) {
    for (const ingest::DataSetSpec& d : ctx.inputs.ingested->job.datasets) {
      const std::string what =
          d.method == ingest::Method::kDesiccator
              ? "specimens weighed at intervals in closed desiccators above saturated salt "
                "solutions"
              : "continuous mass and RH log of one specimen in a humidity-controlled balance (" +
                    d.specimen_id + ")";
      section.blocks.emplace_back(
          ParagraphBlock{fmt::format("Data set {}: {} at {} nominal, file {}.", d.id, what,
                                     TemperatureLabel(d.temperature_K), d.file_as_written),
                         8.0});
    }
  }
  const auto& settings = ctx.inputs.effective_settings;
  if (settings.is_object() && settings.contains("equilibrium") &&
      settings["equilibrium"].is_object()) {
    std::string criteria;
    for (auto it = settings["equilibrium"].begin(); it != settings["equilibrium"].end(); ++it) {
      criteria += (criteria.empty() ? "" : ", ") + it.key() + " = " + SettingText(it.value());
    }
    section.blocks.emplace_back(ParagraphBlock{"Equilibrium criteria: " + criteria + ".", 8.0});
  } else {
    section.blocks.emplace_back(ParagraphBlock{
        "Equilibrium criteria: as recorded under \"settings\" below (constant mass per "
        "ISO 12571 for desiccator series; rate of mass change for mass logs).",
        8.0});
  }
}

// One sentence per desiccator data set: the weighing scatter its approach estimates used.
void AddWeighingScatter(const SectionContext& ctx, Section& section) {
  if (ctx.inputs.equilibria == nullptr) return;
  for (const equilibrate::WeighingScatterRecord& w :
       ctx.inputs.equilibria->summary.weighing_scatter) {
    const std::string source =
        w.num_steps > 0
            ? fmt::format(
                  "standard deviation pooled over the {} steps of {} or more weighings, "
                  "{} degrees of freedom; JCGM 100:2008, 4.2.4",
                  w.num_steps, w.min_weighings_pooled, w.degrees_of_freedom)
            : fmt::format("the balance's stated standard uncertainty: no step has {} weighings",
                          w.min_weighings_pooled);
    section.blocks.emplace_back(ParagraphBlock{
        fmt::format("Data set {}: the approach to equilibrium of each step is read from its "
                    "weighings with a weighing scatter of {} g ({}).",
                    w.dataset_id, FormatSignificant(w.sd_g, kUncertaintySignificantDigits), source),
        8.0});
  }
}

// Decimals of a dry mass where the job states no balance resolution (0.1 mg, an analytical
// balance; common practice).
constexpr int kDefaultMassDecimals = 4;

void AddDryMasses(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(SubheadingBlock{"Dry mass"});
  if (ctx.inputs.equilibria == nullptr) return;
  TableBlock table;
  table.name = "dry_masses";
  table.columns = {{"Specimen", 0.15, false},
                   {"Dry mass", 0.15, true},
                   {"u (drying step)", 0.15, true},
                   {"Method", 0.55, false}};
  // The dry mass to the balance's last displayed digit (its resolution), as weighed.
  const double resolution_g =
      ctx.inputs.ingested != nullptr ? ctx.inputs.ingested->job.balance_resolution_g : 0.0;
  const int decimals = resolution_g > 0.0
                           ? std::max(0, -static_cast<int>(std::floor(std::log10(resolution_g))))
                           : kDefaultMassDecimals;
  for (const equilibrate::DryMass& d : ctx.inputs.equilibria->dry_masses) {
    table.rows.push_back(
        {{d.specimen_id, ""},
         {FormatFixed(d.mass_g, decimals) + " g", ""},
         {d.u_mass_g > 0.0 ? FormatSignificant(d.u_mass_g, kUncertaintySignificantDigits) + " g"
                           : "balance only",
          ""},
         {d.method + (d.equilibrated ? "" : " (not at constant mass)"), ""}});
  }
  section.blocks.emplace_back(std::move(table));
  section.blocks.emplace_back(
      ParagraphBlock{"u (drying step): standard uncertainty the drying step adds to the weighing "
                     "(extrapolation, approach to equilibrium, drift).",
                     7.5, 0.0, true});
}

TableBlock BudgetTable(const SectionContext& ctx, const PointBudget& budget,
                       const Quantity& moisture) {
  const double ms = ctx.moisture_scale();
  double u2 = 0.0;
  for (const reduce::BudgetLine& b : budget.moisture) u2 += b.contribution * b.contribution;
  TableBlock table;
  table.name = "budget";
  table.columns = {{"Component (aggregated over the specimens of the step)", 0.56, false},
                   {"Contribution to u_c (" + ctx.sheet.moisture_unit + ")", 0.24, true},
                   {"Share of u_c² (%)", 0.20, true}};
  // A line below a thousandth of u_c (a millionth of u_c^2; e.g. a kinetic-model term of
  // 1e-99 where both models agree) changes no printed digit of u_c: said so, not printed as
  // a number no reader can use (results.json keeps its value).
  constexpr double kNegligibleFractionOfUc = 1e-3;
  const double u_c = std::sqrt(u2);
  for (const reduce::BudgetLine& b : budget.moisture) {
    const bool negligible = std::abs(b.contribution) < kNegligibleFractionOfUc * u_c;
    table.rows.push_back(
        {{b.quantity, ""},
         {negligible ? "negligible (< 0.001 u_c)"
                     : FormatSignificant(b.contribution * ms, kUncertaintySignificantDigits),
          ""},
         {u2 > 0.0 ? FormatFixed(100.0 * b.contribution * b.contribution / u2, 1) : "–", ""}});
  }
  table.rows.push_back(
      {{"combined standard uncertainty u_c", ""},
       {FormatSignificant(moisture.standard_uncertainty * ms, kUncertaintySignificantDigits), ""},
       {"100.0", ""}});
  table.rows.push_back(
      {{"expanded uncertainty U = k u_c (k = " + CoverageText(moisture.coverage_factor) + ")", ""},
       {FormatSignificant(moisture.display_expanded_uncertainty, kUncertaintySignificantDigits),
        ""},
       {"", ""}});
  return table;
}

// The budget of one reported point: the point of the equilibrium table with the largest
// expanded uncertainty of its moisture content, named by data set, step, RH, branch,
// temperature and specimens. Every point's budget is in results.json.
void AddBudgetOfLargestPoint(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(SubheadingBlock{"Uncertainty budget of one reported point"});
  if (ctx.inputs.reduced == nullptr || ctx.inputs.reduced->points.empty()) {
    section.blocks.emplace_back(ParagraphBlock{"No equilibrium point was reported.", 8.0});
    return;
  }
  const auto& points = ctx.inputs.reduced->points;
  const auto worst =
      std::max_element(points.begin(), points.end(), [](const auto& a, const auto& b) {
        return a.expanded_u_moisture_kg_per_kg < b.expanded_u_moisture_kg_per_kg;
      });
  const PointBudget budget = CombinedPointBudget(*ctx.inputs.reduced, *worst);
  const Quantity rh = PointRhQuantity(*worst, ctx.sheet.rules);
  const Quantity moisture = PointMoistureQuantity(*worst, ctx.sheet.rules);
  std::string specimens;
  for (const std::string& id : budget.specimen_ids)
    specimens += (specimens.empty() ? "" : ", ") + id;
  section.blocks.emplace_back(ParagraphBlock{
      fmt::format("Point with the largest expanded uncertainty in the equilibrium table: data set "
                  "{}, step {} ({}), {}, {}, RH {}; specimens {}. Moisture content {} (k = {}). "
                  "Budget per JCGM 100:2008 (law of propagation); results.json holds the "
                  "budget of every point.",
                  worst->dataset_id, worst->step_index + 1, worst->step_label,
                  BranchLabel(worst->branch), TemperatureLabel(worst->temperature_K), rh.text,
                  specimens.empty() ? "–" : specimens, moisture.text,
                  CoverageText(moisture.coverage_factor)),
      8.0});
  section.blocks.emplace_back(BudgetTable(ctx, budget, moisture));
}

void AddInputs(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(SubheadingBlock{"Inputs (SHA-256)"});
  if (ctx.inputs.ingested == nullptr) return;
  TableBlock table;
  table.name = "inputs";
  table.columns = {{"Role", 0.12, false}, {"File", 0.30, false}, {"SHA-256", 0.58, false}};
  table.size_pt = 6.5;
  for (const ingest::InputFileRecord& f : ctx.inputs.ingested->inputs) {
    table.rows.push_back({{f.role, ""}, {f.path, ""}, {f.sha256, ""}});
  }
  section.blocks.emplace_back(std::move(table));
}

// Settings flattened to "section.key = value" lines.
void AddSettings(const SectionContext& ctx, Section& section) {
  section.blocks.emplace_back(SubheadingBlock{"Software and settings"});
  section.blocks.emplace_back(
      ParagraphBlock{"sorbtrace " + PlainVersion(ctx.inputs.software_version) + "; template \"" +
                         ctx.layout.name + "\". All settings after overrides:",
                     8.0});
  std::function<void(const nlohmann::ordered_json&, const std::string&)> flatten =
      [&](const nlohmann::ordered_json& j, const std::string& prefix) {
        if (j.is_object()) {
          for (auto it = j.begin(); it != j.end(); ++it) {
            flatten(it.value(), prefix.empty() ? it.key() : prefix + "." + it.key());
          }
        } else {
          section.blocks.emplace_back(
              ParagraphBlock{prefix + " = " + SettingText(j), 7.0, 8.0, true});
        }
      };
  if (!ctx.inputs.effective_settings.is_null()) flatten(ctx.inputs.effective_settings, "");
  section.blocks.emplace_back(
      ParagraphBlock{"The results apply to the specimens tested.", 8.5, 0.0, false, true, 6.0});
}

}  // namespace

void BuildMethodSection(const SectionContext& ctx, Section& section) {
  AddProcedure(ctx, section);
  AddWeighingScatter(ctx, section);
  if (!ctx.sheet.not_evaluated.empty()) {  // the design could not support these models
    section.blocks.emplace_back(SubheadingBlock{"Models not evaluated"});
    section.blocks.emplace_back(BulletsBlock{ctx.sheet.not_evaluated, 8.0});
  }
  AddDryMasses(ctx, section);
  AddBudgetOfLargestPoint(ctx, section);
  AddInputs(ctx, section);
  AddSettings(ctx, section);
}

}  // namespace sorbtrace::report::internal
