#!/usr/bin/env bash
# bench-scale.sh: measure ridgeflank at global grid sizes (`make bench-scale`).
#
# SCALE_SIZES (default 1m,15s; any of 1m, 30s, 15s) picks the sizes. For each size it
#   1. makes the SYNTHETIC grids with GDAL's tools (scripts/scale-grids.sh; reused when present),
#   2. imports age, depth (positive down) and sediment into the embedded store build/scale/store
#      with `ridgeflank import` under /usr/bin/time -v, and times `gdal_translate -of COG` of the
#      age grid (the peer: the same COG options as the import's) the same way; imports already done
#      are kept (their timing files stay, dated in the report),
# then installs the demo basin once, and runs scripts/scalebench, which serves the store, drives
# the HTTP API and writes build/scale/report.md. Everything lives under build/scale/ (never
# committed); `rm -rf build/scale` starts afresh.
set -uo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
cd "$root"
export PATH="/usr/local/go/bin:$PATH"
out="${SCALE_DIR:-$root/build/scale}"
store="$out/store"
bin="${BIN:-bin/ridgeflank}"
sizes="${SCALE_SIZES:-1m,15s}"
IFS=',' read -r -a list <<<"$sizes"

[ -x "$bin" ] || { echo "bench-scale: $bin is missing (make build)" >&2; exit 2; }
[ -x /usr/bin/time ] || { echo "bench-scale: /usr/bin/time is missing (apt-get install time)" >&2; exit 2; }
mkdir -p "$out/tmp" "$store"

scripts/scale-grids.sh "${list[@]}" || exit $?

declare -A kind=([age]=age [depth]=depth [sediment]=sediment_thickness)
declare -A extra=([age]="--units Ma" [depth]="--units m --vertical depth" [sediment]="--units m")
for size in "${list[@]}"; do
	d="$out/$size"
	for g in age depth sediment; do
		[ -s "$d/$g.tif" ] || { echo "bench-scale: no $size $g grid (made with SCALE_GRIDS?), not imported"; continue; }
		[ -s "$d/import-$g.id" ] && continue
		echo "bench-scale: importing the $size $g grid (timed)"
		# shellcheck disable=SC2086
		TMPDIR="$out/tmp" /usr/bin/time -v -o "$d/time-import-$g.txt" \
			"$bin" import --data "$store" --kind "${kind[$g]}" ${extra[$g]} --name "SYNTHETIC global $size $g" \
			--licence "SYNTHETIC, for measuring only" "$d/$g.tif" >"$d/import-$g.id.part" 2>"$d/import-$g.log"
		if [ -s "$d/import-$g.id.part" ]; then mv "$d/import-$g.id.part" "$d/import-$g.id"; else
			echo "bench-scale: the $size $g import failed (see $d/import-$g.log)"; tail -3 "$d/import-$g.log"; fi
	done
	if [ -s "$d/age.tif" ] && [ ! -s "$d/time-cog-age.txt" ]; then
		echo "bench-scale: gdal_translate -of COG of the $size age grid (the peer, timed)"
		/usr/bin/time -v -o "$d/time-cog-age.txt" gdal_translate -q -of COG -co COMPRESS=DEFLATE -co PREDICTOR=YES \
			-co BLOCKSIZE=512 -co BIGTIFF=IF_SAFER -co NUM_THREADS=ALL_CPUS -co RESAMPLING=AVERAGE -co OVERVIEWS=AUTO \
			"$d/age.tif" "$out/tmp/peer-$size.tif"
		rm -f "$out/tmp/peer-$size.tif"
	fi
done

if [ ! -e "$store/.demo-installed" ]; then
	"$bin" demo --install --data "$store" >/dev/null && touch "$store/.demo-installed"
fi

if [ "${SCALE_IMPORT_ONLY:-0}" = 1 ]; then echo "bench-scale: SCALE_IMPORT_ONLY=1: grids made and imported, serve run skipped"; exit 0; fi
go run ./scripts/scalebench -bin "$bin" -data "$store" -dir "$out" -sizes "$sizes" "$@"
