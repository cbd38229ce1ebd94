# SPDX-License-Identifier: MIT
# Static analysis as tests (label `static`), on with DQFX_STATIC_ANALYSIS (the
# `static-analysis` workflow): clang-tidy with the checked-in .clang-tidy over every
# header of include/dqfx and over the robustness tests that instantiate every kernel for
# every type (the fuzz harnesses and the golden-vector program), and cppcheck over the
# headers with cmake/cppcheck-suppressions.txt. Both must report nothing.
option(DQFX_STATIC_ANALYSIS "Run clang-tidy and cppcheck as tests (label `static`)" OFF)
if(NOT DQFX_STATIC_ANALYSIS)
  return()
endif()
find_program(DQFX_CLANG_TIDY NAMES clang-tidy-14 clang-tidy REQUIRED)
find_program(DQFX_CPPCHECK NAMES cppcheck REQUIRED)

set(dqfx_tidy_flags "-std=c++17|-I${PROJECT_SOURCE_DIR}/include|-I${CMAKE_CURRENT_SOURCE_DIR}|-I${CMAKE_CURRENT_SOURCE_DIR}/fuzz")
add_test(NAME static.clang_tidy.headers
  COMMAND ${CMAKE_COMMAND} -DCLANG_TIDY=${DQFX_CLANG_TIDY} -DCONFIG=${PROJECT_SOURCE_DIR}/.clang-tidy
          -DINCLUDE_DIR=${PROJECT_SOURCE_DIR}/include "-DFLAGS=${dqfx_tidy_flags}"
          -DWORK_DIR=${CMAKE_CURRENT_BINARY_DIR}/static -P ${PROJECT_SOURCE_DIR}/cmake/check_clang_tidy.cmake)
file(GLOB dqfx_tidy_sources CONFIGURE_DEPENDS ${CMAKE_CURRENT_SOURCE_DIR}/fuzz/fuzz_*.cpp)
list(APPEND dqfx_tidy_sources ${CMAKE_CURRENT_SOURCE_DIR}/golden/golden.cpp)
set(dqfx_static_tests static.clang_tidy.headers)
foreach(source IN LISTS dqfx_tidy_sources)
  get_filename_component(stem ${source} NAME_WE)
  add_test(NAME static.clang_tidy.${stem}
    COMMAND ${CMAKE_COMMAND} -DCLANG_TIDY=${DQFX_CLANG_TIDY} -DSOURCE=${source} "-DFLAGS=${dqfx_tidy_flags}"
            -P ${PROJECT_SOURCE_DIR}/cmake/check_clang_tidy.cmake)
  list(APPEND dqfx_static_tests static.clang_tidy.${stem})
endforeach()

file(GLOB_RECURSE dqfx_all_headers CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/include/dqfx/*.hpp)
add_test(NAME static.cppcheck
  COMMAND ${DQFX_CPPCHECK} --enable=warning,style,performance,portability --std=c++17 --language=c++
          --inline-suppr --error-exitcode=1 --quiet --suppress=missingIncludeSystem
          --suppressions-list=${PROJECT_SOURCE_DIR}/cmake/cppcheck-suppressions.txt
          -I ${PROJECT_SOURCE_DIR}/include ${dqfx_all_headers})
list(APPEND dqfx_static_tests static.cppcheck)
set_tests_properties(${dqfx_static_tests} PROPERTIES LABELS static TIMEOUT 900)
