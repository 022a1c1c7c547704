// Text as a person reads it on the datasheet (PDF and HTML): the stage results word their flags
// and warnings for run.log and results.json, where internal keys, Kelvin temperatures and source
// notes such as "from memory" belong. ReaderText is the one rule that turns such a text into
// what the sheet prints:
//  - an absolute temperature in kelvin ("296.15 K", a number of at least 150 followed by " K")
//    becomes degrees Celsius ("23 °C", or "23.4 °C" off a whole degree: report::TemperatureLabel);
//    a smaller number of kelvin is a temperature difference and keeps its number ("0.15 °C");
//  - "degC" becomes "°C", "+-" becomes "±";
//  - the source note "from memory" (DEVELOPERS.md: a value not confirmed against its source) is
//    left out, with the punctuation that introduced it ("; from memory", " (from memory)");
//  - a model registry key standing as a word ("gab", "bet", "durner2", ...) becomes the model's
//    title, except where it is quoted ("gab" in a settings record) or part of a key (fit.gab).
// Everything else is left as written.
#pragma once

#include <string>

namespace sorbtrace::report::internal {

std::string ReaderText(const std::string& text);

}  // namespace sorbtrace::report::internal
