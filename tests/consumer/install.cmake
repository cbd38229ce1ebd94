# SPDX-License-Identifier: MIT
# ctest script (cmake -P): installs the dqfx build tree BUILD_DIR into a fresh PREFIX and
# checks the installed layout, for the find_package consumer test.
cmake_minimum_required(VERSION 3.20)
file(REMOVE_RECURSE ${PREFIX})
execute_process(COMMAND ${CMAKE_COMMAND} --install ${BUILD_DIR} --prefix ${PREFIX}
                RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "cmake --install failed:\n${out}")
endif()
foreach(file include/dqfx/fixed.hpp include/dqfx/number.hpp include/dqfx/angle.hpp
             share/dqfx/cmake/dqfxConfig.cmake share/dqfx/cmake/dqfxConfigVersion.cmake
             share/dqfx/cmake/dqfxTargets.cmake)
  if(NOT EXISTS ${PREFIX}/${file})
    message(FATAL_ERROR "not installed: ${file}\n${out}")
  endif()
endforeach()
# Only the library (and its host-only simulator headers) is installed: no test, bench or
# example files, no binaries.
file(GLOB_RECURSE installed RELATIVE ${PREFIX} ${PREFIX}/*)
foreach(file IN LISTS installed)
  if(NOT file MATCHES "^(include/dqfx/|include/dqfx_sim/|share/dqfx/cmake/)")
    message(FATAL_ERROR "unexpected installed file: ${file}")
  endif()
endforeach()
list(LENGTH installed n)
message(STATUS "installed ${n} files into ${PREFIX}")
