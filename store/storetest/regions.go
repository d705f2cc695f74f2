package storetest

import (
	"errors"
	"fmt"
	"math"
	"reflect"
	"slices"
	"strings"
	"sync"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/store"
)

// box is a counter-clockwise rectangle as a one-polygon MultiPolygon.
func box(w, s, e, n float64) orb.MultiPolygon {
	return orb.MultiPolygon{{boxRing(w, s, e, n)}}
}

func boxRing(w, s, e, n float64) orb.Ring {
	return orb.Ring{{w, s}, {e, s}, {e, n}, {w, n}, {w, s}}
}

func sameRegion(t *testing.T, what string, got, want store.Region) {
	t.Helper()
	if got.ID != want.ID || got.Name != want.Name || got.Description != want.Description || got.Owner != want.Owner ||
		got.Version != want.Version || !reflect.DeepEqual(got.Tags, want.Tags) || !orb.Equal(got.Geometry, want.Geometry) ||
		!sameTime(got.CreatedAt, want.CreatedAt) || !sameTime(got.UpdatedAt, want.UpdatedAt) {
		t.Fatalf("%s:\n got %+v\nwant %+v", what, got, want)
	}
}

func testRegionCRUD(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	// Coordinates with full float64 precision must come back bit for bit.
	geom := orb.MultiPolygon{{
		{{-30.123456789012345, 10.000000000000002}, {-20.5, 10.1}, {-20.25, 20.987654321098765}, {-30.123456789012345, 10.000000000000002}},
	}}
	in := store.Region{Name: "Quillon Basin flank (SYNTHETIC)", Description: "ünïcode ✓", Tags: []string{"synthetic", "basin"}, Geometry: geom, Owner: "alice"}
	r := must[store.Region](t, "CreateRegion")(s.CreateRegion(ctx, in))
	if r.ID == "" || r.Version != 1 || r.CreatedAt.IsZero() || !r.CreatedAt.Equal(r.UpdatedAt) {
		t.Fatalf("created region %+v: want id, version 1, created == updated", r)
	}
	got := must[store.Region](t, "GetRegion")(s.GetRegion(ctx, r.ID))
	sameRegion(t, "GetRegion after create", got, r)

	// Caller-chosen id; duplicate id is a conflict (not a version mismatch).
	fixed := must[store.Region](t, "CreateRegion fixed id")(s.CreateRegion(ctx, store.Region{ID: "quillon-north", Name: "n", Geometry: box(0, 0, 1, 1)}))
	if fixed.ID != "quillon-north" || fixed.Tags == nil {
		t.Fatalf("fixed-id region %+v: want id kept and non-nil tags", fixed)
	}
	_, err := s.CreateRegion(ctx, store.Region{ID: "quillon-north", Name: "again", Geometry: box(0, 0, 1, 1)})
	wantErr(t, "duplicate id", err, store.ErrConflict)
	if errors.Is(err, store.ErrVersionMismatch) {
		t.Fatalf("duplicate id reported as version mismatch: %v", err)
	}

	// Update with the current version.
	upd := got
	upd.Name = "renamed"
	upd.Tags = []string{"synthetic"}
	upd.Geometry = box(-31, 9, -19, 21)
	upd.Owner = "bob"
	u := must[store.Region](t, "UpdateRegion")(s.UpdateRegion(ctx, upd))
	if u.Version != 2 || !u.CreatedAt.Equal(r.CreatedAt) || u.UpdatedAt.Before(r.UpdatedAt) {
		t.Fatalf("updated region %+v: want version 2, same created time, later updated time", u)
	}
	sameRegion(t, "GetRegion after update", must[store.Region](t, "GetRegion")(s.GetRegion(ctx, r.ID)), u)

	// A stale version changes nothing.
	stale := got // version 1
	stale.Name = "lost"
	_, err = s.UpdateRegion(ctx, stale)
	wantErr(t, "stale update", err, store.ErrVersionMismatch)
	wantErr(t, "stale update is a conflict", err, store.ErrConflict)
	sameRegion(t, "after stale update", must[store.Region](t, "GetRegion")(s.GetRegion(ctx, r.ID)), u)

	// Unknown ids.
	_, err = s.GetRegion(ctx, "rg_nope")
	wantErr(t, "get unknown", err, store.ErrNotFound)
	missing := u
	missing.ID = "rg_nope"
	_, err = s.UpdateRegion(ctx, missing)
	wantErr(t, "update unknown", err, store.ErrNotFound)

	// Delete: wrong version refused, right version (or 0) accepted.
	wantErr(t, "delete stale", s.DeleteRegion(ctx, r.ID, 1), store.ErrVersionMismatch)
	if err := s.DeleteRegion(ctx, r.ID, 2); err != nil {
		t.Fatalf("DeleteRegion: %v", err)
	}
	_, err = s.GetRegion(ctx, r.ID)
	wantErr(t, "get deleted", err, store.ErrNotFound)
	wantErr(t, "delete twice", s.DeleteRegion(ctx, r.ID, 0), store.ErrNotFound)
	if err := s.DeleteRegion(ctx, fixed.ID, 0); err != nil {
		t.Fatalf("DeleteRegion any version: %v", err)
	}
	left := must[[]store.Region](t, "ListRegions")(s.ListRegions(ctx, store.RegionFilter{}))
	if len(left) != 0 {
		t.Fatalf("regions left after deletes: %v", ids(left, func(r store.Region) string { return r.ID }))
	}
	// A deleted region must not come back through the spatial index either.
	left = must[[]store.Region](t, "ListRegions bbox")(s.ListRegions(ctx, store.RegionFilter{BBox: &orb.Bound{Min: orb.Point{-180, -90}, Max: orb.Point{180, 90}}}))
	if len(left) != 0 {
		t.Fatalf("deleted regions found by bbox: %d", len(left))
	}
}

