// The model registry: every isotherm model the pipeline can fit, looked up by its key
// (ModelInfo::name), e.g. "gab", "bet", "bet_n", "vangenuchten", "durner2".
//
// Models are stateless singletons that live for the whole program; the pointers stay valid.
// Adding a model is one file in fitters/models/ plus one line in fitters/registry.cc.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "fitters/model.h"

namespace sorbtrace::fitters {

// The model registered under `name` (exact, lower case), or nullptr if there is none.
const Model* FindModel(std::string_view name);

// Every registered model, in a fixed order (the order of ModelNames()).
const std::vector<const Model*>& AllModels();

// The registered keys, in a fixed order: for error messages and --help texts.
std::vector<std::string> ModelNames();

}  // namespace sorbtrace::fitters
