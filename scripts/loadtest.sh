#!/usr/bin/env bash
# loadtest.sh: the load test (`make loadtest`). Serves bin/ridgeflank on 127.0.0.1 in turn on the
# embedded store (a temporary data directory) and on PostGIS (a fresh database cloned from the
# test template of scripts/test-db.sh, dropped afterwards), loads each with cmd/ridgeflank-load
# and writes build/load/load.json and build/load/load.md. Arguments go to the generator
# (e.g. -duration 20s -workers 4; see `go run ./cmd/ridgeflank-load -h`).
# LOAD_STORES=sqlite skips PostGIS. Exit status: the generator's (1 on unintended answers).
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
export PATH="/usr/local/go/bin:$PATH"
bin="${BIN:-bin/ridgeflank}"
stores="${LOAD_STORES:-sqlite,postgis}"
[ -x "$bin" ] || { echo "loadtest: $bin is missing (make build)" >&2; exit 2; }
mkdir -p build/load
go build -o build/load/ridgeflank-load ./cmd/ridgeflank-load

args=(-bin "$bin" -stores "$stores")
if [[ $stores == *postgis* ]]; then
	set -a
	eval "$(scripts/test-db.sh)"
	set +a
	base="$RIDGEFLANK_TEST_DATABASE_URL"
	db="ridgeflank_load_$$"
	# The database part of a postgres:// URL replaced by $db.
	rest="${base#*://}"
	query=""
	[[ $rest == *\?* ]] && query="?${rest#*\?}" && rest="${rest%%\?*}"
	url="${base%%://*}://${rest%%/*}/${db}${query}"
	# Cloning fails while another session uses the template (a test package cloning it): retry.
	for i in 1 2 3 4 5 6 7 8 9 10; do
		psql "$base" -Atqc "CREATE DATABASE ${db} TEMPLATE ridgeflank_template" >/dev/null 2>&1 && break
		[ "$i" = 10 ] && { echo "loadtest: could not create database ${db} from ridgeflank_template" >&2; exit 1; }
		sleep 1
	done
	trap 'psql "$base" -Atqc "DROP DATABASE IF EXISTS ${db} WITH (FORCE)" >/dev/null || true' EXIT
	args+=(-database-url "$url")
fi
build/load/ridgeflank-load "${args[@]}" "$@"