func testRegionValidation(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	ok := box(0, 0, 1, 1)
	cases := []struct {
		name string
		r    store.Region
	}{
		{"no name", store.Region{Geometry: ok}},
		{"no geometry", store.Region{Name: "x"}},
		{"open ring", store.Region{Name: "x", Geometry: orb.MultiPolygon{{{{0, 0}, {1, 0}, {1, 1}, {0, 1}}}}}},
		{"three positions", store.Region{Name: "x", Geometry: orb.MultiPolygon{{{{0, 0}, {1, 0}, {0, 0}}}}}},
		{"latitude 91", store.Region{Name: "x", Geometry: box(0, 0, 1, 91)}},
		{"longitude 541", store.Region{Name: "x", Geometry: box(540, 0, 541, 1)}},
		{"NaN", store.Region{Name: "x", Geometry: box(0, 0, math.NaN(), 1)}},
		{"bad id", store.Region{ID: "a/b", Name: "x", Geometry: ok}},
		{"NUL in name", store.Region{Name: "a\x00b", Geometry: ok}},
		{"empty tag", store.Region{Name: "x", Tags: []string{""}, Geometry: ok}},
		{"too many tags", store.Region{Name: "x", Tags: make([]string, store.MaxTags+1), Geometry: ok}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := s.CreateRegion(ctx, c.r)
			wantErr(t, "CreateRegion", err, store.ErrInvalid)
		})
	}
	bad := []struct {
		name string
		f    store.RegionFilter
	}{
		{"bbox south > north", store.RegionFilter{BBox: &orb.Bound{Min: orb.Point{0, 10}, Max: orb.Point{1, 5}}}},
		{"bbox latitude 95", store.RegionFilter{BBox: &orb.Bound{Min: orb.Point{0, 0}, Max: orb.Point{1, 95}}}},
		{"negative limit", store.RegionFilter{Page: store.Page{Limit: -1}}},
		{"limit too large", store.RegionFilter{Page: store.Page{Limit: store.MaxListLimit + 1}}},
		{"unclosed query polygon", store.RegionFilter{Intersects: orb.Polygon{{{0, 0}, {1, 0}, {1, 1}, {0, 1}}}}},
		{"collection query", store.RegionFilter{Intersects: orb.Collection{orb.Point{0, 0}}}},
	}
	for _, c := range bad {
		t.Run(c.name, func(t *testing.T) {
			_, err := s.ListRegions(ctx, c.f)
			wantErr(t, "ListRegions", err, store.ErrInvalid)
		})
	}
}

