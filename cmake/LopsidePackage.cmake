# `cpack -G DEB` in the build folder (or `cmake --build BUILD --target package`) makes
# lopside_VERSION-1_ARCH.deb of the component "lopside" only: the program, its manual pages,
# completions and README; not the tests, benchmarks or lopside-synth. The runtime dependencies
# come from dpkg-shlibdeps (package dpkg-dev), which reads the libraries the program links.
set(CPACK_PACKAGE_NAME lopside)
set(CPACK_PACKAGE_VENDOR "lopside developers")
set(CPACK_PACKAGE_VERSION ${PROJECT_VERSION})
set(CPACK_PACKAGE_DESCRIPTION_SUMMARY
    "find the hidden DC in the current of high-voltage AC gas discharges")
set(CPACK_DEBIAN_PACKAGE_DESCRIPTION
    "Technicians who run high-voltage AC gas discharges (cold-cathode tubes and
signs, corona and plasma treaters, spark gaps, arc test rigs) find that one
electrode runs hotter and wears out first although the supply is AC. The
cause is a hidden DC component in the discharge current.

lopside reads the current (and voltage) recorded with a scope or a recorder,
as CSV/TSV text or WAV, RF64, W64 or FLAC files of any size, and measures
cycle by cycle the DC offset, RMS, charge asymmetry and harmonics with their
uncertainty; tells the supply's part of the DC from the electrodes' part
(lead-swap test); and judges production lots against limits, with yield,
capability and control charts.")
set(CPACK_GENERATOR DEB)
# Only the component "lopside": other install rules a build may gain stay out of the package.
set(CPACK_INSTALL_CMAKE_PROJECTS "${CMAKE_CURRENT_BINARY_DIR};${PROJECT_NAME};lopside;/")
set(CPACK_PACKAGING_INSTALL_PREFIX /usr)
# The program is built with debug information (RelWithDebInfo); the package carries it stripped.
set(CPACK_STRIP_FILES ON)

set(CPACK_DEBIAN_FILE_NAME DEB-DEFAULT)
set(CPACK_DEBIAN_PACKAGE_RELEASE 1)
set(CPACK_DEBIAN_PACKAGE_MAINTAINER "lopside developers <lopside@example.invalid>")
set(CPACK_DEBIAN_PACKAGE_SECTION electronics)
set(CPACK_DEBIAN_PACKAGE_PRIORITY optional)
set(CPACK_DEBIAN_PACKAGE_SHLIBDEPS ON)
set(CPACK_DEBIAN_PACKAGE_CONTROL_STRICT_PERMISSION ON)

# `cmake --build BUILD --target package_source`: the sources without git's data and the build
# folders (.gitignore's); its build then takes the version from PROJECT_VERSION (no .git).
set(CPACK_SOURCE_GENERATOR TXZ)
set(CPACK_SOURCE_IGNORE_FILES "^${PROJECT_SOURCE_DIR}/\\.git/" "^${PROJECT_SOURCE_DIR}/build"
    "\\.tmp-")
# Values reach CPack's configuration as written here (the description's lines, the regexes).
set(CPACK_VERBATIM_VARIABLES ON)
include(CPack)
