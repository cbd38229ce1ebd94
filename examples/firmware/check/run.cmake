# SPDX-License-Identifier: MIT
# Runs one firmware image under QEMU (-icount: deterministic, one instruction per virtual
# nanosecond; sleep=off: WFI skips to the next interrupt) and checks its summary: the exit
# status is 0 only when the speed settled without a trip, and the summary must say so.
execute_process(
  COMMAND ${QEMU} -machine ${MACHINE} -cpu ${CPU} -nographic -monitor none -serial none
          -semihosting-config enable=on,target=native -icount shift=0,sleep=off -kernel ${IMAGE}
  OUTPUT_VARIABLE out ERROR_VARIABLE out RESULT_VARIABLE status TIMEOUT 100)
message(STATUS "${IMAGE}\n${out}")
if(NOT status EQUAL 0 OR NOT out MATCHES "result: speed settled, no fault" OR NOT out MATCHES "\ntrips 0\n")
  message(FATAL_ERROR "${IMAGE} under QEMU ${MACHINE}: status ${status}")
endif()
