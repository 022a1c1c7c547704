// Text helpers of the plot engine (internal): UTF-8 cleaning and superscript exponents.
#pragma once

#include <cstddef>
#include <string>
#include <string_view>

#include "pipeline/common/number_text.h"

namespace sorbtrace::report::internal::plot {

// Returns text with every invalid UTF-8 sequence (and control character other than none)
// replaced by '?', so that nothing from an input file can confuse the PDF text encoder.
std::string SanitizeUtf8(std::string_view text);

// Longest word (a run of characters without a space, tab or line break) printed whole, in
// code points: a SHA-256 in hex has 64, a long file path about 150 (common practice). Longer
// words are cut and end in "…" (a 64 KiB token would otherwise fill pages, and libharu refuses
// strings above HPDF_LIMIT_MAX_STRING_LEN = 65535 bytes, hpdf_consts.h).
inline constexpr size_t kMaxPrintedWordChars = 200;
// Longest string handed to libharu in one call [bytes]: far wider than any page at the
// smallest size the sheet uses, and far below libharu's 65535-byte limit.
inline constexpr size_t kMaxTextRunBytes = 4096;

// text with every word longer than max_chars code points cut to its first max_chars code
// points followed by "…"; separators (space, tab, CR, LF) are kept.
std::string ClipLongWords(std::string_view text, size_t max_chars = kMaxPrintedWordChars);

// What every drawing and measuring call passes to libharu: SanitizeUtf8, ClipLongWords, and
// at most kMaxTextRunBytes bytes (cut at a character boundary, ending in "…").
std::string PrintableText(std::string_view text);

// An integer written with Unicode superscript digits (pipeline/common/number_text.h).
using common::Superscript;

}  // namespace sorbtrace::report::internal::plot
