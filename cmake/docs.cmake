# SPDX-License-Identifier: MIT
# Docs that cannot go stale (label `docs`):
# - docs.code.<document>: every ```cpp block of README.md and docs/*.md compiles as shown
#   (host; Cortex-M4 too for blocks marked `<!-- code: cortex-m4 -->`), cmake/check_doc_code.cmake;
# - docs.bad-input-ids: docs/bad-input.md and tests/test_bad_input_policy.cpp name the same
#   policy identifiers (cmake/check_bad_input_ids.cmake);
# - docs.table.<region>: each table a program prints matches the checked-in copy,
#   cmake/doc_table.cmake. The Cortex-M report's tables are checked by the cortex-m
#   workflow (bench/target/CMakeLists.txt).
# The target `dqfx_docs` rewrites the host-generated tables; `cmake/run.sh docs` rewrites all.
file(GLOB dqfx_documents CONFIGURE_DEPENDS ${PROJECT_SOURCE_DIR}/docs/*.md)
list(PREPEND dqfx_documents ${PROJECT_SOURCE_DIR}/README.md)

if(DQFX_BUILD_TESTS)
  find_program(DQFX_DOCS_ARM_CXX arm-none-eabi-g++)
  # Host blocks may be host test code (doctest uses exceptions); target blocks are firmware.
  set(dqfx_docs_flags -std=c++17 $<TARGET_PROPERTY:dqfx_warnings,INTERFACE_COMPILE_OPTIONS>)
  foreach(document IN LISTS dqfx_documents)
    get_filename_component(name ${document} NAME_WE)
    add_test(NAME docs.code.${name} COMMAND ${CMAKE_COMMAND}
      -DDOC=${document} -DOUT_DIR=${CMAKE_CURRENT_BINARY_DIR}/doc-code
      -DCXX=${CMAKE_CXX_COMPILER} "-DFLAGS=$<JOIN:${dqfx_docs_flags},|>"
      "-DINCLUDES=${PROJECT_SOURCE_DIR}/include|${PROJECT_SOURCE_DIR}/sim/include"
      -DARM_CXX=${DQFX_DOCS_ARM_CXX}
      "-DARM_FLAGS=$<JOIN:${dqfx_docs_flags};-fno-exceptions;-fno-rtti;-O2;-mcpu=cortex-m4;-mthumb;-mfpu=fpv4-sp-d16;-mfloat-abi=hard;-Wno-psabi,|>"
      -P ${PROJECT_SOURCE_DIR}/cmake/check_doc_code.cmake)
    set_tests_properties(docs.code.${name} PROPERTIES LABELS docs)
  endforeach()
  add_test(NAME docs.bad-input-ids COMMAND ${CMAKE_COMMAND}
    -DDOC=${PROJECT_SOURCE_DIR}/docs/bad-input.md -DTEST=${PROJECT_SOURCE_DIR}/tests/test_bad_input_policy.cpp
    -P ${PROJECT_SOURCE_DIR}/cmake/check_bad_input_ids.cmake)
  set_tests_properties(docs.bad-input-ids PROPERTIES LABELS docs)
endif()

# The host-generated tables: (region, document, program, arguments, FIRST, STOP, KEEP).
# The figures are those of g++ -O2 (the demo preset, `cmake/run.sh demo`): other compilers
# may differ in the last printed digit of the simulation, so only a g++ build checks them.
if(DQFX_BUILD_EXAMPLES AND NOT CMAKE_CROSSCOMPILING)
  set(dqfx_table_demo README.md dqfx_demo "--out|${CMAKE_CURRENT_BINARY_DIR}/demo-out"
      "| type" "current-loop step on this host")
  set(dqfx_table_accuracy-report docs/accuracy.md dqfx_accuracy_report "" "Trigonometry:" "")
  set(dqfx_update_commands "")
  foreach(region demo accuracy-report)
    list(GET dqfx_table_${region} 0 document)
    list(GET dqfx_table_${region} 1 program)
    list(GET dqfx_table_${region} 2 arguments)
    list(GET dqfx_table_${region} 3 first)
    list(GET dqfx_table_${region} 4 stop)
    set(script_args -DDOC=${PROJECT_SOURCE_DIR}/${document} -DNAME=${region}
        -DPROGRAM=$<TARGET_FILE:${program}> "-DARGS=${arguments}" "-DFIRST=${first}")
    if(NOT stop STREQUAL "")
      list(APPEND script_args "-DSTOP=${stop}")
    endif()
    list(APPEND dqfx_update_commands COMMAND ${CMAKE_COMMAND} ${script_args} -DMODE=update
         -P ${PROJECT_SOURCE_DIR}/cmake/doc_table.cmake)
    if(DQFX_BUILD_TESTS AND CMAKE_CXX_COMPILER_ID STREQUAL "GNU")
      add_test(NAME docs.table.${region} COMMAND ${CMAKE_COMMAND} ${script_args} -DMODE=check
               -P ${PROJECT_SOURCE_DIR}/cmake/doc_table.cmake)
      set_tests_properties(docs.table.${region} PROPERTIES LABELS docs)
    endif()
  endforeach()
  add_custom_target(dqfx_docs ${dqfx_update_commands}
    DEPENDS dqfx_demo dqfx_accuracy_report
    COMMENT "Regenerating the tables in README.md and docs/ from the programs" VERBATIM)
endif()
