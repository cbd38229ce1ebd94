# SPDX-License-Identifier: MIT
# The warning set every dqfx translation unit builds with (see DEVELOPERS.md).
add_library(dqfx_warnings INTERFACE)
target_compile_options(dqfx_warnings INTERFACE
  -Wall -Wextra -Wpedantic -Wconversion -Wsign-conversion -Wshadow -Werror
  # Host and target must agree on float results: no silent a*b+c fusion.
  -ffp-contract=off)

# Project-own sources see dqfx headers as ordinary (non-SYSTEM) includes so the
# warnings above apply to the library itself.
add_library(dqfx_dev INTERFACE)
target_include_directories(dqfx_dev INTERFACE ${PROJECT_SOURCE_DIR}/include)
target_compile_features(dqfx_dev INTERFACE cxx_std_17)
target_link_libraries(dqfx_dev INTERFACE dqfx_warnings)
