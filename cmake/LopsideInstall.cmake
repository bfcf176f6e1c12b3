# Installing lopside like a Debian tool: the program, one manual page per command, bash and zsh
# completions and the README, in the GNU layout (GNUInstallDirs), all in the component
# "lopside"; and a .deb of exactly that component (CPack, cmake/LopsidePackage.cmake).
#
# The pages and completions are made at build time from the help the built program prints
# (tools/make-manpages, tools/make-completions), so they change whenever the options do.
include(GNUInstallDirs)

# One manual page per command. tools/lopside_help.py stops the build when `lopside --help`
# lists other commands, so a new command cannot go without its page.
set(LOPSIDE_COMMANDS inspect measure swap lot trend)

# The Debian package python3, not a virtual environment's (tools/ use its standard library only).
find_program(LOPSIDE_PYTHON3 NAMES python3 HINTS /usr/bin REQUIRED)

set(LOPSIDE_MAN_DIR ${CMAKE_CURRENT_BINARY_DIR}/man)
set(LOPSIDE_MAN_PAGES ${LOPSIDE_MAN_DIR}/lopside.1.gz)
foreach(command IN LISTS LOPSIDE_COMMANDS)
  list(APPEND LOPSIDE_MAN_PAGES ${LOPSIDE_MAN_DIR}/lopside-${command}.1.gz)
endforeach()
list(TRANSFORM LOPSIDE_MAN_PAGES REPLACE "\\.gz$" "" OUTPUT_VARIABLE LOPSIDE_MAN_SOURCES)
add_custom_command(
  OUTPUT ${LOPSIDE_MAN_PAGES} ${LOPSIDE_MAN_SOURCES}
  COMMAND ${LOPSIDE_PYTHON3} ${PROJECT_SOURCE_DIR}/tools/make-manpages
          --lopside $<TARGET_FILE:lopside>
          --exit-codes ${PROJECT_SOURCE_DIR}/include/lopside/error.hpp
          --commands "${LOPSIDE_COMMANDS}" --out ${LOPSIDE_MAN_DIR}
  DEPENDS lopside ${PROJECT_SOURCE_DIR}/tools/make-manpages
          ${PROJECT_SOURCE_DIR}/tools/lopside_help.py ${PROJECT_SOURCE_DIR}/include/lopside/error.hpp
  COMMENT "Writing lopside's manual pages from its --help"
  VERBATIM)

set(LOPSIDE_BASH_COMPLETION ${CMAKE_CURRENT_BINARY_DIR}/completions/bash/lopside)
set(LOPSIDE_ZSH_COMPLETION ${CMAKE_CURRENT_BINARY_DIR}/completions/zsh/_lopside)
add_custom_command(
  OUTPUT ${LOPSIDE_BASH_COMPLETION} ${LOPSIDE_ZSH_COMPLETION}
  COMMAND ${LOPSIDE_PYTHON3} ${PROJECT_SOURCE_DIR}/tools/make-completions
          --lopside $<TARGET_FILE:lopside> --commands "${LOPSIDE_COMMANDS}"
          --bash ${LOPSIDE_BASH_COMPLETION} --zsh ${LOPSIDE_ZSH_COMPLETION}
  DEPENDS lopside ${PROJECT_SOURCE_DIR}/tools/make-completions
          ${PROJECT_SOURCE_DIR}/tools/lopside_help.py
  COMMENT "Writing lopside's bash and zsh completions from its --help"
  VERBATIM)

add_custom_target(lopside_docs ALL
                  DEPENDS ${LOPSIDE_MAN_PAGES} ${LOPSIDE_BASH_COMPLETION} ${LOPSIDE_ZSH_COMPLETION})

install(TARGETS lopside RUNTIME DESTINATION ${CMAKE_INSTALL_BINDIR} COMPONENT lopside)
install(FILES ${LOPSIDE_MAN_PAGES} DESTINATION ${CMAKE_INSTALL_MANDIR}/man1 COMPONENT lopside)
# bash-completion loads completions/NAME on the first Tab after NAME; Debian's zsh has
# vendor-completions on its fpath (for /usr/local, add that folder to fpath).
install(FILES ${LOPSIDE_BASH_COMPLETION}
        DESTINATION ${CMAKE_INSTALL_DATADIR}/bash-completion/completions COMPONENT lopside)
install(FILES ${LOPSIDE_ZSH_COMPLETION}
        DESTINATION ${CMAKE_INSTALL_DATADIR}/zsh/vendor-completions COMPONENT lopside)
install(FILES ${PROJECT_SOURCE_DIR}/README.md DESTINATION ${CMAKE_INSTALL_DOCDIR}
        COMPONENT lopside)

include(${CMAKE_CURRENT_LIST_DIR}/LopsidePackage.cmake)
