# Installation tests (issue 14): `cmake --install` into a folder of the build tree, then the
# installed program's version, manual pages and completions; and the .deb, made by cpack into a
# temporary folder and read with dpkg-deb (never installed here). check_install.py says what
# each check asserts. They reuse the built program and need no network.
string(REPLACE ";" "," lopside_commands "${LOPSIDE_COMMANDS}")
set(LOPSIDE_INSTALL_CHECK
    /usr/bin/python3 ${CMAKE_CURRENT_LIST_DIR}/check_install.py --build ${PROJECT_BINARY_DIR}
    --source ${PROJECT_SOURCE_DIR} --prefix ${CMAKE_CURRENT_BINARY_DIR}/install-prefix
    --project-version ${PROJECT_VERSION} --commands ${lopside_commands})

# What `cmake --install` copies must be built: the program, its pages and completions (already
# up to date after a full build; the quick start builds the program alone).
add_test(NAME install.build
         COMMAND ${CMAKE_COMMAND} --build ${PROJECT_BINARY_DIR} --target lopside lopside_docs)
# Alone: a rebuild (a stale tree, a new commit) must not relink the program under other tests.
set_tests_properties(install.build PROPERTIES FIXTURES_SETUP lopside_install_built TIMEOUT 1800
                     RUN_SERIAL TRUE)

add_test(NAME install.install COMMAND ${LOPSIDE_INSTALL_CHECK} install)
set_tests_properties(install.install PROPERTIES FIXTURES_SETUP lopside_installed
                     FIXTURES_REQUIRED lopside_install_built)

set(lopside_install_checks install.version install.bash_completion install.zsh_options
    install.zsh_syntax)
add_test(NAME install.version COMMAND ${LOPSIDE_INSTALL_CHECK} version)
add_test(NAME install.bash_completion COMMAND ${LOPSIDE_INSTALL_CHECK} bash)
add_test(NAME install.zsh_options COMMAND ${LOPSIDE_INSTALL_CHECK} zsh-options)
add_test(NAME install.zsh_syntax COMMAND ${LOPSIDE_INSTALL_CHECK} zsh-syntax)
set_tests_properties(install.zsh_syntax PROPERTIES SKIP_RETURN_CODE 77)
list(TRANSFORM LOPSIDE_COMMANDS PREPEND lopside- OUTPUT_VARIABLE lopside_pages)
foreach(page IN ITEMS lopside ${lopside_pages})
  add_test(NAME install.man.${page} COMMAND ${LOPSIDE_INSTALL_CHECK} man ${page})
  list(APPEND lopside_install_checks install.man.${page})
endforeach()
set_tests_properties(${lopside_install_checks} PROPERTIES FIXTURES_REQUIRED lopside_installed
                     TIMEOUT 120)

add_test(NAME install.deb COMMAND ${LOPSIDE_INSTALL_CHECK} deb)
set_tests_properties(install.deb PROPERTIES FIXTURES_REQUIRED lopside_install_built TIMEOUT 300)
