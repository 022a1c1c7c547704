// The 27 NIST StRD nonlinear regression models (NIST StRD, Statistical Engineering Division,
// ITL) as Equations for AutoDiffModel, and a reader for the StRD .dat files.
#pragma once

#include <functional>
#include <memory>
#include <string>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters::nist {

// One StRD file: starts, certified values and data.
struct Dataset {
  std::string name;
  int num_parameters = 0;
  std::vector<double> start1;
  std::vector<double> start2;
  std::vector<double> certified_values;
  std::vector<double> certified_std_devs;
  double certified_rss = 0.0;
  double certified_residual_sd = 0.0;
  std::vector<Observation> observations;  // sigma_y = 1; Nelson: y = log(y_file)
};

// Reads tests/data/nist/<name>.dat (CR LF tolerated). Throws std::runtime_error.
Dataset ReadDataset(const std::string& path, const std::string& name);

struct Problem {
  std::string name;  // file stem, e.g. "Misra1a"
  std::function<std::unique_ptr<Model>()> make_model;
};

// All 27 problems, in the order of the StRD difficulty table.
const std::vector<Problem>& AllProblems();

// Log relative error -log10(|estimate - certified| / |certified|), capped at `cap` digits
// (absolute error when certified == 0).
double LogRelativeError(double estimate, double certified, double cap = 11.0);

}  // namespace sorbtrace::fitters::nist
