package ingest

import (
	"context"
	"math"
	"path/filepath"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// TestReaderFollowsImport: a file read with OpenReader gives the values, kind, sense and
// content id that Import stores for it (read back from the stored COG), with the vertical
// sense forced, declared or detected; too mixed a grid with no declaration is refused. Files
// are written with GDAL (WriteCOG) in km, so the unit conversion is exercised.
func TestReaderFollowsImport(t *testing.T) {
	dir := t.TempDir()
	// 60 × 40 cells, SYNTHETIC bathymetry in km positive up (all negative) and a mixed one.
	mk := func(name string, f func(c, r int) float64) string {
		g := geo.NewGrid(60, 40, -30, 10, 0.25, 0.25, geo.CellCentre)
		for r := range g.NY {
			for c := range g.NX {
				v := float32(f(c, r))
				if (c+r)%13 == 0 {
					v = float32(math.NaN())
				}
				g.Data[r*g.NX+c] = v
			}
		}
		p := filepath.Join(dir, name)
		if err := gdal.WriteCOG(p, g, gdal.Meta{Units: "km"}); err != nil {
			t.Fatal(err)
		}
		return p
	}
	elev := mk("elev-km.tif", func(c, r int) float64 { return -4.2 - 0.01*float64(c) + 0.003*float64(r) })
	mixed := mk("mixed-km.tif", func(c, r int) float64 { return float64(c-30) * 0.1 })

	cases := []struct {
		name      string
		req       Request // Path filled in
		imp       Request // the import that must agree
		wantSense geo.VerticalSense
	}{
		// Detected: 100% negative values read as elevation (geo.SenseOfNegativeFraction).
		{"auto detects elevation", Request{Kind: store.KindDepth, Vertical: "auto"}, Request{Kind: store.KindElevation}, geo.ElevationPositiveUp},
		// Forced: kept although the signs read otherwise, as Import keeps it with a note.
		{"forced depth", Request{Kind: store.KindDepth, Vertical: "depth"}, Request{Kind: store.KindDepth, Vertical: "depth"}, geo.DepthPositiveDown},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			req := c.req
			req.Path = elev
			r, err := OpenReader(context.Background(), req, nil)
			if err != nil {
				t.Fatal(err)
			}
			defer r.Close()
			if r.Sense() != c.wantSense || r.Unit() != "m" {
				t.Fatalf("sense %v unit %q, want %v m", r.Sense(), r.Unit(), c.wantSense)
			}
			h := r.Header()
			got := make([]float32, h.NX*h.NY)
			for row := 0; row < h.NY; row += 7 { // blocks of 7 rows, the last shorter
				n := min(7, h.NY-row)
				if err := r.ReadRows(row, got[row*h.NX:(row+n)*h.NX]); err != nil {
					t.Fatal(err)
				}
			}
			st := openStore(t)
			imp := c.imp
			imp.Path = elev
			res, err := Import(context.Background(), st, imp, nil)
			if err != nil {
				t.Fatal(err)
			}
			if r.ContentID() != res.Grid.ID || r.Kind() != res.Grid.Kind {
				t.Errorf("content id %q kind %s, import stored %q kind %s", r.ContentID(), r.Kind(), res.Grid.ID, res.Grid.Kind)
			}
			path, err := st.Blobs().Path(res.Grid.Path)
			if err != nil {
				t.Fatal(err)
			}
			stored, _, err := gdal.Read(path)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range stored.Data {
				if !(v == got[i] || v != v && got[i] != got[i]) {
					t.Fatalf("cell %d: reader %g, stored %g", i, got[i], v)
				}
			}
		})
	}
	t.Run("mixed signs refused", func(t *testing.T) {
		_, err := OpenReader(context.Background(), Request{Path: mixed, Kind: store.KindDepth, Vertical: "auto"}, nil)
		if f, ok := fault.As(err); !ok || f.Field != "vertical" {
			t.Fatalf("err %v, want a fault about vertical", err)
		}
	})
	t.Run("implausible values refused", func(t *testing.T) {
		// Values of mixed sign read as sediment thickness: the negative ones are refused.
		r, err := OpenReader(context.Background(), Request{Path: mixed, Kind: store.KindSedimentThickness, Units: "km"}, nil)
		if err != nil {
			t.Fatal(err)
		}
		defer r.Close()
		h := r.Header()
		err = r.ReadRows(0, make([]float32, h.NX*h.NY))
		if _, ok := fault.As(err); !ok {
			t.Fatalf("err %v, want a fault for negative sediment thickness", err)
		}
	})
}

