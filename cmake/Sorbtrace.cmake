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

# sorbtrace_library(NAME SOURCES a.cc b.cc DEPS lib1 lib2 [PUBLIC_HEADERS a.h models/b.h])
# Creates static library sorbtrace_NAME from the sources of the calling folder (a stage, e.g.
# pipeline/ingest, or fitters). Headers are included by their path from the repository root
# ("pipeline/ingest/ingest.h", "fitters/model.h"), but the build enforces the layering
# (DEVELOPERS.md, "Architecture"): no target sees the repository root through a library.
#  - PRIVATE: the library's own folder, as
#      ${PROJECT_BINARY_DIR}/include-private/NAME/<folder> -> symbolic link to the folder,
#    so its sources include every header of their own stage and nothing of another's.
#  - PUBLIC: only PUBLIC_HEADERS, as symbolic links in ${PROJECT_BINARY_DIR}/include/NAME/<folder>/;
#    without PUBLIC_HEADERS every header of the folder is public (pipeline/common: utilities).
# A stage therefore sees the public headers of the stages it links (DEPS, transitively) and
# nothing else: including another stage's internal header, or a later stage's public header,
# fails to compile ("No such file or directory"). Tests, benchmarks and fuzz targets put the
# repository root on their own PRIVATE path so they can test internals.
function(sorbtrace_library name)
  cmake_parse_arguments(ARG "" "" "SOURCES;DEPS;PUBLIC_HEADERS" ${ARGN})
  file(RELATIVE_PATH folder ${PROJECT_SOURCE_DIR} ${CMAKE_CURRENT_SOURCE_DIR})
  set(private_root "${PROJECT_BINARY_DIR}/include-private/${name}")
  set(public_root "${PROJECT_BINARY_DIR}/include/${name}")
  # Links from an earlier configure may name headers no longer public: start afresh.
  file(REMOVE_RECURSE "${private_root}" "${public_root}")
  sorbtrace_internal_link("${CMAKE_CURRENT_SOURCE_DIR}" "${private_root}/${folder}")
  if(ARG_PUBLIC_HEADERS)
    foreach(header IN LISTS ARG_PUBLIC_HEADERS)
      if(NOT EXISTS "${CMAKE_CURRENT_SOURCE_DIR}/${header}")
        message(FATAL_ERROR "sorbtrace_library(${name}): public header ${folder}/${header} not found")
      endif()
      sorbtrace_internal_link("${CMAKE_CURRENT_SOURCE_DIR}/${header}"
                              "${public_root}/${folder}/${header}")
    endforeach()
  else()
    sorbtrace_internal_link("${CMAKE_CURRENT_SOURCE_DIR}" "${public_root}/${folder}")
  endif()
  add_library(sorbtrace_${name} STATIC ${ARG_SOURCES})
  target_include_directories(sorbtrace_${name} PRIVATE "${private_root}")
  target_include_directories(sorbtrace_${name} PUBLIC "$<BUILD_INTERFACE:${public_root}>")
  target_compile_options(sorbtrace_${name} PRIVATE ${SORBTRACE_WARNINGS})
  target_link_libraries(sorbtrace_${name} PUBLIC ${ARG_DEPS})
endfunction()

# sorbtrace_private_headers(TARGET NAME): TARGET (an executable built from a stage's folder,
# e.g. the sorbtrace command from pipeline/run/main.cc) sees the headers of library NAME's
# folder as that library's own sources do.
function(sorbtrace_private_headers target name)
  target_include_directories(${target} PRIVATE "${PROJECT_BINARY_DIR}/include-private/${name}")
endfunction()

# A symbolic link `link` -> `original` (parent folders created). Symbolic, not a copy: an
# edited header is seen at once, and GCC's #pragma once knows the two paths as one file.
function(sorbtrace_internal_link original link)
  get_filename_component(parent "${link}" DIRECTORY)
  file(MAKE_DIRECTORY "${parent}")
  file(CREATE_LINK "${original}" "${link}" RESULT result SYMBOLIC)
  if(NOT result EQUAL 0)
    message(FATAL_ERROR "cannot link ${link} -> ${original}: ${result}")
  endif()
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
