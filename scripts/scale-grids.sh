#!/usr/bin/env bash
# scale-grids.sh SIZE [SIZE...]: make the SYNTHETIC global grids that `make bench-scale` measures
# ridgeflank with, using GDAL's own command-line tools only.
#
# SIZE is 1m (21600 × 10800 cells of 1 arc-minute), 30s (43200 × 21600) or 15s (86400 × 43200);
# every grid is Float32, global (-180..180, -90..90, cell-centre registration), tiled GeoTIFF with
# DEFLATE, labelled SYNTHETIC in its metadata. For each size, in build/scale/SIZE/ (kept and reused
# when present; never committed):
#
#   age.tif       seafloor age, Ma, 0–180: grows with distance from two invented sinuous spreading
#                 ridges (half rates 35 and 60 km/Myr, capped at 180 Ma); NaN on invented continents
#                 and polar caps.
#   depth.tif     observed bathymetry as DEPTH, metres, POSITIVE DOWN: 2600 + 350·√age (the
#                 half-space cooling curve's square-root-of-age form with round coefficients near
#                 the Parsons & Sclater 1977 fit, from memory), plus ±60 m smooth noise and a few
#                 seamounts up to 3 km tall (which make the depth smaller). NaN where age is NaN.
#   sediment.tif  sediment thickness, metres: 30 + 5·age (thickening with age; invented).
#
# The fields are made from small seed rasters (ESRI ASCII grids written by awk: age at 0.5°, noise
# and seamounts at 0.125°), brought to full size by gdalwarp (cubic B-spline, which never
# overshoots, so ages stay ≥ 0), and combined at full size by VRT derived bands (GDAL's built-in
# sqrt pixel function and sum of linearly scaled sources) materialised with gdal_translate.
#
# The disk needed is checked first (`df`), and the script refuses with a message if too little is
# free. Nothing here describes a real ocean: the grids are for measuring the software only.
set -euo pipefail

root="$(cd "$(dirname "$0")/.." && pwd)"
out="${SCALE_DIR:-$root/build/scale}"
co=(-co TILED=YES -co COMPRESS=DEFLATE -co PREDICTOR=3 -co BIGTIFF=YES -co BLOCKXSIZE=512 -co BLOCKYSIZE=512)
mo=(-mo "SYNTHETIC=yes: invented fields of a fictional ocean for measuring ridgeflank; not a real place"
	-mo "SOURCE=ridgeflank scripts/scale-grids.sh (GDAL tools)")
export GDAL_CACHEMAX="${GDAL_CACHEMAX:-512}"
# SCALE_GRIDS picks which grids to make (age is always made: the others derive from it).
grids="age ${SCALE_GRIDS:-depth sediment}"

die() { echo "scale-grids: $*" >&2; exit 2; }

for t in gdalwarp gdal_translate gdalinfo awk df; do
	command -v "$t" >/dev/null || die "$t is not installed (Debian: apt-get install gdal-bin gawk)"
done
[ $# -gt 0 ] || die "usage: scale-grids.sh SIZE... (1m, 30s, 15s)"

dims() { # SIZE -> "NX NY"
	case "$1" in
	1m) echo "21600 10800" ;;
	30s) echo "43200 21600" ;;
	15s) echo "86400 43200" ;;
	*) die "unknown size \"$1\": want 1m, 30s or 15s" ;;
	esac
}

# need_gb SIZE: free space (GB) wanted before making SIZE's grids: the three compressed grids
# (measured at 1m: 72 MB age, 336 MB depth, 77 MB sediment; the estimate takes 0.26 GB each, scaling
# with the cell count) and their imports, the store's
# copies, the comparison COG and the import's staging file, with a 25% margin.
need_gb() {
	local n
	read -r nx ny <<<"$(dims "$1")"
	n=$((nx * ny))
	# 0.26 GB per 233 M cells per grid; ×3 grids ×2 (files + store) + 2 (peer COG + staging) = 8 grid copies.
	echo $(((n / 1000000 * 26 * 8 * 125 / 100 / 233 + 99) / 100))
}

