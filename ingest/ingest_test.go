package ingest

import (
	"context"
	"io"
	"log/slog"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	_ "ridgeflank/store/sqlite"
)

func TestUnitFactor(t *testing.T) {
	cases := []struct {
		name   string
		kind   store.GridKind
		units  string
		factor float64
		stored string
		ok     bool
	}{
		// kilo = 10³ (BIPM SI Brochure 9th ed., Table 7).
		{"sediment km to m", store.KindSedimentThickness, "km", 1000, "m", true},
		{"sediment metres", store.KindSedimentThickness, " Metres ", 1, "m", true},
		{"crust m to km", store.KindCrustalThickness, "m", 0.001, "km", true},
		{"depth km to m", store.KindDepth, "km", 1000, "m", true},
		{"age Myr", store.KindAge, "Myr", 1, "Ma", true},
		{"age in hours refused", store.KindAge, "hours", 0, "Ma", false},
		{"elevation in feet refused", store.KindElevation, "ft", 0, "m", false},
		{"other keeps its units", store.KindOther, "mW/m2", 1, "mW/m2", true},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			f, u, ok := unitFactor(c.kind, c.units)
			if ok != c.ok || u != c.stored || (ok && f != c.factor) {
				t.Errorf("unitFactor(%s, %q) = %g, %q, %v; want %g, %q, %v", c.kind, c.units, f, u, ok, c.factor, c.stored, c.ok)
			}
		})
	}
}

// Stats must not depend on how the values are split into blocks (a later reader streams
// grids block by block).
func TestStatsBlockInvariant(t *testing.T) {
	nan, inf := float32(math.NaN()), float32(math.Inf(1))
	vals := []float32{3, -1, 0, nan, 7.5, inf, -2, nan, 4}
	var whole Stats
	whole.Add(vals)
	for _, split := range []int{1, 2, 4, 8} {
		var s Stats
		for i := 0; i < len(vals); i += split {
			s.Add(vals[i:min(i+split, len(vals))])
		}
		if s != whole {
			t.Errorf("blocks of %d: %+v, whole %+v", split, s, whole)
		}
	}
	// Counted by hand from vals.
	want := Stats{Cells: 9, Valid: 6, NaN: 2, Inf: 1, Negative: 2, NonZero: 5, Min: -2, Max: 7.5}
	if whole != want {
		t.Errorf("stats %+v, want %+v", whole, want)
	}
	if f := whole.NegativeFraction(); f != 0.4 {
		t.Errorf("negative fraction %g, want 2/5", f)
	}
}

func TestCheckValues(t *testing.T) {
	stats := func(v ...float32) Stats {
		var s Stats
		s.Add(v)
		return s
	}
	nan := float32(math.NaN())
	cases := []struct {
		name string
		s    Stats
		kind store.GridKind
		unit string
		want string // "" = accepted; else a part of the message
	}{
		{"all no-data", stats(nan, nan), store.KindAge, "Ma", "the grid holds no data (every cell is no-data)"},
		{"infinite", stats(1, float32(math.Inf(-1))), store.KindOther, "", "infinite"},
		{"negative age", stats(-1, 5), store.KindAge, "Ma", "age values must lie between 0 and 400 Ma, but the grid holds -1 Ma"},
		{"age beyond 400 Ma", stats(10, 450), store.KindAge, "Ma", "holds 450 Ma"},
		{"sediment 25 km", stats(100, 25000), store.KindSedimentThickness, "m", "between 0 and 20000 m, but the grid holds 25000 m"},
		{"crust 150 km", stats(30, 150), store.KindCrustalThickness, "km", "between 0 and 100 km"},
		{"depth 13 km", stats(4000, 13000), store.KindDepth, "m", "between -12000 and 12000 m"},
		{"plausible depth", stats(0, 10900), store.KindDepth, "m", ""},
		{"plausible sediment", stats(0, 19000), store.KindSedimentThickness, "m", ""},
		{"other any finite value", stats(-1e30, 1e30), store.KindOther, "", ""},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := checkValues(c.s, c.kind, c.unit, "")
			if c.want == "" {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				return
			}
			f, ok := fault.As(err)
			if !ok || f.Kind != fault.InvalidGrid || f.Field != "file" || !strings.Contains(f.Msg, c.want) {
				t.Fatalf("got %v, want an invalid-grid fault on file containing %q", err, c.want)
			}
		})
	}
}

