// Text helpers of the plot engine (internal): UTF-8 cleaning and superscript exponents.
#pragma once

#include <string>
#include <string_view>

namespace sorbtrace::report::plot {

// Returns text with every invalid UTF-8 sequence (and control character other than none)
// replaced by '?', so that nothing from an input file can confuse the PDF text encoder.
std::string SanitizeUtf8(std::string_view text);

// An integer written with Unicode superscript digits, e.g. -6 -> "⁻⁶".
std::string Superscript(int value);

}  // namespace sorbtrace::report::plot
