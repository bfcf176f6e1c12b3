# lopside's version text, taken at build time (cmake/WriteVersionHeader.cmake says what it is):
# a commit made after configuring still shows in `lopside --version` after the next build.
# lopside_version_header(TARGET) gives TARGET the generated lopside_version.hpp.
find_package(Git QUIET)
set(LOPSIDE_VERSION_DIR ${CMAKE_CURRENT_BINARY_DIR}/generated)
set(LOPSIDE_VERSION_HEADER ${LOPSIDE_VERSION_DIR}/lopside_version.hpp)
set(LOPSIDE_VERSION_COMMAND
    ${CMAKE_COMMAND} -DSOURCE_DIR=${PROJECT_SOURCE_DIR} -DOUTPUT=${LOPSIDE_VERSION_HEADER}
    -DPROJECT_VERSION=${PROJECT_VERSION} -DGIT_EXECUTABLE=${GIT_EXECUTABLE}
    -P ${CMAKE_CURRENT_LIST_DIR}/WriteVersionHeader.cmake)

file(MAKE_DIRECTORY ${LOPSIDE_VERSION_DIR})
execute_process(COMMAND ${LOPSIDE_VERSION_COMMAND})
# Always run: git's state is not a file CMake could depend on. The script leaves the header
# untouched when the text is the same, so nothing recompiles or relinks then.
add_custom_target(lopside_version
                  COMMAND ${LOPSIDE_VERSION_COMMAND}
                  BYPRODUCTS ${LOPSIDE_VERSION_HEADER}
                  COMMENT "Checking lopside's version (git describe)"
                  VERBATIM)

function(lopside_version_header target)
  add_dependencies(${target} lopside_version)
  target_include_directories(${target} PRIVATE ${LOPSIDE_VERSION_DIR})
endfunction()
