#!/usr/bin/env bash
# Installs the Debian packages lopside builds with (when missing), then configures and builds
# into build/ (everything, or only the targets given as arguments). Used by the README's two
# quick-start commands and by CI; safe to run again.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)

packages=(cmake make g++ pkg-config libfftw3-dev libsndfile1-dev libcli11-dev
          nlohmann-json3-dev libgtest-dev libgmock-dev libbenchmark-dev python3 python3-numpy
          zlib1g-dev liblzma-dev libzstd-dev libfast-float-dev libtomlplusplus-dev
          libsqlite3-dev libssl-dev libpq-dev postgresql git)
# The whole test suite also opens the HTML reports in a real browser (tests/browser/: Debian's
# Chromium and a font) and checks the installed manual pages and the .deb (tests/install/:
# groff and man to render the pages, dpkg-dev for cpack's dpkg-shlibdeps). Installed only when
# the tests will run (tools/test-all sets this), so the quick start's first command stays small.
if [ "${LOPSIDE_ALL_TESTS:-0}" = 1 ]; then
  packages+=(chromium fonts-dejavu-core dpkg-dev groff-base man-db)
fi
# The fuzzing build (tools/fuzz) needs clang and its libFuzzer runtime.
if [ "${LOPSIDE_FUZZ_TOOLS:-0}" = 1 ]; then
  packages+=(clang libclang-rt-14-dev)
fi
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if ((${#missing[@]})); then
  sudo=""
  [ "$(id -u)" -eq 0 ] || sudo="sudo"
  export DEBIAN_FRONTEND=noninteractive
  echo "bootstrap: installing ${missing[*]}" >&2
  # A fresh machine may have empty package lists: update once, only if the install fails.
  $sudo apt-get install -y --no-install-recommends "${missing[@]}" >&2 ||
    { $sudo apt-get update >&2 && $sudo apt-get install -y --no-install-recommends "${missing[@]}" >&2; }
fi

# `--packages-only` stops here: the checking builds (tools/test-sanitized, tools/fuzz) configure
# trees of their own.
if [ "${1:-}" = --packages-only ]; then exit 0; fi

cmake -S "$root" -B "$root/build" -DCMAKE_BUILD_TYPE=RelWithDebInfo >&2
# Targets given as arguments are built alone (the quick start's first command needs only the
# `lopside` binary, not the tests and benchmarks); none builds everything.
if (($#)); then
  cmake --build "$root/build" -j"$(nproc)" --target "$@" >&2
else
  cmake --build "$root/build" -j"$(nproc)" >&2
fi
