# SPDX-License-Identifier: MIT
# Runs the host digest program and keeps its output in LOG.
execute_process(COMMAND ${PROGRAM} OUTPUT_FILE ${LOG} RESULT_VARIABLE status)
if(NOT status EQUAL 0)
  file(READ ${LOG} out)
  message(FATAL_ERROR "${PROGRAM} failed (${status}):\n${out}")
endif()
