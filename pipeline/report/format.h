// Number formatting of the report stage (internal): the rules live in
// pipeline/common/number_text.h (JCGM 100:2008, 7.2.6; notation; digit cap), shared with the
// stages that write notes for the sheet; the report uses them under its own names.
#pragma once

#include "pipeline/common/number_text.h"

namespace sorbtrace::report::internal {

using common::CoverageText;
using common::FormatFixed;
using common::FormatProbability;
using common::FormatSetting;
using common::FormatSignificant;
using common::kMaxValueDigits;
using common::kUncertaintySignificantDigits;

}  // namespace sorbtrace::report::internal
