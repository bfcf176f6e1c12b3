#!/usr/bin/env bash
# Regenerates samples/ with the exact commands listed in samples/README.md. Run from anywhere
# after building (build/tools/lopside-synth); the outputs are deterministic (fixed seeds).
set -euo pipefail
cd "$(dirname "${BASH_SOURCE[0]}")/.."
synth=build/tools/lopside-synth
if [ ! -x "$synth" ]; then
  echo "make-samples: $synth not found; build first (cmake --build build)" >&2
  exit 2
fi

# 1. Healthy 32 kHz supply, current only.
build/tools/lopside-synth -o samples/bt32k-unit0412-healthy.csv --frequency 32000 --rate 1000000 --duration 0.005 --peak 0.022 --noise-rms 0.0002 --seed 412 --current-unit mA --digits 5

# 2. Supply with unequal half-periods (53:47): +1.07 mA DC, voltage channel.
build/tools/lopside-synth -o samples/bt32k-unit0417-dc-fault.csv --frequency 32000 --rate 1000000 --duration 0.004 --peak 0.028 --positive-share 0.53 --noise-rms 0.0004 --seed 417 --voltage-peak 1800 --voltage-share 0.53 --current-unit mA --voltage-unit kV --digits 5

# 3. 60 Hz iron-core transformer feeding a glow: lobed current, slight self-rectification.
build/tools/lopside-synth -o samples/bt60hz-xfmr-glow.csv --frequency 60 --rate 20000 --duration 0.25 --shape lobed --peak 0.03 --breakdown 0.15 --lobe 0.75 --negative-ratio 0.94 --noise-rms 0.0002 --seed 60 --voltage-peak 9000 --current-unit mA --voltage-unit kV --digits 5

# 4. European-locale bench export: semicolons, decimal commas, preamble, comments, CRLF.
build/tools/lopside-synth -o samples/bt40k-unit0521-export.csv --frequency 40000 --rate 2000000 --duration 0.002 --peak 0.018 --dc 0.0012 --noise-rms 0.0001 --seed 521 --voltage-peak 2200 --delimiter semicolon --preamble --meta "Unit under test=BT-40K serial 0521" --meta "Load=reference tube R-12" --comments --crlf --unit-style brackets --time-unit µs --current-unit mA --digits 5

# 5. 24-bit stereo WAV from rack 3: needs --scale 1=0.1 --scale 2=5000 (and --unit 1=A --unit 2=V).
build/tools/lopside-synth -o samples/bt-rack3-stereo24.wav --frequency 32000 --rate 500000 --duration 0.05 --peak 0.021 --negative-ratio 0.97 --noise-rms 0.0001 --seed 3 --voltage-peak 1500 --sample-format pcm24 --full-scale-current 0.1 --full-scale-voltage 5000

# 6. Recorder range too small for the negative lobe: clipped at -15 mA (tab-separated).
build/tools/lopside-synth -o samples/bt32k-unit0433-clipped.tsv --frequency 32000 --rate 1000000 --duration 0.003 --peak 0.02 --clip-low -0.015 --noise-rms 0.0001 --seed 433 --current-unit mA --digits 5
