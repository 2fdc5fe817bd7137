#!/usr/bin/env bash
# Installs what the tests need on a fresh Debian machine: Debian's Chromium
# (browser tests drive it through playwright-core; no browser downloads) and
# the Python references (scikit-image, SciPy, pyproj, shapely), then the npm
# packages from the lock file.
set -euo pipefail
cd "$(dirname "$0")/.."
pkgs="chromium python3-skimage python3-scipy python3-pyproj python3-shapely python3-tifffile"
missing=""
for p in $pkgs; do dpkg -s "$p" >/dev/null 2>&1 || missing="$missing $p"; done
if [ -n "$missing" ]; then
  as_root=""
  [ "$(id -u)" -eq 0 ] || as_root="sudo"
  export DEBIAN_FRONTEND=noninteractive
  $as_root apt-get update -qq
  $as_root apt-get install -y -qq --no-install-recommends $missing
fi
npm ci --no-audit --no-fund
