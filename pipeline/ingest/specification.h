// The [[specification]] tables of a job file (internal to the ingest stage; LoadJobSpec calls
// it). Each table names one headline quantity by its results.json key, a lower and/or upper
// limit with their unit (or, for the Ph. Eur. 5.11 class, quantity = "hygroscopicity_class"
// with at_most = "<class>"), the decision rule and optionally the specification document; see
// docs/input-formats.md. Whether the key names a result of this job is known only once the
// sheet is built: the report checks it (with this table's location) and evaluates the rule.
#pragma once

#include <toml++/toml.h>

#include <string>
#include <vector>

#include "pipeline/ingest/ingest.h"

namespace sorbtrace::ingest::internal {

// Reads every [[specification]] table of `root` (none: an empty list). `display` is the job
// file as messages name it. Throws InputError at the offending key: unknown key, a key of the
// wrong type, no limit, lower >= upper, a non-finite number, an unknown decision rule, a
// setting of another rule, a guard band or probability outside conform::Options::IsValid, an
// unknown class name, at_most on another quantity or limits/unit beside at_most.
std::vector<Specification> ReadSpecifications(const toml::table& root, const std::string& display);

}  // namespace sorbtrace::ingest::internal