// regionFixture is a set of regions laid out so that every query below has a known answer.
// All expectations are by construction (planar lon/lat geometry, checked by hand).
var regionFixture = []struct {
	id    string
	tags  []string
	owner string
	geom  orb.MultiPolygon
}{
	{"atlantic", []string{"ocean"}, "alice", box(-40, 10, -20, 30)},
	// Crosses the antimeridian, split at ±180 (RFC 7946 §3.1.9).
	{"am-split", []string{"ocean", "antimeridian"}, "bob", orb.MultiPolygon{{boxRing(170, -10, 180, 10)}, {boxRing(-180, -10, -170, 10)}}},
	// Crosses the antimeridian with continuous longitudes 175..185.
	{"am-continuous", []string{"antimeridian"}, "bob", box(175, 20, 185, 30)},
	// Polar caps as lon/lat rectangles reaching the poles.
	{"arctic-cap", []string{"polar"}, "alice", box(-180, 80, 180, 90)},
	{"antarctic-cap", []string{"polar"}, "alice", box(-180, -90, 180, -75)},
	// A square with a square hole (3..7 × 3..7).
	{"donut", nil, "carol", orb.MultiPolygon{{boxRing(0, 0, 10, 10), orb.Ring{{3, 3}, {3, 7}, {7, 7}, {7, 3}, {3, 3}}}}},
	// A right triangle: its box covers (58.5, 8.5), the triangle does not (x + y > 60 there).
	{"triangle", nil, "carol", orb.MultiPolygon{{{{50, 0}, {60, 0}, {50, 10}, {50, 0}}}}},
}

func createFixture(t *testing.T, s store.Store) {
	ctx := ctxT(t)
	for _, f := range regionFixture {
		_, err := s.CreateRegion(ctx, store.Region{ID: f.id, Name: f.id, Tags: f.tags, Owner: f.owner, Geometry: f.geom})
		if err != nil {
			t.Fatalf("creating %s: %v", f.id, err)
		}
	}
}

func bnd(w, s, e, n float64) *orb.Bound {
	return &orb.Bound{Min: orb.Point{w, s}, Max: orb.Point{e, n}}
}

