#!/usr/bin/env bash
# setup-test.sh: everything `make test` needs beyond the build: PostGIS (a running cluster and a
# template database), and Debian's Chromium for the page tests. Idempotent.
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
"$here/setup-build.sh"
"$here/apt-ensure.sh" chromium
"$here/test-db.sh"
