# SPDX-License-Identifier: MIT
# Runs one harness image under QEMU and keeps its output in LOG; fails on a non-zero exit
# status (a fault or a harness error) or when the harness did not finish. QEMU writes
# the semihosting console to stderr, its own messages to stdout or stderr: keep both.
execute_process(
  COMMAND ${QEMU} -machine ${MACHINE} -cpu ${CPU} ${OPTIONS} -kernel ${IMAGE}
  OUTPUT_VARIABLE out ERROR_VARIABLE out RESULT_VARIABLE status TIMEOUT 280)
file(WRITE ${LOG} "${out}")
if(NOT status EQUAL 0 OR NOT out MATCHES "\ndone\n")
  message(FATAL_ERROR "${IMAGE} under QEMU ${MACHINE}: status ${status}\n${out}")
endif()
message(STATUS "${IMAGE}\n${out}")
