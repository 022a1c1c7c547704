// Internal to the ingest stage: date-time stamps of desiccator weighings.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

namespace sorbtrace::ingest::internal {

// Checks a datetime_format value from the job file: "iso8601" or a pattern made of the
// fields %Y (4 digits), %m, %d, %H, %M (1 or 2 digits), optional %S, and literal characters;
// %Y, %m, %d, %H and %M are required. Returns an empty string if valid, else what is wrong.
std::string CheckDateTimeFormat(std::string_view format);

// Parses `text` as a date-time in `format` into seconds since 1970-01-01T00:00 of the
// proleptic Gregorian calendar, with any ISO 8601 offset (Z, +hh:mm, -hh:mm, +hhmm) applied;
// local times without offset are taken as written. ISO 8601 accepts "YYYY-MM-DDThh:mm",
// optional ":ss" and ".fff", 'T' or one space between date and time. Returns false (and
// says why in *error) when the text does not match or a field is out of range.
bool ParseDateTime(std::string_view text, std::string_view format, double* seconds_since_epoch,
                   std::string* error);

// Checks an ISO 8601 calendar date "YYYY-MM-DD".
bool IsIsoDate(std::string_view text);

}  // namespace sorbtrace::ingest::internal