func testRegionQueries(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	createFixture(t, s)
	cases := []struct {
		name string
		f    store.RegionFilter
		want []string
	}{
		{"all", store.RegionFilter{}, []string{"atlantic", "am-split", "am-continuous", "arctic-cap", "antarctic-cap", "donut", "triangle"}},
		{"bbox plain", store.RegionFilter{BBox: bnd(-50, 0, -10, 40)}, []string{"atlantic"}},
		{"bbox touching nothing", store.RegionFilter{BBox: bnd(-100, -50, -90, -40)}, nil},
		{"bbox across antimeridian (west > east)", store.RegionFilter{BBox: bnd(175, -5, -175, 5)}, []string{"am-split"}},
		{"bbox across antimeridian finds continuous-longitude region", store.RegionFilter{BBox: bnd(178, 22, -178, 28)}, []string{"am-continuous"}},
		{"bbox west of antimeridian finds continuous region via +360", store.RegionFilter{BBox: bnd(-179, 22, -176, 28)}, []string{"am-continuous"}},
		{"bbox in 0..360 longitudes", store.RegionFilter{BBox: bnd(172, -5, 188, 5)}, []string{"am-split"}},
		{"bbox only east piece of split region", store.RegionFilter{BBox: bnd(-175, -5, -172, 5)}, []string{"am-split"}},
		{"bbox near north pole", store.RegionFilter{BBox: bnd(-10, 85, 10, 89)}, []string{"arctic-cap"}},
		{"bbox touching north pole at any longitude", store.RegionFilter{BBox: bnd(120, 89.5, 121, 90)}, []string{"arctic-cap"}},
		{"bbox near south pole", store.RegionFilter{BBox: bnd(100, -89, 110, -80)}, []string{"antarctic-cap"}},
		{"bbox inside hole", store.RegionFilter{BBox: bnd(4, 4, 6, 6)}, nil},
		{"bbox in triangle's box but outside triangle", store.RegionFilter{BBox: bnd(58, 8, 59, 9)}, nil},
		{"bbox whole world", store.RegionFilter{BBox: bnd(-180, -90, 180, 90)}, []string{"atlantic", "am-split", "am-continuous", "arctic-cap", "antarctic-cap", "donut", "triangle"}},
		{"intersects point", store.RegionFilter{Intersects: orb.Point{-30, 20}}, []string{"atlantic"}},
		{"intersects point in hole", store.RegionFilter{Intersects: orb.Point{5, 5}}, nil},
		{"intersects point in ring", store.RegionFilter{Intersects: orb.Point{1, 1}}, []string{"donut"}},
		{"intersects point beyond 180", store.RegionFilter{Intersects: orb.Point{182, 0}}, []string{"am-split"}},
		{"intersects point at -178 in continuous region", store.RegionFilter{Intersects: orb.Point{-178, 25}}, []string{"am-continuous"}},
		{"intersects line crossing region", store.RegionFilter{Intersects: orb.LineString{{-50, 20}, {-10, 20}}}, []string{"atlantic"}},
		{"intersects line inside hole", store.RegionFilter{Intersects: orb.LineString{{4, 4}, {6, 6}}}, nil},
		{"intersects polygon across antimeridian", store.RegionFilter{Intersects: orb.Polygon{boxRing(178, -2, 182, 2)}}, []string{"am-split"}},
		{"intersects polygon containing region", store.RegionFilter{Intersects: orb.Polygon{boxRing(-60, 5, -5, 40)}}, []string{"atlantic"}},
		{"intersects polygon inside region", store.RegionFilter{Intersects: orb.Polygon{boxRing(-35, 15, -25, 25)}}, []string{"atlantic"}},
		{"intersects polygon in triangle's box only", store.RegionFilter{Intersects: orb.Polygon{boxRing(58, 8, 59, 9)}}, nil},
		{"intersects multipolygon", store.RegionFilter{Intersects: orb.MultiPolygon{{boxRing(-35, 15, -25, 25)}, {boxRing(0, 85, 1, 86)}}}, []string{"atlantic", "arctic-cap"}},
		{"intersects bound", store.RegionFilter{Intersects: orb.Bound{Min: orb.Point{52, 1}, Max: orb.Point{53, 2}}}, []string{"triangle"}},
		{"tag", store.RegionFilter{Tag: "antimeridian"}, []string{"am-split", "am-continuous"}},
		{"tag unknown", store.RegionFilter{Tag: "nope"}, nil},
		{"owner", store.RegionFilter{Owner: "carol"}, []string{"donut", "triangle"}},
		{"tag and bbox", store.RegionFilter{Tag: "polar", BBox: bnd(-10, 85, 10, 89)}, []string{"arctic-cap"}},
		{"bbox and intersects", store.RegionFilter{BBox: bnd(-180, -90, 180, 90), Intersects: orb.Point{-30, 20}}, []string{"atlantic"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := must[[]store.Region](t, "ListRegions")(s.ListRegions(ctx, c.f))
			gotIDs := ids(got, func(r store.Region) string { return r.ID })
			if !slices.Equal(sortedCopy(gotIDs), sortedCopy(c.want)) {
				t.Fatalf("got %v, want %v", gotIDs, c.want)
			}
		})
	}
	// A tag no region can carry (invalid UTF-8, a NUL: PostgreSQL refuses such text) is
	// refused as invalid on every backend, not a database error.
	for _, tag := range []string{"\xff", "polar\x00", strings.Repeat("t", store.MaxTagLen+1)} {
		_, err := s.ListRegions(ctx, store.RegionFilter{Tag: tag})
		wantErr(t, fmt.Sprintf("ListRegions(tag %.20q)", tag), err, store.ErrInvalid)
	}
}

