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
install(FILES ${PROJECT_BINARY_DIR}/dqfxConfig.cmake ${PROJECT_BINARY_DIR}/dqfxConfigVersion.cmake
  ${PROJECT_SOURCE_DIR}/cmake/dqfxCortexM.cmake ${PROJECT_SOURCE_DIR}/cmake/toolchain-arm-none-eabi.cmake
  DESTINATION ${CMAKE_INSTALL_DATADIR}/dqfx/cmake)
