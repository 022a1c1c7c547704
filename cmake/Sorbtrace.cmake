# Helper functions shared by every folder: one library per stage, one test per file.

# Warning flags for project code only (system headers stay quiet).
set(SORBTRACE_WARNINGS -Wall -Wextra -Wpedantic -Wshadow -Wnon-virtual-dtor
    -Wold-style-cast -Wcast-align -Woverloaded-virtual -Wdouble-promotion
    -Wformat=2 -Wimplicit-fallthrough
    -Wno-restrict)  # -Wrestrict: GCC 12 false positives in <string> (GCC bug 105329)
if(SORBTRACE_WERROR)
  list(APPEND SORBTRACE_WARNINGS -Werror)
endif()

# Eigen picks its allocator per translation unit: under AddressSanitizer (__SANITIZE_ADDRESS__)
# it switches to its hand-made aligned malloc, while Debian's libceres.a was built without
# the sanitizer and uses plain malloc/free for the same inline Eigen functions. The linker
# keeps one copy of each, so memory allocated one way is freed the other ("bad-free" in
# BDCSVD inside ceres::Covariance). EIGEN_MALLOC_ALREADY_ALIGNED=1 makes our code agree with
# the library; glibc's and ASan's x86-64 malloc both return 16-byte aligned blocks, which is
# all Eigen's SSE2 default (EIGEN_DEFAULT_ALIGN_BYTES 16) needs.
set(SORBTRACE_EIGEN_ASAN_DEFINES EIGEN_MALLOC_ALREADY_ALIGNED=1)

if(SORBTRACE_SANITIZE)
  add_compile_options(-fsanitize=address,undefined -fno-omit-frame-pointer -fno-sanitize-recover=undefined)
  add_compile_definitions(${SORBTRACE_EIGEN_ASAN_DEFINES})
  add_link_options(-fsanitize=address,undefined)
endif()

# sorbtrace_library(NAME SOURCES a.cc b.cc DEPS lib1 lib2)
# Creates static library sorbtrace_NAME with the repo root on its include path,
# so public headers are included as "pipeline/ingest/ingest.h", "fitters/model.h".
function(sorbtrace_library name)
  cmake_parse_arguments(ARG "" "" "SOURCES;DEPS" ${ARGN})
  add_library(sorbtrace_${name} STATIC ${ARG_SOURCES})
  target_include_directories(sorbtrace_${name} PUBLIC ${PROJECT_SOURCE_DIR})
  target_compile_options(sorbtrace_${name} PRIVATE ${SORBTRACE_WARNINGS})
  target_link_libraries(sorbtrace_${name} PUBLIC ${ARG_DEPS})
endfunction()

# sorbtrace_test(NAME SOURCES a_test.cc DEPS sorbtrace_x [LABELS unit|e2e|slow])
# One gtest executable per call, registered with ctest through gtest_discover_tests.
# Tests run with the repo root as working directory and SORBTRACE_SOURCE_DIR /
# SORBTRACE_BINARY set in the environment.
function(sorbtrace_test name)
  cmake_parse_arguments(ARG "" "" "SOURCES;DEPS;LABELS" ${ARGN})
  add_executable(${name} ${ARG_SOURCES})
  target_compile_options(${name} PRIVATE ${SORBTRACE_WARNINGS})
  target_include_directories(${name} PRIVATE ${PROJECT_SOURCE_DIR})
  target_link_libraries(${name} PRIVATE ${ARG_DEPS} GTest::gtest GTest::gtest_main)
  target_compile_definitions(${name} PRIVATE
      SORBTRACE_SOURCE_DIR="${PROJECT_SOURCE_DIR}"
      SORBTRACE_BINARY="$<TARGET_FILE:sorbtrace>")
  if(NOT ARG_LABELS)
    set(ARG_LABELS unit)
  endif()
  include(GoogleTest)
  # Each build folder has its own scratch folder (std::filesystem::temp_directory_path reads
  # TMPDIR), so two builds of the tree (Release and sanitizer, or two checkouts) running their
  # suites at the same time never share a test's files.
  set(test_tmp "${PROJECT_BINARY_DIR}/test-tmp")
  file(MAKE_DIRECTORY "${test_tmp}")
  gtest_discover_tests(${name}
      WORKING_DIRECTORY ${PROJECT_SOURCE_DIR}
      PROPERTIES LABELS "${ARG_LABELS}" ENVIRONMENT "TMPDIR=${test_tmp}"
      DISCOVERY_TIMEOUT 60)
endfunction()
