package demobasin

import (
	"context"
	"io"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/paulmach/orb"
	"github.com/paulmach/orb/planar"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	_ "ridgeflank/store/sqlite"
	"ridgeflank/survey"
)

func TestWriteFilesRoundTrip(t *testing.T) {
	b, err := Generate(Options{CellDeg: 0.25})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	paths, err := WriteFiles(dir, b)
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) != 6 {
		t.Fatalf("wrote %v, want 3 COGs, a netCDF and a README", paths)
	}
	for _, p := range paths {
		if !strings.HasPrefix(filepath.Base(p), FilePrefix) && !strings.Contains(filepath.Base(p), FilePrefix) {
			t.Errorf("%s: name lacks %q", p, FilePrefix)
		}
	}
	want := map[string]*geo.Grid{
		FilePrefix + "-age.tif":                b.Age,
		FilePrefix + "-elevation.tif":          b.Elevation,
		FilePrefix + "-sediment-thickness.tif": b.Sediment,
		FilePrefix + "-age.nc":                 b.Age,
	}
	for name, g := range want {
		t.Run(name, func(t *testing.T) {
			got, meta, err := gdal.Read(filepath.Join(dir, name))
			if err != nil {
				t.Fatal(err)
			}
			if got.NX != g.NX || got.NY != g.NY || math.Abs(got.West-g.West) > 1e-9 || math.Abs(got.North-g.North) > 1e-9 {
				t.Fatalf("lattice %d×%d at %g,%g, want %d×%d at %g,%g", got.NX, got.NY, got.West, got.North, g.NX, g.NY, g.West, g.North)
			}
			for i := range g.Data {
				if got.Data[i] != g.Data[i] {
					t.Fatalf("cell %d: %g, want %g", i, got.Data[i], g.Data[i])
				}
			}
			all := meta.Title + " " + meta.Source + " " + meta.Name + " " + meta.LongName
			for k, v := range meta.Metadata {
				all += " " + k + "=" + v
			}
			if !strings.Contains(all, Label) || !strings.Contains(all, "Not for navigation") {
				t.Errorf("metadata lacks the SYNTHETIC label or the navigation caution: %s", all)
			}
		})
	}
	readme, err := os.ReadFile(paths[len(paths)-1])
	if err != nil {
		t.Fatal(err)
	}
	for i, l := range strings.Split(strings.TrimSpace(string(readme)), "\n") {
		if !strings.Contains(l, Label) {
			t.Errorf("README line %d lacks %s: %q", i+1, Label, l)
		}
	}
}

