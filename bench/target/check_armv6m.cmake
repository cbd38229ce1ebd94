# SPDX-License-Identifier: MIT
# The Cortex-M0 image runs on QEMU's Cortex-M3 machine, which would execute an ARMv7-M
# instruction without complaint. So check its disassembly: ARMv6-M has no IT blocks and
# no CBZ/CBNZ, and of the 32-bit Thumb encodings only BL, MRS, MSR, DMB, DSB and ISB
# (Armv6-M Architecture Reference Manual, chapter A5 "The Thumb instruction set
# encoding"); everything else that is 32 bits wide (hardware divide, long multiplies,
# Thumb-2 data processing, ...) is ARMv7-M.
execute_process(COMMAND ${OBJDUMP} -d ${IMAGE} OUTPUT_VARIABLE listing RESULT_VARIABLE status)
if(NOT status EQUAL 0)
  message(FATAL_ERROR "${OBJDUMP} failed on ${IMAGE}")
endif()
# Make each line a safe list element.
string(REGEX REPLACE "[][;]" "_" listing "${listing}")
string(REPLACE "\n" ";" lines "${listing}")
set(bad "")
set(count 0)
foreach(line IN LISTS lines)
  # "     1a4:	f000 f80e 	bl	1c4 <x>": address, one or two halfwords, mnemonic.
  # Literal pool words (".word") and data dumps do not match.
  if(NOT line MATCHES "^ *[0-9a-f]+:\t[0-9a-f][0-9a-f][0-9a-f][0-9a-f]( [0-9a-f][0-9a-f][0-9a-f][0-9a-f])? *\t([a-z][a-z0-9.]*)")
    continue()
  endif()
  set(wide "${CMAKE_MATCH_1}")
  set(op "${CMAKE_MATCH_2}")
  math(EXPR count "${count} + 1")
  if(op MATCHES "^(it[te]*|cbn?z)$" OR (wide AND NOT op MATCHES "^(bl|mrs|msr|dmb|dsb|isb)$"))
    string(APPEND bad "${line}\n")
  endif()
endforeach()
if(count LESS 100)
  message(FATAL_ERROR "could not read the disassembly of ${IMAGE}")
endif()
if(bad)
  message(FATAL_ERROR "ARMv7-M instructions in the ARMv6-M image ${IMAGE}:\n${bad}")
endif()
message(STATUS "${count} instructions in ${IMAGE}, all ARMv6-M")
