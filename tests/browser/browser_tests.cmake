# Browser tests (issue 12, item 6): each report kind is made by the real binary, then loaded
# from its file in Debian's headless Chromium with networking off (tests/browser/README.md).
# tools/test-all installs chromium; the tests fail, not skip, without it.
set(LOPSIDE_BROWSER_DIR ${CMAKE_CURRENT_SOURCE_DIR}/browser)
set(LOPSIDE_BROWSER_OUT ${CMAKE_CURRENT_BINARY_DIR}/browser-reports)
set(LOPSIDE_SAMPLES ${PROJECT_SOURCE_DIR}/samples)

add_test(NAME browser.checker_selftest
         COMMAND /usr/bin/python3 ${LOPSIDE_BROWSER_DIR}/check_report.py --selftest)

# report_case(NAME LOPSIDE_ARGS... CHECK CHECK_ARGS...)
function(lopside_report_case name)
  cmake_parse_arguments(RC "" "" "RUN;CHECK" ${ARGN})
  add_test(NAME browser.${name}
           COMMAND /usr/bin/python3 ${LOPSIDE_BROWSER_DIR}/report_case.py ${LOPSIDE_BROWSER_OUT}
                   ${name} -- $<TARGET_FILE:lopside> ${RC_RUN} -- ${RC_CHECK})
  set_tests_properties(browser.${name} PROPERTIES TIMEOUT 180 RUN_SERIAL TRUE)
endfunction()

# A supply fault with a voltage channel: every plot of the measure report.
lopside_report_case(measure_supply_fault
  RUN measure ${LOPSIDE_SAMPLES}/bt32k-unit0417-dc-fault.csv --html @HTML@ --json @JSON@
  CHECK --compare-json @JSON@ --print-pdf @OUT@/measure_supply_fault.pdf
        --expect-selector "#chart-average-cycle svg" --expect-selector "#chart-average-voltage svg"
        --expect-selector "#chart-cycle-strip svg" --expect-selector "#chart-course-dc svg"
        --expect-selector "#chart-course-asymmetry svg" --expect-selector "#chart-spectrum svg"
        --expect-selector "#chart-heating svg" --expect-selector "[data-key]=20"
        --expect-text "The supply switches unevenly" --expect-text "High voltage can kill"
        --expect-text "DC offset")
# A 60 Hz glow that rectifies itself, 40 orders in the spectrum.
lopside_report_case(measure_glow
  RUN measure ${LOPSIDE_SAMPLES}/bt60hz-xfmr-glow.csv --html @HTML@ --json @JSON@
  CHECK --compare-json @JSON@ --expect-selector "figure.chart svg=8"
        --expect-text "preferred cathode" --expect-text "Electrode heating")
# Current only, clipped crests.
lopside_report_case(measure_current_only
  RUN measure ${LOPSIDE_SAMPLES}/bt32k-unit0433-clipped.tsv --html @HTML@ --json @JSON@
  CHECK --compare-json @JSON@ --expect-selector "figure.chart svg=6")
