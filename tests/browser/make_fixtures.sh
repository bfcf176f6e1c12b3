#!/usr/bin/env bash
# Inputs of the swap, lot and trend browser tests (browser_tests.cmake), made with the built
# programs into OUTDIR:
#   swap/n.csv, swap/s.csv  a lead-swap pair of a supply switching 52:48 (lopside-synth)
#   demo-lot/              tools/make-demo-lot.sh's lot L2026-48 and its limits
#   history.sqlite         six lots of three units in the history; lot 6 carries +0.6 mA more
#                          DC (a process shift the run rules flag), unit u7 fails twice on RMS
#   make_fixtures.sh OUTDIR LOPSIDE LOPSIDE_SYNTH
set -euo pipefail
out=$1 lopside=$2 synth=$3
repo="$(cd "$(dirname "${BASH_SOURCE[0]}")/../.." && pwd)"
rm -rf "$out/swap" "$out/demo-lot" "$out/trend" "$out/history.sqlite"
mkdir -p "$out/swap" "$out/trend"

# The pair: N with the leads as normal, S with the supply's leads exchanged, so the supply's
# 52:48 switching turns into 48:52 while the electrodes (here symmetric but for a weaker
# negative lobe, 0.9) stay.
common=(--frequency 32000 --rate 1e6 --duration 0.005 --peak 0.025 --noise-rms 0.0001
        --negative-ratio 0.9)
"$synth" -o "$out/swap/n.csv" "${common[@]}" --seed 5 --positive-share 0.52
"$synth" -o "$out/swap/s.csv" "${common[@]}" --seed 6 --positive-share 0.48

LOPSIDE_SYNTH="$synth" "$repo/tools/make-demo-lot.sh" "$out/demo-lot" >/dev/null

cat > "$out/trend/limits.toml" <<'TOML'
[lot]
product = "tube supply 32 kHz"

[limits.dc_offset_a]
min = -0.001
max = 0.001

[limits.rms_a]
min = 0.015
max = 0.020
TOML
seed=1
for lot in 1 2 3 4 5 6; do
  d="$out/trend/L$lot"
  mkdir -p "$d"
  shift_a=0
  [ "$lot" = 6 ] && shift_a=0.0006
  third="u$((lot * 10 + 3))" peak=0.025
  case $lot in 2 | 6) third=u7 peak=0.032 ;; 4) third=u9 peak=0.032 ;; esac
  unit() {
    "$synth" -o "$d/$1.csv" --frequency 32000 --rate 1e6 --duration 0.005 --peak "$3" \
      --noise-rms 0.0001 --dc "$2" --seed "$seed"
    seed=$((seed + 1))
  }
  unit "u$((lot * 10 + 1))" "$(awk "BEGIN{print 0.00002*$lot+$shift_a}")" 0.025
  unit "u$((lot * 10 + 2))" "$(awk "BEGIN{print -0.00003*$lot+$shift_a}")" 0.025
  unit "$third" "$(awk "BEGIN{print 0.00001+$shift_a}")" "$peak"
  status=0
  "$lopside" lot "$d" --limits "$out/trend/limits.toml" --lot "L$lot" --station bench-7 \
    --history "$out/history.sqlite" >/dev/null || status=$?
  [ "$status" = 0 ] || [ "$status" = 4 ] || exit 1
done
