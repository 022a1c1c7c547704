# Finds fast-cpp-csv-parser (Debian: libfccp-dev, header libfccp/csv.h).
# Defines the imported interface target Fccp::Fccp (header-only, needs Threads).
find_path(Fccp_INCLUDE_DIR libfccp/csv.h)
include(FindPackageHandleStandardArgs)
find_package_handle_standard_args(Fccp REQUIRED_VARS Fccp_INCLUDE_DIR)
if(Fccp_FOUND AND NOT TARGET Fccp::Fccp)
  find_package(Threads REQUIRED)
  add_library(Fccp::Fccp INTERFACE IMPORTED)
  set_target_properties(Fccp::Fccp PROPERTIES
      INTERFACE_INCLUDE_DIRECTORIES "${Fccp_INCLUDE_DIR}"
      INTERFACE_LINK_LIBRARIES Threads::Threads)
endif()
