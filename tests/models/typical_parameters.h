// Typical parameter vectors of every registered model for the derivative, starting-value and
// round-trip tests (values of the order found in hygroscopic building materials and foods;
// invented, not taken from any material). The multimodal retention curves have pore systems
// two decades of capillary pressure apart (alpha = 1e-4, 1e-6, 1e-8 1/Pa): drained by pressure
// plate (1 kPa..1 MPa) and hygroscopic (RH) steps together. A model added to the registry without
// an entry here makes the registry test fail.
#pragma once

#include <map>
#include <string>
#include <vector>

namespace sorbtrace::fitters::testing {

inline const std::map<std::string, std::vector<double>>& TypicalParameters() {
  static const std::map<std::string, std::vector<double>> table = {
      {"gab", {0.05, 10.0, 0.8}},
      {"bet", {0.05, 10.0}},
      {"bet_n", {0.05, 10.0, 5.0}},
      {"vangenuchten", {0.3, -7.5, 1.6}},
      {"vangenuchten_free_m", {0.3, -7.5, 1.6, 0.45}},
      {"durner2", {0.3, 0.4, -5.0, 2.0, 2.0, 1.5}},
      {"durner3", {0.3, 0.4, 0.5, -4.0, 2.0, 2.0, 1.8, 2.0, 1.5}},
      {"oswin", {0.08, 0.4}},
      {"halsey", {0.016, 1.5}},
      {"henderson", {29.0, 1.5}},
      {"peleg", {0.1, 0.5, 0.2, 5.0}},
  };
  return table;
}

}  // namespace sorbtrace::fitters::testing
