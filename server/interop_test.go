package server

import (
	"encoding/json"
	"strings"
	"testing"
)

// TestCRSAndBBox: crs names OGC CRS84 or is refused with a problem naming crs (OGC API – EDR
// 1.1 §8.2.1: the crs values a collection accepts are those its metadata lists); bbox
// (west,south,east,north; west > east crosses the antimeridian, OGC API – Common Part 2 bbox
// rule) stands for coords in area and statistics queries and answers the same cells.
func TestCRSAndBBox(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	installGlobe(t, e)
	ds := "/api/collections/globe"
	pt := "/position?coords=" + esc("POINT(10 20.5)") + "&parameter-name=seafloor_age"

	t.Run("crs", func(t *testing.T) {
		for _, c := range []struct {
			crs  string
			want int
		}{
			{"nonsense", 400},
			{"EPSG:4326", 400},
			{"http://www.opengis.net/def/crs/EPSG/0/4326", 400},
			{"http://www.opengis.net/def/crs/OGC/1.3/CRS84", 200},
			{"https://www.opengis.net/def/crs/OGC/1.3/CRS84", 200},
			{"OGC:CRS84", 200},
			{"[OGC:CRS84]", 200},
			{"urn:ogc:def:crs:OGC:1.3:CRS84", 200},
			{"CRS84", 200},
		} {
			for _, q := range []string{pt, "/area?bbox=0,0,2,2&parameter-name=seafloor_age", "/statistics?bbox=0,0,2,2&parameter-name=seafloor_age"} {
				r := e.get(ds + q + "&crs=" + esc(c.crs))
				if c.want == 200 {
					e.want(r, 200)
					if got := r.Header.Get("Content-Crs"); got != "<"+CRS84+">" {
						t.Errorf("crs=%s: Content-Crs %q", c.crs, got)
					}
					continue
				}
				p := wantProblem(t, r, 400, CodeInvalidParameter)
				if p["parameter"] != "crs" || !strings.Contains(p["detail"].(string), "CRS84") {
					t.Errorf("crs=%s: problem does not name crs: %s", c.crs, r.Body)
				}
			}
		}
	})

	t.Run("bbox answers the coords box", func(t *testing.T) {
		for _, c := range []struct{ name, bbox, coords string }{
			{"plain", "10,-5,14,3", "POLYGON((10 -5,14 -5,14 3,10 3,10 -5))"},
			{"antimeridian", "170,-10,-170,10", "MULTIPOLYGON(((170 -10,180 -10,180 10,170 10,170 -10)),((-180 -10,-170 -10,-170 10,-180 10,-180 -10)))"},
		} {
			t.Run(c.name, func(t *testing.T) {
				byBox := e.get(ds + "/area?bbox=" + esc(c.bbox) + "&parameter-name=seafloor_age&f=csv")
				byWKT := e.get(ds + "/area?coords=" + esc(c.coords) + "&parameter-name=seafloor_age&f=csv")
				e.want(byBox, 200)
				e.want(byWKT, 200)
				if string(byBox.Body) != string(byWKT.Body) {
					t.Errorf("bbox=%s and its polygon answer differently:\n%s\n--\n%s", c.bbox, trunc(byBox.Body), trunc(byWKT.Body))
				}
				sb := e.get(ds + "/statistics?bbox=" + esc(c.bbox) + "&parameter-name=seafloor_age")
				sw := e.get(ds + "/statistics?coords=" + esc(c.coords) + "&parameter-name=seafloor_age")
				e.want(sb, 200)
				e.want(sw, 200)
				a, b := sb.json(t), sw.json(t)
				if a["statistics"] == nil || !jsonEqual(a["statistics"], b["statistics"]) || a["cells"] != b["cells"] {
					t.Errorf("statistics by bbox %v, by polygon %v", a, b)
				}
			})
		}
		for _, bad := range []string{"1,2,3", "10,5,20,-5", "0,0,0,5", "10,0,200,5", "a,0,1,1", "0,0,1,1,0,1"} {
			p := wantProblem(t, e.get(ds+"/area?bbox="+esc(bad)+"&parameter-name=seafloor_age"), 400, CodeInvalidParameter)
			if p["parameter"] != "bbox" {
				t.Errorf("bbox=%s: problem names %v", bad, p["parameter"])
			}
		}
		wantProblem(t, e.get(ds+"/area?bbox=0,0,1,1&coords="+esc("POLYGON((0 0,1 0,1 1,0 0))")), 400, CodeInvalidParameter)
	})
}

// jsonEqual compares two decoded JSON values.
func jsonEqual(a, b any) bool {
	ja, _ := json.Marshal(a)
	jb, _ := json.Marshal(b)
	return string(ja) == string(jb)
}
