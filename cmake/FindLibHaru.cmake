# Finds libharu (Debian: libhpdf-dev), which ships neither a CMake config nor a .pc file.
# Defines the imported target LibHaru::LibHaru.
find_path(LibHaru_INCLUDE_DIR hpdf.h)
find_library(LibHaru_LIBRARY NAMES hpdf)
include(FindPackageHandleStandardArgs)
find_package_handle_standard_args(LibHaru REQUIRED_VARS LibHaru_LIBRARY LibHaru_INCLUDE_DIR)
if(LibHaru_FOUND AND NOT TARGET LibHaru::LibHaru)
  add_library(LibHaru::LibHaru UNKNOWN IMPORTED)
  set_target_properties(LibHaru::LibHaru PROPERTIES
      IMPORTED_LOCATION "${LibHaru_LIBRARY}"
      INTERFACE_INCLUDE_DIRECTORIES "${LibHaru_INCLUDE_DIR}")
endif()
