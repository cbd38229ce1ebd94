# SPDX-License-Identifier: MIT
# Packaging tests (label `package`): the consumer project in this folder builds and runs
# against dqfx used through add_subdirectory, FetchContent from the local source tree, and
# find_package(dqfx CONFIG) after a plain configure and `cmake --install` of this source
# tree into a scratch prefix (tests/consumer/install.cmake).
set(dqfx_consumer_src ${CMAKE_CURRENT_LIST_DIR})
set(dqfx_consumer_bin ${CMAKE_CURRENT_BINARY_DIR}/consumer)
set(dqfx_consumer_prefix ${dqfx_consumer_bin}/prefix)

function(dqfx_add_consumer_test mode)
  add_test(NAME package.${mode} COMMAND ${CMAKE_CTEST_COMMAND}
    --build-and-test ${dqfx_consumer_src} ${dqfx_consumer_bin}/${mode}
    --build-generator ${CMAKE_GENERATOR}
    --build-makeprogram ${CMAKE_MAKE_PROGRAM}
    --build-options -DCMAKE_CXX_COMPILER=${CMAKE_CXX_COMPILER} -DDQFX_CONSUMER_MODE=${mode}
                    -DDQFX_SOURCE_DIR=${PROJECT_SOURCE_DIR} -DCMAKE_PREFIX_PATH=${dqfx_consumer_prefix}
    --test-command dqfx_consumer)
  set_tests_properties(package.${mode} PROPERTIES LABELS package ${ARGN})
endfunction()

dqfx_add_consumer_test(subdirectory)
dqfx_add_consumer_test(fetchcontent)
add_test(NAME package.install COMMAND ${CMAKE_COMMAND}
  -DSOURCE_DIR=${PROJECT_SOURCE_DIR} -DSCRATCH=${dqfx_consumer_bin}/plain -DPREFIX=${dqfx_consumer_prefix}
  -DCXX=${CMAKE_CXX_COMPILER} -DGENERATOR=${CMAKE_GENERATOR} -DMAKE_PROGRAM=${CMAKE_MAKE_PROGRAM}
  -P ${dqfx_consumer_src}/install.cmake)
set_tests_properties(package.install PROPERTIES LABELS package FIXTURES_SETUP dqfx_installed)
dqfx_add_consumer_test(find_package FIXTURES_REQUIRED dqfx_installed)

# The firmware build of the same consumer from the installed package, with the installed
# toolchain file (compiled and linked for Cortex-M4 with newlib's nosys stubs; not run).
find_program(DQFX_CONSUMER_ARM_CXX arm-none-eabi-g++)
if(DQFX_CONSUMER_ARM_CXX)
  add_test(NAME package.find_package.cortex-m4 COMMAND ${CMAKE_CTEST_COMMAND}
    --build-and-test ${dqfx_consumer_src} ${dqfx_consumer_bin}/find_package-cortex-m4
    --build-generator ${CMAKE_GENERATOR}
    --build-makeprogram ${CMAKE_MAKE_PROGRAM}
    --build-options
      -DCMAKE_TOOLCHAIN_FILE=${dqfx_consumer_prefix}/share/dqfx/cmake/toolchain-arm-none-eabi.cmake
      -DDQFX_CONSUMER_MODE=find_package -DCMAKE_PREFIX_PATH=${dqfx_consumer_prefix}
      "-DCMAKE_CXX_FLAGS=-mcpu=cortex-m4 -mthumb -mfpu=fpv4-sp-d16 -mfloat-abi=hard"
      -DCMAKE_EXE_LINKER_FLAGS=--specs=nosys.specs)
  set_tests_properties(package.find_package.cortex-m4 PROPERTIES LABELS package FIXTURES_REQUIRED dqfx_installed)
endif()

# The firmware example, copied out of dqfx in effect: built on its own against the
# installed package (its per-core flags and toolchain file), for one core, with its tests.
find_program(DQFX_ARM_GXX arm-none-eabi-g++)
if(DQFX_INSTALL AND DQFX_ARM_GXX)
  add_test(NAME package.firmware COMMAND ${CMAKE_CTEST_COMMAND}
    --build-and-test ${PROJECT_SOURCE_DIR}/examples/firmware ${dqfx_consumer_bin}/firmware
    --build-generator ${CMAKE_GENERATOR}
    --build-makeprogram ${CMAKE_MAKE_PROGRAM}
    --build-options -DCMAKE_PREFIX_PATH=${dqfx_consumer_prefix}
                    -DCMAKE_TOOLCHAIN_FILE=${dqfx_consumer_prefix}/share/dqfx/cmake/toolchain-arm-none-eabi.cmake
                    -DFIRMWARE_CORES=m0 -DFIRMWARE_NUMBERS=q15
    --test-command ${CMAKE_CTEST_COMMAND} --output-on-failure)
  set_tests_properties(package.firmware PROPERTIES LABELS package FIXTURES_REQUIRED dqfx_installed)
endif()
