# Installation: headers (plus the generated version header), the compiled
# extras, the command-line program, a CMake package with exported targets and
# pkg-config files (the header-only core, and the core with GMP/MPFR).
include(GNUInstallDirs)
include(CMakePackageConfigHelpers)

set(KNOTPATH_CMAKE_DIR ${CMAKE_INSTALL_LIBDIR}/cmake/knotpath)

install(DIRECTORY ${PROJECT_SOURCE_DIR}/include/knotpath DESTINATION ${CMAKE_INSTALL_INCLUDEDIR})
install(FILES ${KNOTPATH_GENERATED_INCLUDE}/knotpath/version.hpp
        DESTINATION ${CMAKE_INSTALL_INCLUDEDIR}/knotpath)

# One export set per package component, each in its own file that the package
# configuration loads only when asked (cmake/knotpathConfig.cmake.in): the core
# (knotpath::knotpath), multiprecision, io and charts.
set(KNOTPATH_COMPONENTS multiprecision)
install(TARGETS knotpath knotpath_warnings EXPORT knotpathTargets)
install(EXPORT knotpathTargets NAMESPACE knotpath:: DESTINATION ${KNOTPATH_CMAKE_DIR})
install(TARGETS knotpath_multiprecision EXPORT knotpathMultiprecisionTargets)
install(EXPORT knotpathMultiprecisionTargets NAMESPACE knotpath:: DESTINATION ${KNOTPATH_CMAKE_DIR})
if(TARGET knotpath_io)
  set_target_properties(knotpath_io PROPERTIES EXPORT_NAME io)
  install(TARGETS knotpath_io EXPORT knotpathIoTargets ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR})
  install(EXPORT knotpathIoTargets NAMESPACE knotpath:: DESTINATION ${KNOTPATH_CMAKE_DIR})
  list(APPEND KNOTPATH_COMPONENTS io)
endif()
if(TARGET knotpath_charts)
  set_target_properties(knotpath_charts PROPERTIES EXPORT_NAME charts)
  install(TARGETS knotpath_charts EXPORT knotpathChartsTargets ARCHIVE DESTINATION ${CMAKE_INSTALL_LIBDIR})
  install(EXPORT knotpathChartsTargets NAMESPACE knotpath:: DESTINATION ${KNOTPATH_CMAKE_DIR})
  list(APPEND KNOTPATH_COMPONENTS charts)
endif()

configure_package_config_file(${PROJECT_SOURCE_DIR}/cmake/knotpathConfig.cmake.in
  ${PROJECT_BINARY_DIR}/knotpathConfig.cmake INSTALL_DESTINATION ${KNOTPATH_CMAKE_DIR})
write_basic_package_version_file(${PROJECT_BINARY_DIR}/knotpathConfigVersion.cmake
  VERSION ${PROJECT_VERSION} COMPATIBILITY SameMinorVersion ARCH_INDEPENDENT)
install(FILES ${PROJECT_BINARY_DIR}/knotpathConfig.cmake ${PROJECT_BINARY_DIR}/knotpathConfigVersion.cmake
        DESTINATION ${KNOTPATH_CMAKE_DIR})

# pkg-config: knotpath.pc is the header-only core (Eigen only: Boost ships no
# .pc file); knotpath-multiprecision.pc adds GMP/MPFR on top of it.
set(KNOTPATH_PC_DEFINES "")
set(KNOTPATH_PC_LIBS "")
if(KNOTPATH_HAVE_GMP)
  string(APPEND KNOTPATH_PC_DEFINES " -DKNOTPATH_HAVE_GMP")
  string(APPEND KNOTPATH_PC_LIBS " -lgmp")
endif()
if(KNOTPATH_HAVE_MPFR)
  string(APPEND KNOTPATH_PC_DEFINES " -DKNOTPATH_HAVE_MPFR")
  string(PREPEND KNOTPATH_PC_LIBS "-lmpfr ")
endif()
# Path from <prefix>/<libdir>/pkgconfig back up to <prefix>.
file(RELATIVE_PATH KNOTPATH_PC_UP "/root/${CMAKE_INSTALL_LIBDIR}/pkgconfig" "/root")
configure_file(${PROJECT_SOURCE_DIR}/cmake/knotpath.pc.in ${PROJECT_BINARY_DIR}/knotpath.pc @ONLY)
install(FILES ${PROJECT_BINARY_DIR}/knotpath.pc DESTINATION ${CMAKE_INSTALL_LIBDIR}/pkgconfig)
if(KNOTPATH_HAVE_GMP)
  configure_file(${PROJECT_SOURCE_DIR}/cmake/knotpath-multiprecision.pc.in
                 ${PROJECT_BINARY_DIR}/knotpath-multiprecision.pc @ONLY)
  install(FILES ${PROJECT_BINARY_DIR}/knotpath-multiprecision.pc DESTINATION ${CMAKE_INSTALL_LIBDIR}/pkgconfig)
endif()

# API documentation (Doxygen, Debian package doxygen): `cmake --build <dir> --target docs`.
# Undocumented public names are warnings, and warnings fail the target.
find_package(Doxygen QUIET)
if(DOXYGEN_FOUND)
  set(KNOTPATH_DOCS_OUTPUT ${PROJECT_BINARY_DIR}/docs)
  configure_file(${PROJECT_SOURCE_DIR}/docs/Doxyfile.in ${PROJECT_BINARY_DIR}/Doxyfile @ONLY)
  add_custom_target(docs
    COMMAND ${CMAKE_COMMAND} -E make_directory ${KNOTPATH_DOCS_OUTPUT}
    COMMAND ${DOXYGEN_EXECUTABLE} ${PROJECT_BINARY_DIR}/Doxyfile
    WORKING_DIRECTORY ${PROJECT_BINARY_DIR}
    COMMENT "Building the API documentation with Doxygen (warnings are errors)"
    VERBATIM)
endif()
if(DOXYGEN_FOUND AND KNOTPATH_BUILD_TESTS)
  add_test(NAME api_docs_build_without_warnings
           COMMAND ${CMAKE_COMMAND} --build ${PROJECT_BINARY_DIR} --target docs)
endif()
