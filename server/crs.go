package server

import (
	"math"
	"net/http"
	"strconv"
	"strings"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/encoding/wkt"
)

// CRS84 is the one coordinate reference system of the EDR collections: WGS 84 longitude,
// latitude in degrees, longitude first (OGC CRS84).
const CRS84 = "http://www.opengis.net/def/crs/OGC/1.3/CRS84"

// crs84Names are the spellings of OGC CRS84 the crs parameter accepts (compared without case):
// the OGC URI (version 1.3 and the unversioned 0, http or https), the URN, and the CURIE with
// or without the brackets of a safe CURIE.
var crs84Names = map[string]bool{
	"crs84": true, "ogc:crs84": true, "[ogc:crs84]": true,
	"http://www.opengis.net/def/crs/ogc/1.3/crs84": true, "https://www.opengis.net/def/crs/ogc/1.3/crs84": true,
	"http://www.opengis.net/def/crs/ogc/0/crs84": true, "https://www.opengis.net/def/crs/ogc/0/crs84": true,
	"urn:ogc:def:crs:ogc:1.3:crs84": true, "urn:ogc:def:crs:ogc::crs84": true,
}

// checkCRS answers 400 naming crs for a crs= the collections do not serve; the answers it lets
// through carry Content-Crs (OGC API – Features Part 2 header) naming CRS84.
func (s *server) checkCRS(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if v, ok := queryOf(r)["crs"]; ok {
			c := strings.ToLower(strings.TrimSpace(strings.Join(v, ",")))
			if !crs84Names[c] {
				msg := "crs=%q: this collection answers in OGC CRS84 only (" + CRS84 + ", longitude first); omit crs or give that URI"
				if strings.Contains(c, "4326") {
					msg += "; EPSG:4326 orders latitude first, so coordinates written longitude first would be read transposed"
				}
				writeProblem(w, r, problem(CodeInvalidParameter, msg, strings.Join(v, ",")).withParam("crs"))
				return
			}
		}
		w.Header().Set("Content-Crs", "<"+CRS84+">")
		next.ServeHTTP(w, r)
	})
}

// bboxArea reads bbox=west,south,east,north (degrees, CRS84) as the area of an area or
// statistics query. West greater than east crosses the antimeridian (OGC API – Common/EDR
// bbox rule), answered as the two boxes either side of it. It returns the area as WKT.
func bboxArea(v string) (string, error) {
	parts := strings.Split(v, ",")
	if len(parts) != 4 {
		return "", problem(CodeInvalidParameter, "bbox=%q: want west,south,east,north in degrees (2D only)", v).withParam("bbox")
	}
	var n [4]float64
	for i, p := range parts {
		f, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil || math.IsNaN(f) || math.IsInf(f, 0) {
			return "", problem(CodeInvalidParameter, "bbox=%q: %q is not a number", v, p).withParam("bbox")
		}
		n[i] = f
	}
	w, south, e, north := n[0], n[1], n[2], n[3]
	if w < -180 || w > 180 || e < -180 || e > 180 {
		return "", problem(CodeInvalidParameter, "bbox=%q: longitudes must lie within −180..180 (west > east crosses the antimeridian)", v).withParam("bbox")
	}
	if !(south < north) || south < -90 || north > 90 {
		return "", problem(CodeInvalidParameter, "bbox=%q: need −90 ≤ south < north ≤ 90", v).withParam("bbox")
	}
	if w == e {
		return "", problem(CodeInvalidParameter, "bbox=%q: west equals east, the box has no width", v).withParam("bbox")
	}
	box := func(w, e float64) orb.Polygon {
		return orb.Polygon{{{w, south}, {e, south}, {e, north}, {w, north}, {w, south}}}
	}
	if w < e {
		return wkt.MarshalString(box(w, e)), nil
	}
	return wkt.MarshalString(orb.MultiPolygon{box(w, 180), box(-180, e)}), nil
}