func TestRequestCheck(t *testing.T) {
	ok := Request{Path: "f.tif", Kind: store.KindDepth}
	cases := []struct {
		name  string
		edit  func(*Request)
		field string // "" = valid
	}{
		{"valid", func(*Request) {}, ""},
		{"kind upper case", func(r *Request) { r.Kind = "Depth" }, ""},
		{"no file", func(r *Request) { r.Path = "" }, "file"},
		{"no kind", func(r *Request) { r.Kind = "" }, "kind"},
		{"unknown kind", func(r *Request) { r.Kind = "bathymetry" }, "kind"},
		{"units not convertible", func(r *Request) { r.Units = "fathoms" }, "units"},
		{"units km", func(r *Request) { r.Units = "km" }, ""},
		{"vertical nonsense", func(r *Request) { r.Vertical = "sideways" }, "vertical"},
		{"vertical on age", func(r *Request) { r.Kind, r.Vertical = store.KindAge, "depth" }, "vertical"},
		{"registration nonsense", func(r *Request) { r.Registration = "corner" }, "registration"},
		{"bad id", func(r *Request) { r.ID = "a b" }, "id"},
		{"long name", func(r *Request) { r.Name = strings.Repeat("n", store.MaxNameLen+1) }, "name"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			r := ok
			c.edit(&r)
			err := r.Check()
			if c.field == "" {
				if err != nil {
					t.Fatalf("refused: %v", err)
				}
				return
			}
			f, isFault := fault.As(err)
			if !isFault || f.Kind != fault.InvalidParameter || f.Field != c.field {
				t.Fatalf("got %#v, want an invalid-parameter fault on %s", err, c.field)
			}
		})
	}
}

// writeGrid writes a 40×30 grid of 0.1° cells as a GeoTIFF with the given units and the
// values f(col, row).
func writeGrid(t *testing.T, units string, f func(c, r int) float32) string {
	t.Helper()
	g := geo.NewGrid(40, 30, -129.95, -20.05, 0.1, 0.1, geo.CellCentre)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, f(c, r))
		}
	}
	p := filepath.Join(t.TempDir(), "grid.tif")
	if err := gdal.WriteCOG(p, g, gdal.Meta{Units: units, Title: "test grid (SYNTHETIC)", Source: "ingest test"}); err != nil {
		t.Fatal(err)
	}
	return p
}

func openStore(t *testing.T) store.Store {
	t.Helper()
	st, err := store.Open(context.Background(), store.Config{DataDir: t.TempDir(), Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

func TestImportIDs(t *testing.T) {
	ctx := context.Background()
	st := openStore(t)
	a := writeGrid(t, "Ma", func(c, r int) float32 { return float32(c + r) })
	b := writeGrid(t, "Ma", func(c, r int) float32 { return float32(2*c + r) })

	first, err := Import(ctx, st, Request{Path: a, Kind: store.KindAge, ID: "age-a", Name: "first"}, nil)
	if err != nil || !first.Created || first.Grid.ID != "age-a" {
		t.Fatalf("first import: %+v, %v", first, err)
	}
	// A retried import (same content, same id) finds it.
	again, err := Import(ctx, st, Request{Path: a, Kind: store.KindAge, ID: "age-a", Name: "retry"}, nil)
	if err != nil || again.Created || again.Grid.ID != "age-a" {
		t.Fatalf("retry: %+v, %v", again, err)
	}
	// Without an id: the stored grid, whatever its id.
	noID, err := Import(ctx, st, Request{Path: a, Kind: store.KindAge}, nil)
	if err != nil || noID.Created || noID.Grid.ID != "age-a" {
		t.Fatalf("without id: %+v, %v", noID, err)
	}
	// Other content under the taken id: conflict, nothing stored.
	_, err = Import(ctx, st, Request{Path: b, Kind: store.KindAge, ID: "age-a"}, nil)
	if f, ok := fault.As(err); !ok || f.Kind != fault.Conflict || f.Field != "id" || f.Msg != `a grid with id "age-a" already exists` {
		t.Fatalf("other content under a taken id: %v", err)
	}
	// The same content under another id: conflict naming the stored one.
	_, err = Import(ctx, st, Request{Path: a, Kind: store.KindAge, ID: "age-b"}, nil)
	if f, ok := fault.As(err); !ok || f.Kind != fault.Conflict || !strings.Contains(f.Msg, `"age-a"`) {
		t.Fatalf("same content under another id: %v", err)
	}
	// The same values as another kind are another grid.
	unc, err := Import(ctx, st, Request{Path: a, Kind: store.KindAgeUncertainty}, nil)
	if err != nil || !unc.Created || unc.Grid.ContentHash == first.Grid.ContentHash {
		t.Fatalf("same values as age_uncertainty: %+v, %v", unc, err)
	}
	grids, err := st.ListGrids(ctx, store.GridFilter{})
	if err != nil || len(grids) != 2 {
		t.Fatalf("catalogue %d grids (%v), want 2", len(grids), err)
	}

	// The stored file carries kind, units, sense and registration, and no title, source or
	// time stamp.
	path, err := st.Blobs().Path(first.Grid.Path)
	if err != nil {
		t.Fatal(err)
	}
	_, meta, err := gdal.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if meta.Units != "Ma" || meta.Metadata["kind"] != "age" || meta.Title != "" || meta.Source != "" || strings.ContainsAny(meta.History, "0123456789") {
		t.Errorf("stored file metadata: units %q, kind %q, title %q, source %q, history %q", meta.Units, meta.Metadata["kind"], meta.Title, meta.Source, meta.History)
	}
}