mkseeds() { # seeds shared by every size
	local s="$out/seed"
	mkdir -p "$s"
	if [ ! -s "$s/age.asc" ]; then
		awk -v nx=720 -v ny=360 -v c=0.5 -f /dev/stdin >"$s/age.asc.part" <<'AWK'
function ellipse(lon, lat, x0, y0, a, b) { return ((lon - x0) / a) ^ 2 + ((lat - y0) / b) ^ 2 < 1 }
function dlon(a, b,   d) { d = a - b; if (d < 0) d = -d; if (d > 180) d = 360 - d; return d }
BEGIN {
	pi = atan2(0, -1)
	printf "ncols %d\nnrows %d\nxllcorner -180\nyllcorner -90\ncellsize %g\nNODATA_value -9999\n", nx, ny, c
	for (j = 0; j < ny; j++) {
		lat = 90 - (j + 0.5) * c
		kmdeg = 111.2 * cos(lat * pi / 180)
		ra = -25 + 10 * sin(lat * pi / 40) + 4 * sin(lat * pi / 13)   # invented ridge A (35 km/Myr)
		rb = 150 + 15 * sin(lat * pi / 50) + 3 * sin(lat * pi / 9)    # invented ridge B (60 km/Myr)
		line = ""
		for (i = 0; i < nx; i++) {
			lon = -180 + (i + 0.5) * c
			if (lat > 82 || lat < -75 || ellipse(lon, lat, 20, 10, 25, 35) || ellipse(lon, lat, -90, 35, 22, 25) ||
			    ellipse(lon, lat, 100, 45, 35, 20) || ellipse(lon, lat, -62, -20, 12, 18) || ellipse(lon, lat, 125, -28, 18, 12)) {
				v = -9999
			} else {
				a = dlon(lon, ra) * kmdeg / 35
				b = dlon(lon, rb) * kmdeg / 60
				v = a < b ? a : b
				if (v > 180) v = 180
			}
			line = line sprintf(i ? " %.3f" : "%.3f", v)
		}
		print line
	}
}
AWK
		mv "$s/age.asc.part" "$s/age.asc"
	fi
	if [ ! -s "$s/relief.asc" ]; then
		awk -v nx=2880 -v ny=1440 -v c=0.125 -f /dev/stdin >"$s/relief.asc.part" <<'AWK'
BEGIN {
	srand(20261202)
	ns = 24   # invented seamounts: position, height (m), width (degrees)
	for (k = 0; k < ns; k++) {
		sx[k] = -180 + 360 * rand(); sy[k] = -60 + 120 * rand()
		sh[k] = 1000 + 2000 * rand(); sw[k] = 0.3 + 0.6 * rand()
	}
	printf "ncols %d\nnrows %d\nxllcorner -180\nyllcorner -90\ncellsize %g\n", nx, ny, c
	for (j = 0; j < ny; j++) {
		lat = 90 - (j + 0.5) * c
		line = ""
		for (i = 0; i < nx; i++) {
			lon = -180 + (i + 0.5) * c
			v = (rand() - 0.5) * 120
			for (k = 0; k < ns; k++) {
				dx = lon - sx[k]; dy = lat - sy[k]
				if (dx < 4 && dx > -4 && dy < 4 && dy > -4)
					v -= sh[k] * exp(-(dx * dx + dy * dy) / (2 * sw[k] * sw[k]))
			}
			line = line sprintf(i ? " %.1f" : "%.1f", v)
		}
		print line
	}
}
AWK
		mv "$s/relief.asc.part" "$s/relief.asc"
	fi
}

