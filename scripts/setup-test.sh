#!/usr/bin/env bash
# setup-test.sh: everything `make test` needs beyond the build: PostGIS (a running cluster and a
# template database), Debian's Chromium for the page tests and netcdf-bin (ncdump, used to inspect
# written netCDF files independently of GDAL), and the SeaweedFS server (weed) that the
# object-store tests run as a real S3-compatible server (built once into build/tools).
# Idempotent.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
"$here/setup-build.sh"
"$here/apt-ensure.sh" chromium netcdf-bin
"$here/test-db.sh" >/dev/null
"$here/build-weed.sh"
