#!/usr/bin/env bash
# setup-test.sh: everything `make test` needs beyond the build: PostGIS (a running cluster and a
# template database), Debian's Chromium for the page tests and netcdf-bin (ncdump, used to inspect
# written netCDF files independently of GDAL), and the SeaweedFS server (weed) that the
# object-store tests run as a real S3-compatible server (built once into build/tools, in the background).
# Idempotent.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
"$here/setup-build.sh"
"$here/apt-ensure.sh" chromium netcdf-bin
"$here/test-db.sh" >/dev/null
# weed builds in the background (a quarter of an hour of CPU the first time on 2 cores, nothing
# once built), so that it overlaps the page build, lint and fuzzing of `make test`; it holds
# build/tools/weed.lock (flock) until it is done, and `make test-go` waits on that lock.
root=$(dirname "$here")
mkdir -p "$root/build/tools"
exec 9>"$root/build/tools/weed.lock"
flock 9
nohup "$here/build-weed.sh" >"$root/build/tools/weed.setup.log" 2>&1 9>&9 </dev/null &
exec 9>&-
echo "setup-test: building the SeaweedFS test server in the background (log: build/tools/weed.setup.log)" >&2
