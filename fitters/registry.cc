#include "fitters/registry.h"

#include "fitters/models/bet.h"
#include "fitters/models/durner.h"
#include "fitters/models/gab.h"
#include "fitters/models/halsey.h"
#include "fitters/models/henderson.h"
#include "fitters/models/oswin.h"
#include "fitters/models/peleg.h"
#include "fitters/models/van_genuchten.h"

namespace sorbtrace::fitters {

const std::vector<const Model*>& AllModels() {
  // An explicit list (no self-registering statics, which a static library may drop at link
  // time). One line per model.
  static const std::vector<const Model*> models = {
      &models::GabModel(),
      &models::BetModel(),
      &models::BetNLayerModel(),
      &models::VanGenuchtenModel(),
      &models::VanGenuchtenFreeMModel(),
      &models::Durner2Model(),
      &models::Durner3Model(),
      &models::OswinModel(),
      &models::HalseyModel(),
      &models::HendersonModel(),
      &models::PelegModel(),
  };
  return models;
}

const Model* FindModel(std::string_view name) {
  for (const Model* model : AllModels())
    if (model->name() == name) return model;
  return nullptr;
}

std::vector<std::string> ModelNames() {
  std::vector<std::string> names;
  for (const Model* model : AllModels()) names.push_back(model->name());
  return names;
}

}  // namespace sorbtrace::fitters
