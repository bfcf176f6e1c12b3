#!/usr/bin/env bash
# Installs the Debian packages lopside builds with (when missing), then configures and builds
# into build/ (everything, or only the targets given as arguments). Used by the README's two
# quick-start commands and by CI; safe to run again.
set -euo pipefail
root=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)

packages=(cmake make g++ pkg-config libfftw3-dev libsndfile1-dev libcli11-dev
          nlohmann-json3-dev libgtest-dev libgmock-dev libbenchmark-dev python3 python3-numpy
          zlib1g-dev liblzma-dev libzstd-dev libfast-float-dev libtomlplusplus-dev
          libsqlite3-dev libssl-dev libpq-dev postgresql)
# The test suite also opens the HTML reports in a real browser (tests/browser/): Debian's
# Chromium and a font, installed only when the tests will run (tools/test-all sets this), so the
# quick start's first command stays small.
if [ "${LOPSIDE_BROWSER_TESTS:-0}" = 1 ]; then
  packages+=(chromium fonts-dejavu-core)
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

cmake -S "$root" -B "$root/build" -DCMAKE_BUILD_TYPE=RelWithDebInfo >&2
# Targets given as arguments are built alone (the quick start's first command needs only the
# `lopside` binary, not the tests and benchmarks); none builds everything.
if (($#)); then
  cmake --build "$root/build" -j"$(nproc)" --target "$@" >&2
else
  cmake --build "$root/build" -j"$(nproc)" >&2
fi
