#include "pipeline/common/paths.h"

#include <system_error>

namespace sorbtrace {

std::filesystem::path ResolvedPath(const std::filesystem::path& path) {
  namespace fs = std::filesystem;
  std::error_code ec;
  fs::path resolved = fs::weakly_canonical(fs::absolute(path), ec);
  return ec ? fs::absolute(path).lexically_normal() : resolved;
}

bool IsSameOrInside(const std::filesystem::path& inner, const std::filesystem::path& outer) {
  const std::filesystem::path relative = inner.lexically_relative(outer);
  return !relative.empty() && *relative.begin() != "..";
}

}  // namespace sorbtrace
