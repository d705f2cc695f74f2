#!/usr/bin/env bash
# build-weed.sh: builds the SeaweedFS server (weed, Apache-2.0) that the object-store tests run
# as a real S3-compatible server, from its source on the Go module proxy.
# Nothing is added to ridgeflank's go.mod: the source is fetched with `go mod download` and built
# as its own main module, with its own go.mod and go.sum (its replace directives make
# `go install module@version` refuse it). Skipped when this version is already built.
# Where it cannot be built, the reason goes to build/tools/weed.unavailable (the tests name it
# when they skip) and the script still exits 0, so the other tests run.
# The binary is kept in a cache outside the work tree (RIDGEFLANK_TOOLS_CACHE, default
# $(go env GOPATH)/pkg/ridgeflank-tools), one file per version, so a fresh clone on the same
# machine links to it instead of building again; build/tools/weed is a link to it.
# A first build compiles a few hundred packages: minutes on a 2-core machine (see README).
set -euo pipefail
here=$(cd "$(dirname "$0")" && pwd)
root=$(dirname "$here")
# One pinned version (a pseudo-version: the module publishes no release tags).
WEED_MODULE=github.com/seaweedfs/seaweedfs
WEED_VERSION=${WEED_VERSION:-v0.0.0-20261109003541-7506e5f91cd6}
out="$root/build/tools"
bin="$out/weed"
cache=${RIDGEFLANK_TOOLS_CACHE:-$(go env GOPATH)/pkg/ridgeflank-tools}
cached="$cache/weed-$WEED_VERSION"
mkdir -p "$out" "$cache"
rm -f "$bin.unavailable"
if [ -x "$cached" ]; then
  [ "$(readlink "$bin" 2>/dev/null)" = "$cached" ] || ln -sfn "$cached" "$bin"
  exit 0
fi
rm -f "$bin"
unavailable() {
  echo "build-weed: SeaweedFS server not built, the S3 tests against it will be skipped: $*" >&2
  echo "$*" >"$bin.unavailable"
  exit 0
}
echo "build-weed: building SeaweedFS $WEED_VERSION (weed) into $cache (a few minutes the first time)" >&2
start=$(date +%s)
log="$out/weed.build.log"
json=$(cd / && GOWORK=off GOFLAGS= go mod download -json "$WEED_MODULE@$WEED_VERSION" 2>"$log") || true
dir=$(sed -n 's/^[[:space:]]*"Dir": "\(.*\)",\{0,1\}$/\1/p' <<<"$json")
[ -n "$dir" ] && [ -d "$dir/weed" ] ||
  unavailable "go mod download $WEED_MODULE@$WEED_VERSION failed: $(sed -n 's/^[[:space:]]*"Error": "\(.*\)",\{0,1\}$/\1/p' <<<"$json") $(tail -n 3 "$log" | tr '\n' ' ')"
# Its own module, read-only in the module cache: build from there with its own go.mod and
# go.sum (GOWORK and GOFLAGS set so that nothing of ridgeflank's settings applies).
if ! (cd "$dir" && GOWORK=off GOFLAGS=-mod=readonly go build -trimpath -o "$cached.tmp" ./weed) >>"$log" 2>&1; then
  rm -f "$cached.tmp"
  unavailable "go build of $WEED_MODULE/weed@$WEED_VERSION failed with $(go version | cut -d' ' -f3): $(tail -n 3 "$log" | tr '\n' ' ')"
fi
mv "$cached.tmp" "$cached"
ln -sfn "$cached" "$bin"
echo "build-weed: built $cached in $(($(date +%s) - start)) s" >&2