# derived NX NY OUT.vrt FUNC SOURCES...: a VRT derived band (FUNC a GDAL built-in pixel function;
# "" for a plain band, as sum and mul answer nothing for a single source in GDAL 3.6)
# over sources given as "FILE[:RATIO:OFFSET]" (a linearly scaled ComplexSource).
derived() {
	local nx=$1 ny=$2 f=$3 fn=$4
	shift 4
	{
		echo "<VRTDataset rasterXSize=\"$nx\" rasterYSize=\"$ny\">"
		echo "  <SRS>EPSG:4326</SRS>"
		echo "  <GeoTransform>-180, $(awk -v n="$nx" 'BEGIN{printf "%.17g", 360/n}'), 0, 90, 0, $(awk -v n="$ny" 'BEGIN{printf "%.17g", -180/n}')</GeoTransform>"
		if [ -n "$fn" ]; then
			echo "  <VRTRasterBand dataType=\"Float32\" band=\"1\" subClass=\"VRTDerivedRasterBand\" blockXSize=\"512\" blockYSize=\"512\">"
			echo "    <PixelFunctionType>$fn</PixelFunctionType>"
		else
			echo "  <VRTRasterBand dataType=\"Float32\" band=\"1\" blockXSize=\"512\" blockYSize=\"512\">"
		fi
		echo "    <NoDataValue>nan</NoDataValue>"
		local src file ratio offset
		for src in "$@"; do
			IFS=: read -r file ratio offset <<<"$src"
			echo "    <ComplexSource><SourceFilename relativeToVRT=\"1\">$file</SourceFilename><SourceBand>1</SourceBand>"
			echo "      <ScaleOffset>${offset:-0}</ScaleOffset><ScaleRatio>${ratio:-1}</ScaleRatio></ComplexSource>"
		done
		echo "  </VRTRasterBand>"
		echo "</VRTDataset>"
	} >"$f"
}

make_size() {
	local size=$1 d="$out/$1" nx ny
	read -r nx ny <<<"$(dims "$size")"
	mkdir -p "$d"
	local g missing=0
	for g in $grids; do [ -s "$d/$g.tif" ] || missing=1; done
	if [ $missing = 0 ]; then
		echo "scale-grids: $size grids present in $d (reused)"
		return
	fi
	local need free
	need=$(need_gb "$size")
	free=$(df -P -B1G "$out" | awk 'NR==2 {print $4}')
	if [ "$free" -lt "$need" ]; then
		die "the $size grids and their imports need about $need GB free on $(df -P "$out" | awk 'NR==2 {print $6}'), but only $free GB are free; free some space or choose a smaller SCALE_SIZES"
	fi
	echo "scale-grids: making the $size grids ($nx × $ny, SYNTHETIC) in $d ($free GB free, about $need GB needed with imports)"
	local warp=(gdalwarp -q -overwrite -s_srs EPSG:4326 -t_srs EPSG:4326 -te -180 -90 180 90 -ts "$nx" "$ny"
		-r cubicspline -ot Float32 -wm 512 -multi -wo NUM_THREADS=ALL_CPUS)
	if [ ! -s "$d/age.tif" ]; then
		# gdalwarp has no -mo: warp into a VRT, then gdal_translate writes it with the metadata.
		"${warp[@]}" -of VRT -srcnodata -9999 -dstnodata nan "$out/seed/age.asc" "$d/age_warp.vrt"
		gdal_translate -q "${co[@]}" "${mo[@]}" -mo "QUANTITY=seafloor age" -mo "UNITS=Ma" "$d/age_warp.vrt" "$d/age.part.tif"
		mv "$d/age.part.tif" "$d/age.tif"
	fi
	# The relief (noise + seamounts) is never stored: a warped VRT computed while depth.tif is written.
	"${warp[@]}" -of VRT "$out/seed/relief.asc" "$d/relief.vrt"
	derived "$nx" "$ny" "$d/sqrt_age.vrt" sqrt "age.tif"
	derived "$nx" "$ny" "$d/depth.vrt" sum "sqrt_age.vrt:350:2600" "relief.vrt"
	derived "$nx" "$ny" "$d/sediment.vrt" "" "age.tif:5:30" # one scaled source (sum needs two)
	if [[ " $grids " == *" depth "* ]] && [ ! -s "$d/depth.tif" ]; then
		gdal_translate -q "${co[@]}" "${mo[@]}" -mo "QUANTITY=observed bathymetry as depth, positive down" -mo "UNITS=m" \
			"$d/depth.vrt" "$d/depth.part.tif"
		mv "$d/depth.part.tif" "$d/depth.tif"
	fi
	if [[ " $grids " == *" sediment "* ]] && [ ! -s "$d/sediment.tif" ]; then
		gdal_translate -q "${co[@]}" "${mo[@]}" -mo "QUANTITY=sediment thickness" -mo "UNITS=m" \
			"$d/sediment.vrt" "$d/sediment.part.tif"
		mv "$d/sediment.part.tif" "$d/sediment.tif"
	fi
	du -sh "$d"/*.tif
}

mkdir -p "$out"
for size in "$@"; do dims "$size" >/dev/null; done
mkseeds
for size in "$@"; do make_size "$size"; done
