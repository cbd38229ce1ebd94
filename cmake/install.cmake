# SPDX-License-Identifier: MIT
include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

install(TARGETS dqfx EXPORT dqfxTargets)
install(DIRECTORY ${PROJECT_SOURCE_DIR}/include/ DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
install(EXPORT dqfxTargets NAMESPACE dqfx:: DESTINATION ${CMAKE_INSTALL_DATADIR}/dqfx/cmake)
configure_package_config_file(${PROJECT_SOURCE_DIR}/cmake/dqfxConfig.cmake.in
  ${PROJECT_BINARY_DIR}/dqfxConfig.cmake
  INSTALL_DESTINATION ${CMAKE_INSTALL_DATADIR}/dqfx/cmake)
# Header-only: any architecture may consume the package.
write_basic_package_version_file(${PROJECT_BINARY_DIR}/dqfxConfigVersion.cmake
  COMPATIBILITY SameMinorVersion ARCH_INDEPENDENT)
# With the package: the per-core flags (dqfx_target_cortex_m) and the cross toolchain file,
#   cmake -DCMAKE_TOOLCHAIN_FILE=<prefix>/share/dqfx/cmake/toolchain-arm-none-eabi.cmake ...
install(FILES ${PROJECT_BINARY_DIR}/dqfxConfig.cmake ${PROJECT_BINARY_DIR}/dqfxConfigVersion.cmake
  ${PROJECT_SOURCE_DIR}/cmake/dqfxCortexM.cmake ${PROJECT_SOURCE_DIR}/cmake/toolchain-arm-none-eabi.cmake
  DESTINATION ${CMAKE_INSTALL_DATADIR}/dqfx/cmake)
