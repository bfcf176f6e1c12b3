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

# Swap, lot and trend: their inputs come from one fixture (make_fixtures.sh).
set(LOPSIDE_FIXTURES ${CMAKE_CURRENT_BINARY_DIR}/browser-fixtures)
add_test(NAME browser.make_fixtures
         COMMAND ${LOPSIDE_BROWSER_DIR}/make_fixtures.sh ${LOPSIDE_FIXTURES}
                 $<TARGET_FILE:lopside> $<TARGET_FILE:lopside-synth>)
set_tests_properties(browser.make_fixtures PROPERTIES FIXTURES_SETUP browser_inputs TIMEOUT 300)

lopside_report_case(swap
  RUN swap ${LOPSIDE_FIXTURES}/swap/n.csv ${LOPSIDE_FIXTURES}/swap/s.csv --html @HTML@
      --json @JSON@
  CHECK --compare-json @JSON@ --print-pdf @OUT@/swap.pdf --expect-selector "figure.chart svg=2"
        --expect-selector "[data-key='driver_bias_a.u95']"
        --expect-selector "[data-key='electrode_bias_a.u95']"
        --expect-selector "[data-key='normal.dc_offset_a.u95']"
        --expect-selector "[data-key='swapped.dc_offset_a.u95']"
        --expect-text "supply part D" --expect-text "electrode part E"
        --expect-text "High voltage can kill")
lopside_report_case(lot
  RUN lot ${LOPSIDE_FIXTURES}/demo-lot --limits ${LOPSIDE_FIXTURES}/demo-lot/limits.toml
      --lot L2026-48 --html @HTML@ --json @JSON@
  CHECK --compare-json @JSON@ --print-pdf @OUT@/lot.pdf --expect-selector "figure.chart svg=10"
        --expect-selector "table.units tr=21" --expect-selector "td.cell-fail=5"
        --expect-selector "line.rule.s-limit=9" --expect-selector "circle.marker.s-flag"
        --expect-text "Lot L2026-48" --expect-text "Cpk")
lopside_report_case(trend
  RUN trend --history ${LOPSIDE_FIXTURES}/history.sqlite --html @HTML@ --json @JSON@
  CHECK --compare-json @JSON@ --print-pdf @OUT@/trend.pdf --expect-selector "figure.chart svg=2"
        --expect-selector "circle.marker.s-flag" --expect-selector "[data-key='failures.0.unit']"
        --expect-text "flagged" --expect-text "Units that did not pass" --expect-text "L6")
set_tests_properties(browser.swap browser.lot browser.trend PROPERTIES
                     FIXTURES_REQUIRED browser_inputs)
