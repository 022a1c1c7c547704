#include "pipeline/fit/grouping.h"

#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <iterator>
#include <map>
#include <string_view>
#include <utility>

namespace sorbtrace::fit::internal {
namespace {

// Something that has one temperature for clustering: an isotherm data set or the retention
// points of one specimen.
struct TemperatureItem {
  std::string key;  // "d:<dataset_id>" or "r:<specimen_id>": sorts data sets before retention
  double temperature_sum_K = 0.0;
  int count = 0;
  double MeanTemperature_K() const { return temperature_sum_K / count; }
};

// A point that may be fitted, before it is placed in a group.
struct Candidate {
  int cluster = 0;
  ingest::Branch branch = ingest::Branch::kAdsorption;
  fitters::Observation observation;
  int point_index = -1;  // into ReducedIsotherms::points, -1 for retention points
};

Diagnostic Warning(std::string message, std::string expected = {}) {
  Diagnostic diagnostic;
  diagnostic.severity = Severity::kWarning;
  diagnostic.message = std::move(message);
  diagnostic.expected = std::move(expected);
  return diagnostic;
}

bool Finite(double value) { return std::isfinite(value); }

std::uint64_t SplitMix64(std::uint64_t z) {
  z += 0x9E3779B97F4A7C15ULL;
  z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ULL;
  z = (z ^ (z >> 27)) * 0x94D049BB133111EBULL;
  return z ^ (z >> 31);
}

// FNV-1a, 64 bit (G. Fowler, L. C. Noll, K.-P. Vo; offset basis and prime of the published
// FNV specification, from memory): a stable hash of a model name.
std::uint64_t HashName(const std::string& name) {
  std::uint64_t hash = 0xCBF29CE484222325ULL;
  for (const char c : name) {
    hash ^= static_cast<unsigned char>(c);
    hash *= 0x100000001B3ULL;
  }
  return hash;
}

// Replaces non-positive or non-finite sigma_y in one group by the smallest valid sigma_y of the
// group (a conservative weight: no point gets more weight than the best-measured one); if none
// is valid, every point gets sigma_y = 1 (an unweighted fit).
void RepairSigmas(FitGroup* group, std::vector<Diagnostic>* warnings) {
  double smallest = fitters::kInfinity;
  int invalid = 0;
  for (const fitters::Observation& observation : group->observations) {
    if (Finite(observation.sigma_y) && observation.sigma_y > 0.0) {
      smallest = std::min(smallest, observation.sigma_y);
    } else {
      ++invalid;
    }
  }
  if (invalid == 0) return;
  const bool none_valid = !Finite(smallest);
  for (fitters::Observation& observation : group->observations) {
    if (none_valid) {
      observation.sigma_y = 1.0;
    } else if (!(Finite(observation.sigma_y) && observation.sigma_y > 0.0)) {
      observation.sigma_y = smallest;
    }
  }
  const std::string where =
      fmt::format("{} at {:.2f} K", ingest::BranchName(group->branch), group->temperature_K);
  if (none_valid) {
    warnings->push_back(
        Warning(fmt::format("fit group {}: no point has a positive moisture uncertainty; the "
                            "fit is unweighted (sigma = 1 for every point)",
                            where),
                "a combined standard uncertainty > 0 for each point"));
  } else {
    warnings->push_back(Warning(
        fmt::format("fit group {}: {} point(s) without a positive moisture uncertainty were "
                    "given the smallest uncertainty of the group, {:.3g} kg/kg",
                    where, invalid, smallest),
        "a combined standard uncertainty > 0 for each point"));
  }
}

}  // namespace

std::vector<SpecimenFactor> SpecimenFactors(const reduce::ReducedIsotherms& reduced,
                                            const FitGroup& group) {
  // Per (data set, specimen): its participation vector over the group's observations (1 / n_i
  // where it is one of the n_i specimens of point i). Specimens with equal vectors are merged.
  std::map<std::pair<int, std::string>, std::vector<double>> participation;
  const std::size_t n = group.observations.size();
  for (std::size_t i = 0; i < n; ++i) {
    const int index = group.point_indices[i];
    if (index < 0) continue;
    const reduce::IsothermPoint& point = reduced.points[static_cast<std::size_t>(index)];
    if (point.specimen_term < 0 || point.specimen_ids.empty()) continue;
    const reduce::SpecimenTerm& term =
        reduced.specimen_terms[static_cast<std::size_t>(point.specimen_term)];
    if (!(term.relative_sd > 0.0)) continue;
    for (const std::string& id : point.specimen_ids) {
      std::vector<double>& weights = participation[{point.specimen_term, id}];
      weights.resize(n, 0.0);
      weights[i] = 1.0 / static_cast<double>(point.specimen_ids.size());
    }
  }
  std::vector<SpecimenFactor> factors;
  for (const auto& entry : participation) {
    // Named references, not a structured binding: the lambda below captures them (C++20 allows
    // capturing bindings; clang 14, which lints this code, does not).
    const auto& key = entry.first;
    const std::vector<double>& weights = entry.second;
    const reduce::SpecimenTerm& term = reduced.specimen_terms[static_cast<std::size_t>(key.first)];
    auto same = std::find_if(factors.begin(), factors.end(), [&](const SpecimenFactor& f) {
      return f.dataset_id == term.dataset_id && f.weights == weights;
    });
    if (same == factors.end()) {
      SpecimenFactor factor;
      factor.dataset_id = term.dataset_id;
      factor.degrees_of_freedom = term.degrees_of_freedom;
      factor.independent_degrees_of_freedom = term.independent_degrees_of_freedom;
      factor.weights = weights;
      factors.push_back(std::move(factor));
      same = std::prev(factors.end());
    }
    same->specimen_ids.push_back(key.second);
    // Merged specimens: the sum of their factors, variance count x sigma_d^2.
    same->relative_standard_uncertainty =
        term.relative_sd * std::sqrt(static_cast<double>(same->specimen_ids.size()));
  }
  return factors;
}

std::vector<SpecimenFactor> CycleFactors(const reduce::ReducedIsotherms& reduced,
                                         const FitGroup& group) {
  // Per data set: per cycle, the group's observation of each step label.
  std::map<std::string, std::map<int, std::map<std::string, std::size_t>>> by_dataset;
  const std::size_t n = group.observations.size();
  for (std::size_t i = 0; i < n; ++i) {
    const int index = group.point_indices[i];
    if (index < 0) continue;
    const reduce::IsothermPoint& point = reduced.points[static_cast<std::size_t>(index)];
    by_dataset[point.dataset_id][point.cycle][point.step_label] = i;
  }
  std::vector<SpecimenFactor> factors;
  for (const auto& [dataset_id, cycles] : by_dataset) {
    if (cycles.size() < 2) continue;
    // The complete block: step labels present in every cycle, on the log scale.
    std::vector<std::string> labels;
    for (const auto& [label, i] : cycles.begin()->second) {
      bool everywhere = true;
      for (const auto& [cycle, steps] : cycles) everywhere = everywhere && steps.count(label) > 0;
      if (everywhere) labels.push_back(label);
    }
    const double num_cycles = static_cast<double>(cycles.size());
    double total_weight = 0.0;    // W = sum_i w_i
    std::map<int, double> level;  // c_c * W
    for (const std::string& label : labels) {
      double mean_log = 0.0, mean_variance = 0.0;
      bool usable = true;
      for (const auto& [cycle, steps] : cycles) {
        const reduce::IsothermPoint& p =
            reduced.points[static_cast<std::size_t>(group.point_indices[steps.at(label)])];
        usable = usable && p.moisture_kg_per_kg > 0.0 && p.u_independent_kg_per_kg > 0.0;
        if (!usable) break;
        mean_log += std::log(p.moisture_kg_per_kg) / num_cycles;
        mean_variance += std::pow(p.u_independent_kg_per_kg / p.moisture_kg_per_kg, 2) / num_cycles;
      }
      if (!usable) continue;
      const double w = 1.0 / mean_variance;
      total_weight += w;
      for (const auto& [cycle, steps] : cycles) {
        const reduce::IsothermPoint& p =
            reduced.points[static_cast<std::size_t>(group.point_indices[steps.at(label)])];
        level[cycle] += w * (std::log(p.moisture_kg_per_kg) - mean_log);
      }
    }
    if (!(total_weight > 0.0)) continue;
    double mean_square = 0.0;  // MS_C = sum_c c_c^2 / (C - 1)
    for (const auto& [cycle, sum] : level) {
      mean_square += std::pow(sum / total_weight, 2) / (num_cycles - 1.0);
    }
    const double variance = mean_square - 1.0 / total_weight;
    if (!(variance > 0.0)) continue;  // the cycles agree within their independent parts
    for (const auto& [cycle, steps] : cycles) {
      SpecimenFactor factor;
      factor.dataset_id = dataset_id;
      factor.specimen_ids = {fmt::format("cycle {}", cycle + 1)};
      factor.is_cycle = true;
      factor.relative_standard_uncertainty = std::sqrt(variance);
      // Satterthwaite for MS_C - 1/W, 1/W exactly known (the evaluated parts, Type B).
      factor.degrees_of_freedom =
          variance * variance / (mean_square * mean_square / (num_cycles - 1.0));
      factor.weights.assign(n, 0.0);
      for (std::size_t i = 0; i < n; ++i) {
        const int index = group.point_indices[i];
        if (index < 0) continue;
        const reduce::IsothermPoint& p = reduced.points[static_cast<std::size_t>(index)];
        if (p.dataset_id == dataset_id && p.cycle == cycle) factor.weights[i] = 1.0;
      }
      factors.push_back(std::move(factor));
    }
  }
  return factors;
}

bool IsRetentionModel(const std::string& model_name) {
  return model_name.starts_with("vangenuchten") || model_name.starts_with("durner");
}

std::vector<int> SelectObservations(const FitGroup& group, bool retention_model, double x_min,
                                    double x_max) {
  std::vector<int> selected;
  for (std::size_t i = 0; i < group.observations.size(); ++i) {
    if (group.point_indices[i] < 0 && !retention_model) continue;
    const double x0 = group.observations[i].x[0];
    if (x0 < x_min || x0 > x_max) continue;
    selected.push_back(static_cast<int>(i));
  }
  return selected;
}

std::uint64_t StreamState(std::uint64_t base, int group_index, const std::string& model_name,
                          int purpose) {
  std::uint64_t state = SplitMix64(base);
  state = SplitMix64(state ^ static_cast<std::uint64_t>(group_index));
  state = SplitMix64(state ^ HashName(model_name));
  state = SplitMix64(state ^ static_cast<std::uint64_t>(purpose));
  return state;
}

std::vector<FitGroup> BuildGroups(const reduce::ReducedIsotherms& reduced,
                                  const FitStageOptions& options,
                                  std::vector<Diagnostic>* warnings) {
  // 1. Usable points and the temperature of each data set / retention specimen.
  std::map<std::string, TemperatureItem> items;
  std::vector<std::pair<std::string, Candidate>> candidates;  // item key, candidate

  for (std::size_t i = 0; i < reduced.points.size(); ++i) {
    const reduce::IsothermPoint& point = reduced.points[i];
    if (point.branch == ingest::Branch::kDrying) continue;  // dry reference, not an isotherm
    const bool usable = Finite(point.rh_fraction) && point.rh_fraction >= 0.0 &&
                        point.rh_fraction <= 1.0 && Finite(point.moisture_kg_per_kg) &&
                        Finite(point.temperature_K) && point.temperature_K > 0.0;
    if (!usable) {
      warnings->push_back(
          Warning(fmt::format("data set '{}', step {} ('{}'): point left out of the fits (RH {}, "
                              "moisture {}, temperature {} K)",
                              point.dataset_id, point.step_index, point.step_label,
                              point.rh_fraction, point.moisture_kg_per_kg, point.temperature_K),
                  "finite values, 0 <= RH <= 1, temperature > 0 K"));
      continue;
    }
    Candidate candidate;
    candidate.branch = point.branch;
    candidate.point_index = static_cast<int>(i);
    candidate.observation.x[0] = point.rh_fraction;
    candidate.observation.y = point.moisture_kg_per_kg;
    // With a specimen term the fit weights the independent part only; the common part is
    // carried by the group's specimen factors (fit_stage.h).
    candidate.observation.sigma_y =
        point.specimen_term >= 0 ? point.u_independent_kg_per_kg : point.u_moisture_kg_per_kg;
    candidate.observation.sigma_x0 =
        Finite(point.u_rh_fraction) && point.u_rh_fraction > 0.0 ? point.u_rh_fraction : 0.0;
    const std::string key = "d:" + point.dataset_id;
    TemperatureItem& item = items[key];
    item.key = key;
    item.temperature_sum_K += point.temperature_K;
    ++item.count;
    candidates.emplace_back(key, candidate);
  }

  if (options.include_retention_points) {
    for (const reduce::RetentionIsothermPoint& point : reduced.retention) {
      if (point.branch == ingest::Branch::kDrying) continue;
      const bool usable = Finite(point.equivalent_rh_fraction) &&
                          point.equivalent_rh_fraction >= 0.0 &&
                          point.equivalent_rh_fraction <= 1.0 && Finite(point.moisture_kg_per_kg) &&
                          Finite(point.temperature_K) && point.temperature_K > 0.0;
      if (!usable) {
        warnings->push_back(
            Warning(fmt::format("retention point of specimen '{}' at {} Pa left out of the fits",
                                point.specimen_id, point.capillary_pressure_Pa),
                    "finite values, 0 <= equivalent RH <= 1, temperature > 0 K"));
        continue;
      }
      Candidate candidate;
      candidate.branch = point.branch;
      candidate.point_index = -1;
      candidate.observation.x[0] = point.equivalent_rh_fraction;
      candidate.observation.y = point.moisture_kg_per_kg;
      candidate.observation.sigma_y = point.u_moisture_kg_per_kg;
      candidate.observation.sigma_x0 = 0.0;  // the pressure is the set quantity
      const std::string key = "r:" + point.specimen_id;
      TemperatureItem& item = items[key];
      item.key = key;
      item.temperature_sum_K += point.temperature_K;
      ++item.count;
      candidates.emplace_back(key, candidate);
    }
  }

  // 2. Temperature clusters: items sorted by mean temperature (then key); an item starts a
  //    new cluster when it is more than kTemperatureMergeSpan_K warmer than the coldest item
  //    of the current cluster.
  std::vector<const TemperatureItem*> sorted;
  sorted.reserve(items.size());
  for (const auto& [key, item] : items) sorted.push_back(&item);
  std::stable_sort(sorted.begin(), sorted.end(),
                   [](const TemperatureItem* a, const TemperatureItem* b) {
                     return a->MeanTemperature_K() < b->MeanTemperature_K();
                   });
  std::map<std::string, int> cluster_of;
  int num_clusters = 0;
  double cluster_start_K = 0.0;
  for (const TemperatureItem* item : sorted) {
    if (num_clusters == 0 ||
        item->MeanTemperature_K() - cluster_start_K > kTemperatureMergeSpan_K) {
      ++num_clusters;
      cluster_start_K = item->MeanTemperature_K();
    }
    cluster_of[item->key] = num_clusters - 1;
  }

  // Cluster temperature: mean over its isotherm points (over its retention points if it has
  // no isotherm point), shared by both branches so that groups pair up by temperature.
  std::vector<double> isotherm_sum_K(num_clusters, 0.0), retention_sum_K(num_clusters, 0.0);
  std::vector<int> isotherm_count(num_clusters, 0), retention_count(num_clusters, 0);
  for (auto& [key, candidate] : candidates) {
    candidate.cluster = cluster_of.at(key);
    if (candidate.point_index >= 0) {
      isotherm_sum_K[candidate.cluster] += reduced.points[candidate.point_index].temperature_K;
      ++isotherm_count[candidate.cluster];
    }
  }
  if (options.include_retention_points) {
    for (const reduce::RetentionIsothermPoint& point : reduced.retention) {
      const auto found = cluster_of.find("r:" + point.specimen_id);
      if (found == cluster_of.end()) continue;
      retention_sum_K[found->second] += point.temperature_K;
      ++retention_count[found->second];
    }
  }

  // 3. Groups: clusters in order of temperature, adsorption before desorption; points keep
  //    the order of ReducedIsotherms::points, retention points follow.
  std::vector<FitGroup> groups;
  for (int cluster = 0; cluster < num_clusters; ++cluster) {
    const double temperature_K = isotherm_count[cluster] > 0
                                     ? isotherm_sum_K[cluster] / isotherm_count[cluster]
                                     : retention_sum_K[cluster] / retention_count[cluster];
    for (const ingest::Branch branch : {ingest::Branch::kAdsorption, ingest::Branch::kDesorption}) {
      FitGroup group;
      group.branch = branch;
      group.temperature_K = temperature_K;
      for (const auto& [key, candidate] : candidates) {
        if (candidate.cluster != cluster || candidate.branch != branch) continue;
        group.observations.push_back(candidate.observation);
        group.point_indices.push_back(candidate.point_index);
      }
      if (group.observations.empty()) continue;
      int not_equilibrated = 0;
      for (const int index : group.point_indices) {
        if (index >= 0 && !reduced.points[index].equilibrated) ++not_equilibrated;
      }
      if (not_equilibrated > 0) {
        warnings->push_back(Warning(
            fmt::format("fit group {} at {:.2f} K: {} point(s) not at equilibrium are fitted "
                        "(kept and flagged by the reduce stage)",
                        ingest::BranchName(branch), temperature_K, not_equilibrated)));
      }
      RepairSigmas(&group, warnings);
      group.specimen_factors = SpecimenFactors(reduced, group);
      for (SpecimenFactor& factor : CycleFactors(reduced, group)) {
        group.specimen_factors.push_back(std::move(factor));
      }
      groups.push_back(std::move(group));
    }
  }
  return groups;
}

}  // namespace sorbtrace::fit::internal
