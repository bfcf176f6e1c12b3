#!/usr/bin/env bash
# Makes the demo production lot for `lopside lot` (README, "lopside lot CAPTURE... --limits FILE"):
# 20 synthetic captures and their limits file, written with build/tools/lopside-synth only.
#
#   tools/make-demo-lot.sh [DIR]      # DIR defaults to ./demo-lot
#
# The scenario is invented (no real firm, person or product): a small maker of electronic supplies
# for cold-cathode tubes tests every inverter of lot L2026-48 (32 kHz, 25 mA peak class) on its
# reference tube load before shipping, recording the discharge current and the tube voltage.
# Every capture is 5 ms at 1 MS/s (about 160 cycles, 118 kB of text); the whole script runs in
# well under a second. The outputs are deterministic: fixed parameters and fixed noise seeds.
#
# What the lot holds (the verdicts `lopside lot` gives with limits.toml, guarded decisions):
#   16 healthy units         pass; DC within ±0.12 mA, 31.5–32.5 kHz, peak 24.6–25.4 mA
#   inv32k-0486  fail        supply imbalance: positive half-period 53 % of the cycle
#                            (+0.95 mA DC, charge asymmetry ≈ 0.060)
#   inv32k-0490  conditional DC +0.161 mA: charge asymmetry 0.00998 ± 0.00018 (u95) holds the
#                            limit 0.01 (see the note at its line)
#   inv32k-0493  fail        weak negative lobe, 0.9 of the positive peak
#                            (+0.80 mA DC, charge asymmetry ≈ 0.053)
#   inv32k-0497  not_measured  the recording stopped after 40 µs: no two whole cycles to measure
set -euo pipefail

repo="$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)"
synth="${LOPSIDE_SYNTH:-$repo/build/tools/lopside-synth}"
if [ ! -x "$synth" ]; then
  echo "make-demo-lot: $synth not found; build first (cmake --build build)" >&2
  exit 2
fi

