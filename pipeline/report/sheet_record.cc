// BuildSheetRecord: the full-precision values beside the printed sheet (sheet.h, SheetRecord),
// the part of the stage results that results.json and the CSV companions write out. With
// BuildSheet and the section builders, the only reader of the stage results in the report
// stage.
#include <algorithm>
#include <string>
#include <utility>
#include <vector>

#include "pipeline/report/sheet.h"

namespace sorbtrace::report::internal {
namespace {

// The number the data file gives the step `step_index` of `specimen_id` in data set
// `dataset_id`: a desiccator file's `step` column; a vapour log's (and any step without a
// number) position from 1.
int StepNumberInFile(const ingest::IngestResult* ingested, const std::string& dataset_id,
                     const std::string& specimen_id, int step_index) {
  if (ingested != nullptr) {
    for (const ingest::DesiccatorSeries& series : ingested->desiccator_series) {
      if (series.dataset_id != dataset_id) continue;
      for (const ingest::DesiccatorStep& step : series.steps) {
        // A step read from a file has a number >= 1 (desiccator.cc); 0: not from a file.
        if (step.specimen_id == specimen_id && step.step_index == step_index &&
            step.step_number >= 1) {
          return step.step_number;
        }
      }
    }
  }
  return step_index + 1;
}

// A combined point's step: one number when its specimens agree, else each specimen's joined
// by '+' in specimen order.
std::string CombinedStepInFile(const ingest::IngestResult* ingested,
                               const reduce::IsothermPoint& point) {
  std::vector<int> numbers;
  for (const std::string& id : point.specimen_ids) {
    numbers.push_back(StepNumberInFile(ingested, point.dataset_id, id, point.step_index));
  }
  if (numbers.empty()) return std::to_string(point.step_index + 1);
  if (std::all_of(numbers.begin(), numbers.end(), [&](int n) { return n == numbers.front(); })) {
    return std::to_string(numbers.front());
  }
  std::string joined;
  for (int n : numbers) joined += (joined.empty() ? "" : "+") + std::to_string(n);
  return joined;
}

EquilibriaRecord MakeEquilibriaRecord(const equilibrate::EquilibriumSet& set) {
  // The traces stay in the stage result: results.json lists the equilibria, not every weighing.
  return {set.points, set.dry_masses, set.summary};
}

SpecimenPointRecord MakeSpecimenPointRecord(const ingest::IngestResult* ingested,
                                            const reduce::SpecimenPoint& p,
                                            double isotherm_coverage_factor,
                                            const DisplayRules& rules) {
  DisplayRules rh_rules = rules;
  rh_rules.coverage_factor = isotherm_coverage_factor;
  DisplayRules moisture_rules = rules;
  moisture_rules.coverage_factor = CoverageFactorOf(
      p.u_moisture_kg_per_kg, p.expanded_u_moisture_kg_per_kg, isotherm_coverage_factor);
  SpecimenPointRecord out;
  out.point = p;
  out.rh = MakeQuantity("rh", "RH", p.rh_fraction, p.u_rh_fraction, "1", 100.0, "%", rh_rules);
  out.moisture = MoistureQuantity("moisture", "moisture content", p.moisture_kg_per_kg,
                                  p.u_moisture_kg_per_kg, moisture_rules);
  out.step_in_file =
      std::to_string(StepNumberInFile(ingested, p.dataset_id, p.specimen_id, p.step_index));
  return out;
}

IsothermRecord MakeIsothermRecord(const ingest::IngestResult* ingested,
                                  const reduce::ReducedIsotherms& reduced,
                                  const DisplayRules& rules) {
  IsothermRecord out;
  out.coverage_factor = reduced.coverage_factor;
  for (const reduce::IsothermPoint& p : reduced.points) {
    out.points.push_back({p, PointRhQuantity(p, rules), PointMoistureQuantity(p, rules),
                          CombinedPointBudget(reduced, p), CombinedStepInFile(ingested, p)});
  }
  for (const reduce::SpecimenPoint& p : reduced.specimen_points) {
    out.specimen_points.push_back(
        MakeSpecimenPointRecord(ingested, p, reduced.coverage_factor, rules));
  }
  out.retention = reduced.retention;
  out.summary = reduced.summary;
  return out;
}

std::vector<RankingRecord> MakeRanking(const fit::IsothermFits& fits) {
  std::vector<RankingRecord> ranking;
  for (size_t g = 0; g < fits.best_fit_per_group.size(); ++g) {
    RankingRecord record;
    record.group_index = static_cast<int>(g);
    record.best_fit_index = fits.best_fit_per_group[g];
    for (size_t i = 0; i < fits.fits.size(); ++i) {
      if (fits.fits[i].group_index == record.group_index && fits.fits[i].rank > 0) {
        record.order.push_back({fits.fits[i].rank, i});
      }
    }
    std::sort(record.order.begin(), record.order.end(),
              [](const RankingRecord::Entry& a, const RankingRecord::Entry& b) {
                return a.rank != b.rank ? a.rank < b.rank : a.fit_index < b.fit_index;
              });
    ranking.push_back(std::move(record));
  }
  return ranking;
}

FitsRecord MakeFitsRecord(const fit::IsothermFits& fits) {
  FitsRecord out;
  out.coverage_factor = fits.coverage_factor;
  for (const fit::FitGroup& group : fits.groups) out.groups.push_back({group, GroupLabel(group)});
  out.fits = fits.fits;
  out.ranking = MakeRanking(fits);
  out.summary = fits.summary;
  return out;
}

DistributionRecord MakeDistributionRecord(const pores::PoreDistribution& d,
                                          const DisplayRules& rules) {
  DistributionRecord out;
  out.distribution = d;
  // 1 m3/kg = 1e6 mm3/g; 1 m = 1e9 nm.
  out.total_resolved_volume = DrawnQuantity(
      "total_resolved_volume", "Kelvin-resolved pore volume", d.total_resolved_volume_m3_per_kg,
      d.u_total_resolved_volume_m3_per_kg, d.k_total_resolved_volume, "m3/kg", 1e6, "mm³/g", rules);
  for (const pores::ModalRadius& mode : d.modes) {
    out.modes.push_back(DrawnQuantity("mode", "modal radius", mode.radius_m, mode.u_radius_m,
                                      mode.coverage_factor, "m", 1e9, "nm", rules));
  }
  return out;
}

ReferenceMoistureRecord MakeReferenceRecord(const pores::ReferenceMoisture& r,
                                            const fit::IsothermFits* fits,
                                            const DisplayRules& rules) {
  DisplayRules own = rules;
  own.coverage_factor = r.coverage_factor;  // Student-t from nu_eff (pores.h)
  return {r,
          MoistureQuantity("reference_moisture", "moisture content", r.moisture_kg_per_kg,
                           r.u_moisture_kg_per_kg, own),
          MeasuredTemperature_K(fits, r)};
}

PoresRecord MakePoresRecord(const pores::PoreAnalysis& pa, const fit::IsothermFits* fits,
                            const DisplayRules& rules) {
  PoresRecord out;
  for (const pores::PoreDistribution& d : pa.distributions) {
    out.distributions.push_back(MakeDistributionRecord(d, rules));
  }
  for (const pores::SurfaceArea& s : pa.surface_areas) {
    out.surface_areas.push_back(
        {s, SurfaceAreaQuantity(s, "surface_area", "specific surface area", rules),
         MoistureQuantity("monolayer", "monolayer moisture content", s.monolayer_kg_per_kg,
                          s.u_monolayer_kg_per_kg, MonolayerRules(s, rules))});
  }
  for (const pores::ReferenceMoisture& r : pa.reference_moisture) {
    out.reference_moisture.push_back(MakeReferenceRecord(r, fits, rules));
  }
  const pores::Hygroscopicity& h = pa.hygroscopicity;
  out.hygroscopicity = h;
  if (h.applicable) {
    out.mass_increase = MakeQuantity("mass_increase", "mass increase", h.mass_increase_percent,
                                     h.u_mass_increase_percent, "%", 1.0, "%", rules);
  }
  out.hysteresis = pa.hysteresis;
  out.isosteric_heat = pa.isosteric_heat;
  out.warnings = pa.summary.warnings;
  return out;
}

}  // namespace

SheetRecord BuildSheetRecord(const ReportInputs& inputs, const Template& layout,
                             const ReportOptions& options, const Sheet& sheet) {
  SheetRecord record;
  record.software_version = PlainVersion(inputs.software_version);
  record.template_name = layout.name;
  record.template_title = layout.title;
  record.document_date = options.document_date;
  if (inputs.ingested != nullptr) {
    record.job = inputs.ingested->job;
    record.input_files = inputs.ingested->inputs;
  }
  if (!inputs.effective_settings.is_null()) record.settings = inputs.effective_settings;
  record.issue = IssueJson(inputs, sheet);
  if (inputs.equilibria != nullptr) record.equilibria = MakeEquilibriaRecord(*inputs.equilibria);
  if (inputs.reduced != nullptr) {
    record.isotherm = MakeIsothermRecord(inputs.ingested, *inputs.reduced, sheet.rules);
  }
  if (inputs.fits != nullptr) record.fits = MakeFitsRecord(*inputs.fits);
  if (inputs.pores != nullptr) {
    record.pores = MakePoresRecord(*inputs.pores, inputs.fits, sheet.rules);
  }
  return record;
}

}  // namespace sorbtrace::report::internal
