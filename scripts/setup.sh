#!/usr/bin/env bash
# Installs the Debian packages kilter needs, and only those that are missing.
# Idempotent: when everything is present it installs nothing and needs no network.
# Usage: scripts/setup.sh [--with-browser]   (--with-browser adds chromium for the HTML report test)
set -eu
# clang and its runtime libraries (libclang-rt-dev: the sanitizers and libFuzzer) for the
# third build of scripts/test.sh and the fuzz targets
# libxlsxwriter-dev: the spreadsheet workbook (--workbook); libproj-dev and proj-data (PROJ and its
# EPSG database): bus coordinates and GeoJSON; python3 reads them back in tests/cli_workbook.sh and
# tests/cli_geojson.sh
pkgs="build-essential cmake pkg-config libsuitesparse-dev libyaml-dev libgsl-dev check clang libclang-rt-dev libxlsxwriter-dev libproj-dev proj-data python3"
for a in "$@"; do
  case "$a" in
    --with-browser) pkgs="$pkgs chromium" ;;
    *) echo "setup.sh: unknown option '$a' (expected --with-browser)" >&2; exit 2 ;;
  esac
done
missing=""
for p in $pkgs; do
  if ! dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q 'install ok installed'; then
    missing="$missing $p"
  fi
done
if [ -z "$missing" ]; then
  exit 0
fi
echo "setup.sh: installing:$missing" >&2
sudo=""
if [ "$(id -u)" -ne 0 ]; then sudo="sudo"; fi
export DEBIAN_FRONTEND=noninteractive
$sudo apt-get update -q >&2
# shellcheck disable=SC2086
$sudo apt-get install -y -q --no-install-recommends $missing >&2