func testRegionPaging(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	createFixture(t, s)
	all := must[[]store.Region](t, "ListRegions")(s.ListRegions(ctx, store.RegionFilter{}))
	if len(all) != len(regionFixture) {
		t.Fatalf("got %d regions, want %d", len(all), len(regionFixture))
	}
	for i := 1; i < len(all); i++ {
		a, b := all[i-1], all[i]
		if a.CreatedAt.After(b.CreatedAt) || a.CreatedAt.Equal(b.CreatedAt) && a.ID > b.ID {
			t.Fatalf("list not ordered by (created, id): %s before %s", a.ID, b.ID)
		}
	}
	allIDs := ids(all, func(r store.Region) string { return r.ID })
	world := bnd(-180, -90, 180, 90)
	for _, c := range []struct{ limit, offset int }{{2, 0}, {2, 1}, {3, 5}, {1, 6}, {5, 7}, {0, 3}} {
		for _, spatial := range []bool{false, true} {
			t.Run(fmt.Sprintf("limit=%d offset=%d spatial=%v", c.limit, c.offset, spatial), func(t *testing.T) {
				f := store.RegionFilter{Page: store.Page{Limit: c.limit, Offset: c.offset}}
				if spatial {
					f.BBox = world
				}
				got := ids(must[[]store.Region](t, "ListRegions")(s.ListRegions(ctx, f)), func(r store.Region) string { return r.ID })
				end := len(allIDs)
				if c.limit > 0 {
					end = min(c.offset+c.limit, len(allIDs))
				}
				want := []string{}
				if c.offset < len(allIDs) {
					want = allIDs[c.offset:end]
				}
				if !slices.Equal(got, want) {
					t.Fatalf("got %v, want %v", got, want)
				}
			})
		}
	}
}

// testConcurrentSameVersion: N writers holding the same version; exactly one may win.
func testConcurrentSameVersion(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	r := must[store.Region](t, "CreateRegion")(s.CreateRegion(ctx, store.Region{Name: "contested", Geometry: box(0, 0, 1, 1)}))
	const n = 8
	var wg sync.WaitGroup
	errs := make([]error, n)
	start := make(chan struct{})
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			<-start
			u := r
			u.Name = fmt.Sprintf("writer %d", i)
			_, errs[i] = s.UpdateRegion(ctx, u)
		}()
	}
	close(start)
	wg.Wait()
	winners := 0
	winner := -1
	for i, err := range errs {
		switch {
		case err == nil:
			winners++
			winner = i
		case errors.Is(err, store.ErrVersionMismatch):
		default:
			t.Errorf("writer %d: unexpected error %v", i, err)
		}
	}
	if winners != 1 {
		t.Fatalf("%d writers succeeded with the same version, want exactly 1", winners)
	}
	got := must[store.Region](t, "GetRegion")(s.GetRegion(ctx, r.ID))
	if got.Version != 2 || got.Name != fmt.Sprintf("writer %d", winner) {
		t.Fatalf("stored %q version %d, want the winner's name %q at version 2", got.Name, got.Version, fmt.Sprintf("writer %d", winner))
	}
}

// testNoLostUpdate: N writers each add their own tag with read-modify-write and retry on
// conflict; every tag must survive.
func testNoLostUpdate(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	r := must[store.Region](t, "CreateRegion")(s.CreateRegion(ctx, store.Region{Name: "shared", Geometry: box(0, 0, 1, 1)}))
	const n = 6
	var wg sync.WaitGroup
	errs := make([]error, n)
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			for attempt := 0; attempt < 1000; attempt++ {
				cur, err := s.GetRegion(ctx, r.ID)
				if err != nil {
					errs[i] = err
					return
				}
				cur.Tags = append(cur.Tags, fmt.Sprintf("w%d", i))
				_, err = s.UpdateRegion(ctx, cur)
				if err == nil {
					return
				}
				if !errors.Is(err, store.ErrVersionMismatch) {
					errs[i] = err
					return
				}
			}
			errs[i] = fmt.Errorf("writer %d never got through", i)
		}()
	}
	wg.Wait()
	for _, err := range errs {
		if err != nil {
			t.Fatal(err)
		}
	}
	got := must[store.Region](t, "GetRegion")(s.GetRegion(ctx, r.ID))
	want := make([]string, n)
	for i := range n {
		want[i] = fmt.Sprintf("w%d", i)
	}
	if !slices.Equal(sortedCopy(got.Tags), want) || got.Version != 1+n {
		t.Fatalf("tags %v version %d; want %v at version %d (an update was lost)", got.Tags, got.Version, want, 1+n)
	}
}
