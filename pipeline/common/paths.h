// Path helpers of the data-safety checks (README, "Data safety"): where a path really is, and
// whether one path lies inside another. The one definition for output folders (make), batch
// output folders and verify's inputs and report.
#pragma once

#include <filesystem>

namespace sorbtrace {

// `path` made absolute with symbolic links and ".." resolved as far as it exists
// (std::filesystem::weakly_canonical); when that fails (a link loop), absolute and normalised
// as written.
std::filesystem::path ResolvedPath(const std::filesystem::path& path);

// True if `inner` equals `outer` or lies inside it, compared as given (resolve both first with
// ResolvedPath to compare where they really are).
bool IsSameOrInside(const std::filesystem::path& inner, const std::filesystem::path& outer);

}  // namespace sorbtrace
