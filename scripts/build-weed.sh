#!/usr/bin/env bash
# build-weed.sh: builds the SeaweedFS server (weed, Apache-2.0) that the object-store tests run
# as a real S3-compatible server, into build/tools/weed, from its source on the Go module proxy.
# Nothing is added to ridgeflank's go.mod: the source is fetched with `go mod download` and built
# as its own main module, with its own go.mod and go.sum (its replace directives make
# `go install module@version` refuse it). Skipped when build/tools/weed is already this version.
# Where it cannot be built, the reason goes to build/tools/weed.unavailable (the tests name it
# when they skip) and the script still exits 0, so the other tests run.
# A first build compiles a few hundred packages: minutes on a 2-core machine (see README).
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
# One pinned version (a pseudo-version: the module publishes no release tags).
WEED_MODULE=github.com/seaweedfs/seaweedfs
WEED_VERSION=${WEED_VERSION:-v0.0.0-20261109003541-7506e5f91cd6}
out="$root/build/tools"
bin="$out/weed"
mkdir -p "$out"
if [ -x "$bin" ] && [ "$(cat "$bin.version" 2>/dev/null)" = "$WEED_VERSION" ]; then
  exit 0
fi
rm -f "$bin" "$bin.version" "$bin.unavailable"
unavailable() {
  echo "build-weed: SeaweedFS server not built, the S3 tests against it will be skipped: $*" >&2
  echo "$*" >"$bin.unavailable"
  exit 0
}
echo "build-weed: building SeaweedFS $WEED_VERSION (weed) into build/tools (a few minutes the first time)" >&2
start=$(date +%s)
dir=$(cd / && GOWORK=off GOFLAGS= go mod download -json "$WEED_MODULE@$WEED_VERSION" 2>"$out/weed.build.log" |
  sed -n 's/^[[:space:]]*"Dir": "\(.*\)",$/\1/p') || true
[ -n "$dir" ] && [ -d "$dir/weed" ] ||
  unavailable "go mod download $WEED_MODULE@$WEED_VERSION failed: $(tail -n 3 "$out/weed.build.log" | tr '\n' ' ')"
# Its own module, read-only in the module cache: build from there with its go.sum (GOWORK and
# GOFLAGS cleared so nothing of ridgeflank's settings applies).
if ! (cd "$dir" && GOWORK=off GOFLAGS=-mod=readonly go build -trimpath -o "$bin.tmp" ./weed) >>"$out/weed.build.log" 2>&1; then
  rm -f "$bin.tmp"
  unavailable "go build of $WEED_MODULE/weed@$WEED_VERSION failed with $(go version | cut -d' ' -f3): $(tail -n 3 "$out/weed.build.log" | tr '\n' ' ')"
fi
mv "$bin.tmp" "$bin"
echo "$WEED_VERSION" >"$bin.version"
echo "build-weed: built build/tools/weed in $(($(date +%s) - start)) s" >&2
