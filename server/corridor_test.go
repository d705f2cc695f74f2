package server

import (
	"encoding/csv"
	"math"
	"strings"
	"testing"

	"ridgeflank/geo/gdal"
)

// The corridor query (OGC API–EDR 1.1, corridor): advertised, its centre line answers what the
// trajectory query answers at the same samples, its across-track samples lie at their offset
// from the centre line, and it works across the antimeridian.
func TestCorridorQuery(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	ds := "/api/collections/" + e.dataset
	line := esc("LINESTRING(-146 -32,-144 -30,-141 -30.5)")
	params := "&parameter-name=seafloor_age,predicted_depth,residual_depth&spacing-km=20"

	t.Run("advertised", func(t *testing.T) {
		c := e.get(ds).json(t)
		q, ok := c["data_queries"].(map[string]any)["corridor"].(map[string]any)
		if !ok {
			t.Fatalf("data_queries lack corridor: %v", c["data_queries"])
		}
		v := q["link"].(map[string]any)["variables"].(map[string]any)
		if v["query_type"] != "corridor" || !strings.Contains(strings.Join(toStrings(v["width_units"]), ","), "km") {
			t.Errorf("corridor variables %v", v)
		}
	})

	t.Run("centre line equals the trajectory", func(t *testing.T) {
		tr := e.get(ds + "/trajectory?coords=" + line + params + "&f=csv")
		e.want(tr, 200)
		co := e.get(ds + "/corridor?coords=" + line + "&corridor-width=30&width-units=km" + params + "&f=csv")
		e.want(co, 200)
		trRows, coRows := csvRows(t, tr.Body), csvRows(t, co.Body)
		// The values' columns, then what the file says about itself (dataset, model, …).
		if got := strings.Join(coRows[0][:8], ","); got != "longitude,latitude,distance_km,offset_km,seafloor_age_ma,predicted_depth_m,residual_depth_m,dataset" {
			t.Fatalf("corridor header %s", got)
		}
		var centre [][]string
		offsets := map[string]int{}
		for _, r := range coRows[1:] {
			offsets[r[3]]++
			if r[3] == "0" {
				centre = append(centre, append(r[:3:3], r[4:7]...))
			}
		}
		// 30 km wide at 20 km spacing: ⌈15/20⌉ = 1 sample each side, at ±15 km.
		if len(offsets) != 3 || offsets["-15"] != len(centre) || offsets["15"] != len(centre) {
			t.Errorf("offsets %v", offsets)
		}
		if len(centre) != len(trRows)-1 {
			t.Fatalf("%d centre samples, the trajectory has %d", len(centre), len(trRows)-1)
		}
		for i, r := range trRows[1:] {
			if got, want := strings.Join(centre[i], ","), strings.Join(r[:6], ","); got != want {
				t.Errorf("sample %d: corridor centre %s, trajectory %s", i, got, want)
			}
		}
	})

	t.Run("offsets are geodesic distances", func(t *testing.T) {
		m := e.get(ds + "/corridor?coords=" + line + "&corridor-width=10&width-units=nmi" + params + "&f=GeoJSON").json(t)
		feats := m["features"].([]any)
		g := gdal.WGS84()
		across := 0
		for _, f := range feats {
			if num(t, f.(map[string]any)["properties"].(map[string]any)["distance_km"]) == 0 {
				across++
			}
		}
		// 10 nmi = 18.52 km (1 nmi = 1852 m, BIPM SI brochure 9th ed. Table 8): half 9.26 km at
		// 20 km spacing is one sample each side.
		if across != 3 {
			t.Fatalf("%d samples across at the start, want 3", across)
		}
		for i := 0; i+across <= len(feats); i += across {
			centre := feats[i+1].(map[string]any)
			cc := centre["geometry"].(map[string]any)["coordinates"].([]any)
			for k := 0; k < across; k++ {
				f := feats[i+k].(map[string]any)
				c := f["geometry"].(map[string]any)["coordinates"].([]any)
				off := num(t, f["properties"].(map[string]any)["offset_km"])
				d, _, _ := g.Inverse(num(t, cc[1]), num(t, cc[0]), num(t, c[1]), num(t, c[0]))
				// Coordinates are answered to 7 significant digits: 1e-4° at 144° W, ±5e-5° per
				// coordinate, up to about 8 m between two points at 30° S; offsets to 1 m. ± 15 m.
				if math.Abs(d/1000-math.Abs(off)) > 0.015 {
					t.Errorf("sample %d: %g km from its centre sample, offset %g km", i+k, d/1000, off)
				}
			}
		}
		if m["caution"] == nil {
			t.Error("a corridor with predicted depths carries no caution")
		}
	})

	t.Run("coverage", func(t *testing.T) {
		m := e.get(ds + "/corridor?coords=" + line + "&corridor-width=5000&width-units=m" + params).json(t)
		s := m["ridgeflank:samples"].(map[string]any)
		if len(s["offset_km"].([]any)) != len(s["distance_km"].([]any)) || m["domain"].(map[string]any)["domainType"] != "MultiPoint" {
			t.Errorf("coverage samples %v", s)
		}
	})

	t.Run("bad input", func(t *testing.T) {
		q := ds + "/corridor?coords=" + line
		wantProblem(t, e.get(q+"&width-units=km"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(q+"&corridor-width=10"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(q+"&corridor-width=10&width-units=furlong"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(q+"&corridor-width=-1&width-units=km"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(q+"&corridor-width=2000&width-units=km"), 400, CodeInvalidParameter)
		m := wantProblem(t, e.get(q+"&corridor-width=10&width-units=km&corridor-height=100&height-units=m"), 400, CodeInvalidParameter)
		if m["parameter"] != "corridor-height" {
			t.Errorf("parameter %v", m["parameter"])
		}
		wantProblem(t, e.get(ds+"/corridor?coords="+esc("POINT(-146 -32)")+"&corridor-width=10&width-units=km"), 400, CodeInvalidCoords)
		// 1000 km wide at 0.1 km spacing: 10 001 across, over 100 000 samples in all.
		lim := wantProblem(t, e.get(q+"&corridor-width=1000&width-units=km&spacing-km=0.1"), 422, CodeLimitExceeded)
		if lim["limit_name"] != "max_track_samples" {
			t.Errorf("limit %v", lim)
		}
	})
}

// Across the antimeridian on the global grid whose age is |latitude| (installGlobe): every
// sample's age is its own latitude (bilinear between 1° cell centres is exact for a linear
// field), and longitudes are answered in −180..180 near ±180.
func TestCorridorAntimeridian(t *testing.T) {
	e := newEnv(t, "sqlite", Config{})
	installGlobe(t, e)
	r := e.get("/api/collections/globe/corridor?coords=" + esc("LINESTRING(179.5 10,-179.5 10.4)") +
		"&corridor-width=100&width-units=km&spacing-km=25&parameter-name=seafloor_age&f=GeoJSON")
	e.want(r, 200)
	feats := r.json(t)["features"].([]any)
	lengthM, _, _ := gdal.WGS84().Inverse(10, 179.5, 10.4, -179.5)
	if along := int(math.Ceil(lengthM/25000)) + 1; len(feats) != along*5 {
		t.Errorf("%d samples, want %d along (%.1f km at 25 km) × 5 across (±50 km at 25 km)", len(feats), along, lengthM/1000)
	}
	for i, f := range feats {
		c := f.(map[string]any)["geometry"].(map[string]any)["coordinates"].([]any)
		lon, lat := num(t, c[0]), num(t, c[1])
		age := num(t, f.(map[string]any)["properties"].(map[string]any)["seafloor_age_ma"])
		if math.Abs(lon) < 179 || math.Abs(lon) > 180 {
			t.Errorf("sample %d at longitude %g", i, lon)
		}
		if math.Abs(age-lat) > 1e-4 {
			t.Errorf("sample %d: age %g at latitude %g", i, age, lat)
		}
	}
}

func csvRows(t *testing.T, body []byte) [][]string {
	t.Helper()
	s := string(body)
	if strings.HasPrefix(s, "#") {
		s = s[strings.Index(s, "\n")+1:]
	}
	rows, err := csv.NewReader(strings.NewReader(s)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return rows
}

func toStrings(v any) []string {
	var out []string
	for _, x := range v.([]any) {
		out = append(out, x.(string))
	}
	return out
}
