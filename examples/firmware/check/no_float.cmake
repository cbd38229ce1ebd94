# SPDX-License-Identifier: MIT
# No floating point in a fixed-point interrupt: from the disassembly of IMAGE, follows
# every call and branch from the function ROOT (the interrupt handler) and fails if it can
# reach a soft-float or soft-double helper of the run-time ABI (__aeabi_f*, __aeabi_d*,
# the integer-to-float conversions) or of libgcc (__addsf3, __muldf3, __floatsidf, ...),
# a libm function, or a floating-point instruction; also if the image has static
# constructors (.init_array not empty). Helper names from Arm's "Run-time ABI for the Arm
# Architecture" (IHI 0043) and the GCC internals manual's "The GCC low-level runtime
# library". An indirect call (blx rN) cannot be followed and fails too.
#   OBJDUMP  arm-none-eabi-objdump     IMAGE  the ELF     ROOT  the handler's symbol
cmake_minimum_required(VERSION 3.20)
foreach(var OBJDUMP IMAGE ROOT)
  if(NOT DEFINED ${var})
    message(FATAL_ERROR "no_float.cmake: ${var} is not set")
  endif()
endforeach()

execute_process(COMMAND ${OBJDUMP} -h ${IMAGE} OUTPUT_VARIABLE headers RESULT_VARIABLE status)
if(NOT status EQUAL 0)
  message(FATAL_ERROR "${OBJDUMP} -h failed on ${IMAGE}")
endif()
if(headers MATCHES "\\.init_array +([0-9a-f]+)")
  set(size "${CMAKE_MATCH_1}")
  if(NOT size MATCHES "^0+$")
    message(FATAL_ERROR "${IMAGE}: .init_array is not empty (0x${size} bytes): an object of the firmware "
                        "is built by a constructor at start-up instead of being constant-initialised")
  endif()
endif()

execute_process(COMMAND ${OBJDUMP} -d --no-show-raw-insn ${IMAGE} OUTPUT_VARIABLE listing RESULT_VARIABLE status)
if(NOT status EQUAL 0)
  message(FATAL_ERROR "${OBJDUMP} -d failed on ${IMAGE}")
endif()
string(REGEX REPLACE "[][;]" "_" listing "${listing}")
string(REPLACE "\n" ";" lines "${listing}")

# Per function: the functions it branches to (calls and tail calls), indirect calls, and
# floating-point instructions.
set(function "")
set(functions "")
foreach(line IN LISTS lines)
  if(line MATCHES "^[0-9a-f]+ <([^>]+)>:$")
    set(function "${CMAKE_MATCH_1}")
    list(APPEND functions "${function}")
    set(calls_${function} "")
    set(float_${function} "")
    set(indirect_${function} "")
  elseif(function AND line MATCHES "^ +[0-9a-f]+:\t([a-z][a-z0-9.]*)\t?(.*)$")
    set(op "${CMAKE_MATCH_1}")
    set(args "${CMAKE_MATCH_2}")
    if(op MATCHES "^(b|bl|b[a-z][a-z]|b\\.n|b\\.w|b[a-z][a-z]\\.[nw]|cbn?z)$" AND args MATCHES "<([^>+]+)(\\+0x[0-9a-f]+)?>")
      if(NOT CMAKE_MATCH_1 STREQUAL function)
        list(APPEND calls_${function} "${CMAKE_MATCH_1}")
      endif()
    elseif(op MATCHES "^blx$")
      list(APPEND indirect_${function} "${line}")
    elseif(op MATCHES "^v" AND NOT op MATCHES "^(vpush|vpop)$")
      list(APPEND float_${function} "${line}")
    endif()
  endif()
endforeach()
if(NOT "${ROOT}" IN_LIST functions)
  message(FATAL_ERROR "${IMAGE}: no function '${ROOT}' in the disassembly")
endif()

set(float_helper "^__(aeabi_([df]|u?i2[fd]|u?l2[fd])|(add|sub|mul|div|neg)[sdt]f3$|(eq|ne|lt|le|gt|ge|un|cmp)[sdt]f2$|float(un)?[sdt]i[sdt]f$|fix(uns)?[sdt]f[sdt]i$|extend[sdt]f[sdt]f2$|trunc[sdt]f[sdt]f2$)")
set(libm "^(sqrt|cbrt|hypot|sin|cos|tan|asin|acos|atan|atan2|sinh|cosh|tanh|exp|exp2|expm1|log|log2|log10|log1p|pow|fmod|remainder|floor|ceil|round|lround|trunc|fabs|fma|nearbyint|rint|lrint|modf|frexp|ldexp|scalbn)[fl]?$")

# Breadth-first over the call graph, keeping the path that reached each function.
set(queue "${ROOT}")
set(path_${ROOT} "${ROOT}")
set(seen "${ROOT}")
set(problems "")
while(queue)
  list(POP_FRONT queue f)
  set(where "${path_${f}}")
  if(f MATCHES "${float_helper}" OR f MATCHES "${libm}")
    string(APPEND problems "  floating-point helper ${f}, reached by ${where}\n")
    continue()
  endif()
  foreach(l IN LISTS float_${f})
    string(APPEND problems "  floating-point instruction in ${where}:${l}\n")
  endforeach()
  foreach(l IN LISTS indirect_${f})
    string(APPEND problems "  indirect call (cannot be followed) in ${where}:${l}\n")
  endforeach()
  foreach(callee IN LISTS calls_${f})
    if(NOT callee IN_LIST seen)
      list(APPEND seen "${callee}")
      list(APPEND queue "${callee}")
      set(path_${callee} "${where} -> ${callee}")
    endif()
  endforeach()
endwhile()
list(LENGTH seen reached)
if(problems)
  message(FATAL_ERROR "${IMAGE}: floating point reachable from the interrupt handler ${ROOT}:\n${problems}")
endif()
message(STATUS "${IMAGE}: ${reached} functions reachable from ${ROOT}, no floating point; .init_array empty")
