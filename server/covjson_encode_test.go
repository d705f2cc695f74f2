package server

import (
	"bytes"
	"encoding/json"
	"math"
	"testing"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// The hand-written coverage encoder writes what encoding/json writes (the reference: Go's
// standard library), byte for byte, for every shape of coverage the API answers with.
func TestCoverageEncoding(t *testing.T) {
	ps := evaluate.Parameters
	nan := math.NaN()
	gdh1, _ := thermal.Builtin("gdh1")
	prov := Provenance{Software: "ridgeflank test", Model: evaluate.NewModelRef(gdh1.Params()), Sediment: "shale",
		Dataset: "d", Grids: []evaluate.GridRef{{ID: "gr_1", Role: "seafloor_age", SHA256: "ab", Label: "SYNTHETIC"}},
		Label: "SYNTHETIC", Caution: evaluate.Caution, Note: "a <note> & \"quotes\" ✓"}
	handMade := prov
	handMade.Model = &evaluate.ModelRef{ID: "custom", ParamsSHA256: "x", Params: gdh1.Params()}
	lattice := &geo.Grid{NX: 3, NY: 2, DX: 0.5, DY: 0.5, West: 179.25, North: 10}
	g := func(vals ...float32) *geo.Grid { c := *lattice; c.Data = vals; return &c }
	cases := map[string]func() coverage{
		"point": func() coverage {
			return pointCoverage([]float64{-142.5}, []float64{-29.3}, ps[:1], [][]float64{{360.27291}})
		},
		"point, every parameter, NaN and huge values": func() coverage {
			vals := make([][]float64, len(ps))
			for i := range vals {
				vals[i] = []float64{[]float64{nan, 1e300, -1e-9, 0, math.Inf(1)}[i%5]}
			}
			c := pointCoverage([]float64{179.999}, []float64{-90}, ps, vals)
			c.Provenance, c.Caution = &prov, prov.Caution
			return c
		},
		"multipoint with samples, flags and waypoints": func() coverage {
			c := pointCoverage([]float64{1, 2, 3}, []float64{4, 5, 6}, ps[:2], [][]float64{{1, nan, 3}, {4, 5, 6.123456789}})
			c.Provenance = &handMade
			c.Extra = map[string]any{"distance_km": floats([]float64{0, 1.5, 3})}
			c.Extra["offset_km"] = floats([]float64{0, 0, nan})
			c.Flags = []evaluate.Flag{{Parameter: "residual_depth", Input: "age", Count: 2, Reason: "negative <age>"}}
			c.Waypoints = []evaluate.WaypointAt{{Name: "WP \"1\"", Lon: 1, Lat: 4}, {Name: "", Lon: 3, Lat: 6, DistanceKm: 3}}
			return c
		},
		"empty multipoint": func() coverage {
			return pointCoverage([]float64{}, []float64{}, ps[:1], [][]float64{{}})
		},
		"grid across the antimeridian with statistics and resolution": func() coverage {
			c := gridCoverage(lattice, ps[:2], []*geo.Grid{g(1, 2, 3, 4, 5, float32(nan)), g(0.1, 0.2, 0.3, 0.4, 0.5, 0.6)})
			c.Stats = map[string]unitStats{"residual_depth": newUnitStats(geo.Stats{Count: 5, Mean: 3, Median: 2.5}, ps[0])}
			c.Repairs = []string{"ring closed"}
			c.Resolution = &resolutionUsed{XDeg: 0.5, YDeg: 0.5, Note: "coarser than asked"}
			c.Provenance = &prov
			return c
		},
		"nil maps and axis of other values": func() coverage {
			c := coverage{Type: "Coverage", Domain: covDomain{Type: "Domain", DomainType: "Point",
				Axes:        map[string]covAxis{"t": {Values: []string{"2026-12-03"}}, "x": {Values: []jsonFloat(nil)}, "y": {}},
				Referencing: []covReferencing{{Coordinates: []string{"x"}, System: covRefSystem{Type: "T", ID: "i"}}}}}
			return c
		},
	}
	for name, mk := range cases {
		t.Run(name, func(t *testing.T) {
			c := mk()
			var want bytes.Buffer
			enc := json.NewEncoder(&want)
			enc.SetEscapeHTML(false)
			if err := enc.Encode(c); err != nil {
				t.Fatal(err)
			}
			for range 2 { // the second time from the caches
				got, err := c.appendJSON(nil)
				if err != nil {
					t.Fatal(err)
				}
				if !bytes.Equal(got, want.Bytes()) {
					t.Fatalf("differs from encoding/json:\n got %s\nwant %s", got, want.Bytes())
				}
			}
		})
	}
}
