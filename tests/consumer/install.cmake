# SPDX-License-Identifier: MIT
# ctest script (cmake -P), for the find_package consumer test: the install a new user does,
#   cmake -S <dqfx> -B <scratch> && cmake --install <scratch> --prefix <PREFIX>
# with nothing but the compiler named: a plain configure must need no test, bench or
# example dependency, and the installed package must hold the headers, the package files
# and the cross toolchain file.
#   SOURCE_DIR  the dqfx source tree
#   SCRATCH     an empty build directory to configure into
#   PREFIX      an empty install prefix
#   CXX, GENERATOR, MAKE_PROGRAM  the compiler and generator of this build
cmake_minimum_required(VERSION 3.20)
file(REMOVE_RECURSE ${SCRATCH} ${PREFIX})
execute_process(COMMAND ${CMAKE_COMMAND} -S ${SOURCE_DIR} -B ${SCRATCH} -G ${GENERATOR}
                        -DCMAKE_MAKE_PROGRAM=${MAKE_PROGRAM} -DCMAKE_CXX_COMPILER=${CXX}
                RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "a plain configure of dqfx failed:\n${out}")
endif()
# Nothing beyond the compiler was looked for.
file(STRINGS ${SCRATCH}/CMakeCache.txt looked_up REGEX "^(doctest|Boost|benchmark)_DIR|^DQFX_MPFR_LIBRARY")
if(looked_up)
  message(FATAL_ERROR "a plain configure looked for test or bench dependencies: ${looked_up}")
endif()
execute_process(COMMAND ${CMAKE_COMMAND} --install ${SCRATCH} --prefix ${PREFIX}
                RESULT_VARIABLE rc OUTPUT_VARIABLE out ERROR_VARIABLE out)
if(NOT rc EQUAL 0)
  message(FATAL_ERROR "cmake --install failed:\n${out}")
endif()
foreach(file include/dqfx/fixed.hpp include/dqfx/number.hpp include/dqfx/angle.hpp
             include/dqfx/dqfx.hpp include/dqfx_sim/sim.hpp
             share/dqfx/cmake/dqfxConfig.cmake share/dqfx/cmake/dqfxConfigVersion.cmake
             share/dqfx/cmake/dqfxTargets.cmake share/dqfx/cmake/toolchain-arm-none-eabi.cmake)
  if(NOT EXISTS ${PREFIX}/${file})
    message(FATAL_ERROR "not installed: ${file}\n${out}")
  endif()
endforeach()
file(GLOB_RECURSE installed RELATIVE ${PREFIX} ${PREFIX}/*)
foreach(file IN LISTS installed)
  if(NOT file MATCHES "^(include/dqfx/|include/dqfx_sim/|share/dqfx/cmake/)")
    message(FATAL_ERROR "unexpected installed file: ${file}")
  endif()
endforeach()
list(LENGTH installed n)
message(STATUS "installed ${n} files into ${PREFIX}")