dir="${1:-demo-lot}"
dir="${dir%/}"
mkdir -p "$dir"
# The lot command takes every capture file of the folder: warn about any that are not ours.
shopt -s nullglob
for f in "$dir"/*; do
  case "$(basename "$f")" in
    inv32k-048[1-9].csv | inv32k-049[0-9].csv | inv32k-0500.csv | limits.toml) ;;
    *) echo "make-demo-lot: note: $f is not part of the demo lot; 'lopside lot $dir' reads it too if it is a capture" >&2 ;;
  esac
done

# One capture: unit number, then lopside-synth options of its own. Common to all: the bench's
# recorder (1 MS/s, 5 ms), current probe noise 0.1 mA rms, current in mA with 5 significant digits.
unit() {
  local id="$1"
  shift
  "$synth" -o "$dir/inv32k-$id.csv" --rate 1000000 --duration 0.005 --noise-rms 0.0001 \
    --seed "1$id" --current-unit mA --digits 5 "$@"
}

# Healthy units: columns are unit, DC [A], frequency [Hz], current peak [A], voltage peak [V].
# The small spread of DC, frequency and peaks stands for unit-to-unit variation of the parts; the
# values were picked by hand to look scattered, not drawn from a generator.
while read -r id dc freq peak vpeak; do
  unit "$id" --dc "$dc" --frequency "$freq" --peak "$peak" --voltage-peak "$vpeak"
done <<'EOF'
0481  0.00004  32110  0.0251  1502
0482 -0.00007  31870  0.0248  1494
0483  0.00011  32260  0.0253  1509
0484 -0.00002  31640  0.0247  1488
0485  0.00008  32030  0.0250  1500
0487 -0.00012  32410  0.0252  1506
0488  0.00001  31920  0.0249  1497
0489  0.00006  31550  0.0246  1486
0491 -0.00005  32180  0.0251  1503
0492  0.00009  32340  0.0254  1513
0494 -0.00010  31780  0.0248  1492
0495  0.00003  32070  0.0250  1499
0496  0.00012  31690  0.0247  1490
0498 -0.00004  32470  0.0253  1511
0499  0.00007  31980  0.0250  1501
0500 -0.00008  32220  0.0251  1504
EOF

# 0486: the supply's switching is unbalanced, 53:47, in the voltage and so in the current. Sine
# halves of equal peak but unequal length carry charge in proportion to their length, so the
# charge asymmetry is (0.53 − 0.47)/1 = 0.06, six times its limit.
unit 0486 --frequency 32050 --peak 0.025 --positive-share 0.53 \
  --voltage-peak 1500 --voltage-share 0.53

# 0490: a DC just at the edge. The charge-asymmetry limit ±0.01 is reached at a DC of about
# 0.01 × mean |i| = 0.01 × (2/π) × 25 mA ≈ 0.159 mA. Checked with
#   build/lopside measure --json - demo-lot/inv32k-0490.csv
# for --dc 0.000155 … 0.000163 in steps of 1 µA (seed 10490); 0.000159 to 0.000163 all straddle
# the limit. At 0.000161 charge_asymmetry is 0.0099830 with u95 0.000183, so [value − u95,
# value + u95] = [0.00980, 0.01017] holds the limit 0.01: conditional under the guarded rule (a
# pass under the simple rule, the value being inside); dc_to_rms is 0.00899 ± 0.00016, a pass.
unit 0490 --dc 0.000161 --frequency 31960 --peak 0.025 --voltage-peak 1500

# 0493: one electrode emits worse: the negative lobe reaches only 0.9 of the positive peak
# (self-rectification); DC = (1 − 0.9)/2 × (2/π) × 25 mA ≈ 0.80 mA, charge asymmetry ≈ 0.053.
unit 0493 --frequency 32120 --peak 0.025 --negative-ratio 0.9 --voltage-peak 1500

# 0497: the bench PC's disk filled up and the recording stopped after 40 µs: the header and 40
# rows, about 1.3 cycles. lopside needs two whole cycles, so the unit is not measured.
unit 0497 --frequency 32000 --peak 0.025 --voltage-peak 1500
head -n 41 "$dir/inv32k-0497.csv" > "$dir/inv32k-0497.csv.tmp"
mv "$dir/inv32k-0497.csv.tmp" "$dir/inv32k-0497.csv"

# The limits, from this invented product's test specification. Healthy values: rms_a about
# 17.4–18.0 mA (peak/√2), voltage.rms_v about 1051–1070 V (peak/√2), thd about 0.2 % (noise).
cat > "$dir/limits.toml" <<'EOF'
# Final test of lot inverters on the reference tube load (invented example for lopside).
[lot]
product = "Cold-cathode tube inverter, 32 kHz, 25 mA peak class, final test on reference load"
decision = "guarded"               # pass only when value ± u95 lies within the limits
unit_id = "pattern"
unit_id_pattern = "inv32k-(\\d{4})" # inv32k-0481.csv -> 0481

[limits.dc_to_rms]                 # DC offset over RMS current, ±1 %
min = -0.01
max = 0.01

[limits.charge_asymmetry]          # (Q+ − Q−)/(Q+ + Q−), ±0.01
min = -0.01
max = 0.01

[limits.rms_a]                     # RMS current [A]: 17.68 mA nominal, ±4 %
min = 0.01697
max = 0.01839

[limits.thd]                       # total harmonic distortion of the current, at most 3 %
max = 0.03

[limits.voltage.rms_v]             # RMS tube voltage [V]: 1061 V nominal, ±40 V
min = 1021
max = 1101
EOF

n=$(find "$dir" -maxdepth 1 -name 'inv32k-*.csv' | wc -l)
echo "make-demo-lot: wrote $n captures and limits.toml to $dir/"
if [ "$(pwd)" = "$repo" ]; then lopside=build/lopside; else lopside="$repo/build/lopside"; fi
echo "Run:"
echo "  $lopside lot $dir --limits $dir/limits.toml --lot L2026-48"