// TestPrepareRange: the one-pass check ReadRows makes gives what prepare then Stats.Add give
// (the values afterwards, bit for bit; Min and Max over the finite values), with no-data NaN
// of another bit pattern made the one NaN, a unit factor, a block of no-data only, and
// infinities shown as an extreme of ±Inf (ReadRows then counts them with Stats).
func TestPrepareRange(t *testing.T) {
	payloadNaN := math.Float32frombits(0x7fc00123) // a NaN with a payload, as files may hold
	blocks := [][]float32{
		{3, -2.5, payloadNaN, 7, 0, float32(math.Copysign(0, -1))},
		{payloadNaN, float32(math.NaN())},
		{1, 2, float32(math.Inf(1)), -4},
		{float32(math.Inf(-1)), 5},
		{},
	}
	for _, factor := range []float64{1, 1000, 0.3048} {
		for i, blk := range blocks {
			a := append([]float32(nil), blk...)
			b := append([]float32(nil), blk...)
			prepare(a, factor)
			var st Stats
			st.Add(a)
			lo, hi := prepareRange(b, factor)
			for k := range a {
				if math.Float32bits(a[k]) != math.Float32bits(b[k]) {
					t.Errorf("factor %g block %d cell %d: %x, prepare gives %x", factor, i, k, math.Float32bits(b[k]), math.Float32bits(a[k]))
				}
			}
			switch {
			case st.Inf > 0:
				if !math.IsInf(float64(hi), 1) && !math.IsInf(float64(lo), -1) {
					t.Errorf("factor %g block %d: %d infinite values not shown (%g, %g)", factor, i, st.Inf, lo, hi)
				}
			case float64(lo) != st.Min || float64(hi) != st.Max:
				t.Errorf("factor %g block %d: range %g..%g, Stats %g..%g", factor, i, lo, hi, st.Min, st.Max)
			}
		}
	}
}

// TestReaderSkipContentID: after SkipContentID the values read are the same and no content
// id is made; without it, reading every row gives one.
func TestReaderSkipContentID(t *testing.T) {
	g := geo.NewGrid(40, 30, 10, 20, 0.5, 0.5, geo.CellCentre)
	for i := range g.Data {
		g.Data[i] = float32(5 + i%170)
	}
	p := filepath.Join(t.TempDir(), "age.tif")
	if err := gdal.WriteCOG(p, g, gdal.Meta{Units: "Ma"}); err != nil {
		t.Fatal(err)
	}
	read := func(skip bool) ([]float32, string) {
		r, err := OpenReader(context.Background(), Request{Path: p, Kind: store.KindAge}, nil)
		if err != nil {
			t.Fatal(err)
		}
		defer r.Close()
		if skip {
			r.SkipContentID()
		}
		out := make([]float32, g.NX*g.NY)
		for row := 0; row < g.NY; row += 8 {
			n := min(8, g.NY-row)
			if err := r.ReadRows(row, out[row*g.NX:(row+n)*g.NX]); err != nil {
				t.Fatal(err)
			}
		}
		return out, r.ContentID()
	}
	full, id := read(false)
	skipped, none := read(true)
	if id == "" || none != "" {
		t.Errorf("content ids %q and %q (skipped), want one and none", id, none)
	}
	for i := range full {
		if full[i] != skipped[i] || full[i] != g.Data[i] {
			t.Fatalf("cell %d: %g and %g, written %g", i, full[i], skipped[i], g.Data[i])
		}
	}
}