func TestInstall(t *testing.T) {
	ctx := context.Background()
	st, err := store.Open(ctx, store.Config{DataDir: t.TempDir(), Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	b, err := Generate(Options{CellDeg: 0.25})
	if err != nil {
		t.Fatal(err)
	}
	id, err := Install(ctx, st, b)
	if err != nil {
		t.Fatal(err)
	}
	ds, err := st.GetDataset(ctx, id)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(ds.Name, Label) || ds.AgeGridID == "" || ds.DepthGridID == "" || ds.SedimentGridID == "" {
		t.Fatalf("dataset %+v", ds)
	}
	elev, err := st.GetGrid(ctx, ds.DepthGridID)
	if err != nil {
		t.Fatal(err)
	}
	if elev.Kind != store.KindElevation || elev.VerticalSense != store.ElevationPositiveUp || !strings.Contains(elev.Name, Label) {
		t.Fatalf("elevation grid row %+v", elev)
	}
	// The stored file reads back to the generated grid.
	path, err := st.Blobs().Path(elev.Path)
	if err != nil {
		t.Fatal(err)
	}
	g, _, err := gdal.Read(path)
	if err != nil {
		t.Fatal(err)
	}
	if g.NX != b.Elevation.NX || g.Data[17] != b.Elevation.Data[17] {
		t.Fatal("stored elevation differs from the generated one")
	}

	t.Run("region holds the swell, not the seamounts", func(t *testing.T) {
		rg, err := st.GetRegion(ctx, RegionID)
		if err != nil {
			t.Fatal(err)
		}
		if !planar.MultiPolygonContains(rg.Geometry, orb.Point{SwellCentreLon, SwellCentreLat}) {
			t.Error("region does not contain the swell centre")
		}
		for _, s := range Seamounts() {
			if planar.MultiPolygonContains(rg.Geometry, orb.Point{s.Lon, s.Lat}) {
				t.Errorf("region contains %s", s.Name)
			}
		}
		// right-hand rule: exterior ring counter-clockwise, positive signed area
		if o := rg.Geometry[0][0].Orientation(); o != orb.CCW {
			t.Errorf("exterior ring orientation %v, want counter-clockwise", o)
		}
		bd := rg.Geometry.Bound()
		if bd.Min[0] < WestLon || bd.Max[0] > EastLon || bd.Min[1] < SouthLat || bd.Max[1] > NorthLat {
			t.Errorf("region %v leaves the basin", bd)
		}
	})
	t.Run("track crosses the seamount chain", func(t *testing.T) {
		tr, err := st.GetTrack(ctx, TrackID)
		if err != nil {
			t.Fatal(err)
		}
		// The chain runs from seamount A to E; the track's first and last points lie on
		// opposite sides of that line (sign of the 2-D cross product).
		sm := Seamounts()
		a, e := sm[0], sm[len(sm)-1]
		side := func(p orb.Point) float64 {
			return (e.Lon-a.Lon)*(p[1]-a.Lat) - (e.Lat-a.Lat)*(p[0]-a.Lon)
		}
		w := tr.Waypoints
		if side(w[0])*side(w[len(w)-1]) >= 0 {
			t.Fatalf("track %v does not cross the chain", w)
		}
	})
	t.Run("plan: parallel lines across the chain", func(t *testing.T) {
		row, err := st.GetPlan(ctx, PlanID)
		if err != nil {
			t.Fatal(err)
		}
		p, err := survey.FromStored(row)
		if err != nil {
			t.Fatal(err)
		}
		want := DemoPlan()
		p.Version, p.CreatedAt, p.UpdatedAt = 0, nil, nil
		if !reflect.DeepEqual(p, want) {
			t.Fatalf("stored plan %+v\nwant %+v", p, want)
		}
		if err := p.Validate(0, 0); err != nil || p.Settings.Dataset != DatasetID {
			t.Fatalf("demo plan invalid (%v) or on dataset %q", err, p.Settings.Dataset)
		}
		if !strings.Contains(p.Name, Label) || !strings.Contains(p.Description, Label) || len(p.Lines) != PlanLines {
			t.Fatalf("plan %q (%q) with %d lines: want %d lines labelled %s", p.Name, p.Description, len(p.Lines), PlanLines, Label)
		}
		sm := Seamounts()
		a, e := sm[0], sm[len(sm)-1]
		side := func(w geo.Waypoint) float64 { return (e.Lon-a.Lon)*(w.Lat-a.Lat) - (e.Lat-a.Lat)*(w.Lon-a.Lon) }
		// Initial great-circle bearing, degrees from north (the spherical initial-course
		// formula of great-circle sailing; from memory).
		bearing := func(from, to geo.Waypoint) float64 {
			const rad = math.Pi / 180
			y := math.Sin((to.Lon-from.Lon)*rad) * math.Cos(to.Lat*rad)
			x := math.Cos(from.Lat*rad)*math.Sin(to.Lat*rad) - math.Sin(from.Lat*rad)*math.Cos(to.Lat*rad)*math.Cos((to.Lon-from.Lon)*rad)
			return math.Atan2(y, x) / rad
		}
		first := p.Lines[0].Waypoints
		for i, l := range p.Lines {
			w := l.Waypoints
			if side(w[0])*side(w[len(w)-1]) >= 0 {
				t.Errorf("line %d %v does not cross the chain", i, w)
			}
			for _, pt := range w {
				if pt.Lon < WestLon || pt.Lon > EastLon || pt.Lat < SouthLat || pt.Lat > NorthLat || !strings.Contains(pt.Name, "QX-") {
					t.Errorf("line %d waypoint %+v: outside the basin or unnamed", i, pt)
				}
			}
			// Parallel within 0.5° of bearing (the lines are shifted copies; at 21–25° S the
			// shift turns them by far less); spacing 11 ± 1 km between neighbours.
			// Every other line is sailed the other way (so transits are short steps across):
			// compare its bearing taken from its end to its start.
			from, to := w[0], w[len(w)-1]
			if i%2 == 1 {
				from, to = to, from
			}
			if d := bearing(from, to) - bearing(first[0], first[len(first)-1]); math.Abs(d) > 0.5 {
				t.Errorf("line %d is %.2f° off parallel", i, d)
			}
			if i > 0 {
				prev := p.Lines[i-1].Waypoints
				if tr := DistanceKm(prev[len(prev)-1].Lon, prev[len(prev)-1].Lat, w[0].Lon, w[0].Lat); tr > 15 {
					t.Errorf("transit from line %d to %d is %.1f km; want a short step across (< 15 km)", i-1, i, tr)
				}
			}
			if i > 0 {
				prev := p.Lines[i-1].Waypoints
				if d := DistanceKm(prev[1].Lon, prev[1].Lat, w[1].Lon, w[1].Lat); math.Abs(d-11) > 1 {
					t.Errorf("lines %d and %d are %.2f km apart at the chain, want 11 ± 1", i-1, i, d)
				}
			}
		}
		if m := p.Lines[PlanLines/2].Waypoints[1]; m.Lon != sm[2].Lon || m.Lat != sm[2].Lat {
			t.Errorf("middle line crosses the chain at %+v, want Quillon Seamount C", m)
		}
	})
	t.Run("idempotent", func(t *testing.T) {
		id2, err := Install(ctx, st, b)
		if err != nil {
			t.Fatal(err)
		}
		ds2, err := st.GetDataset(ctx, id2)
		if err != nil {
			t.Fatal(err)
		}
		if ds2.AgeGridID != ds.AgeGridID || ds2.Version != ds.Version {
			t.Fatalf("second install changed the dataset: %+v vs %+v", ds2, ds)
		}
		if plans, err := st.ListPlans(ctx, store.Page{}); err != nil || len(plans) != 1 || plans[0].Version != 1 {
			t.Fatalf("plans after two installs: %v, %v; want the one demo plan, unchanged", plans, err)
		}
		grids, err := st.ListGrids(ctx, store.GridFilter{})
		if err != nil {
			t.Fatal(err)
		}
		if len(grids) != 4 {
			t.Fatalf("%d grids after two installs, want 4", len(grids))
		}
	})
	t.Run("another seed repoints the dataset", func(t *testing.T) {
		b2, err := Generate(Options{CellDeg: 0.25, Seed: 7})
		if err != nil {
			t.Fatal(err)
		}
		if _, err := Install(ctx, st, b2); err != nil {
			t.Fatal(err)
		}
		ds3, err := st.GetDataset(ctx, DatasetID)
		if err != nil {
			t.Fatal(err)
		}
		if ds3.DepthGridID == ds.DepthGridID || ds3.AgeGridID != ds.AgeGridID {
			t.Fatalf("dataset after a new seed: %+v (before %+v): only the elevation changes with the seed", ds3, ds)
		}
	})
}
