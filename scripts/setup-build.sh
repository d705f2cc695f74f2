#!/usr/bin/env bash
# setup-build.sh: everything `make run` needs to build ridgeflank on Debian 12:
# a C toolchain and GDAL/PROJ development files for the one cgo package, and Node.js/npm for the page.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
pkgs=(gcc pkg-config libgdal-dev libproj-dev gdal-bin)
command -v npm >/dev/null 2>&1 || pkgs+=(nodejs npm)
"$here/apt-ensure.sh" "${pkgs[@]}"
if ! command -v go >/dev/null 2>&1 && [ ! -x /usr/local/go/bin/go ]; then
  echo "setup-build: Go 1.26 is required (https://go.dev/doc/install); Debian 12's golang package is too old" >&2
  exit 1
fi
