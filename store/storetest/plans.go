package storetest

import (
	"bytes"
	"encoding/json"
	"errors"
	"fmt"
	"reflect"
	"slices"
	"sort"
	"strings"
	"sync"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/store"
)

// planFixture is an invented (SYNTHETIC) plan: one line across the antimeridian written with a
// sign change (179.5 → -179.5), one with continuous longitudes beyond 180, and one without
// waypoint names. Settings carry odd spacing, key order and a number written as 10.50, which
// a store that re-encoded JSON would change.
func planFixture() store.Plan {
	return store.Plan{
		Name:        "Quillon antimeridian lines (SYNTHETIC)",
		Description: "Invented lines for the store contract.",
		Lines: []store.PlanLine{
			{Name: "QA-1", Waypoints: orb.LineString{{179.5, -10}, {-179.5, -9.75}, {-178.25, -8.5}}, WaypointNames: []string{"QA-1 start", "", "QA-1 end"}},
			{Name: "QA-2", Waypoints: orb.LineString{{178.75, -10.5}, {180.5, -10.25}, {181.125, -9}}, WaypointNames: []string{"a", "b", "ç"}},
			{Name: "", Waypoints: orb.LineString{{0.1, 0.2}, {0.3, 0.4}}},
		},
		Settings: json.RawMessage(`{ "speed_on_line_kn": 10.50,  "dataset": "ds_quillon",
  "overlap_pct": 2e1 }`),
	}
}

func samePlanContent(t *testing.T, what string, got, want store.Plan) {
	t.Helper()
	if got.Name != want.Name || got.Description != want.Description || !bytes.Equal(got.Settings, want.Settings) || len(got.Lines) != len(want.Lines) {
		t.Fatalf("%s: got %+v (settings %s), want %+v (settings %s)", what, got, got.Settings, want, want.Settings)
	}
	for i := range want.Lines {
		g, w := got.Lines[i], want.Lines[i]
		if g.Name != w.Name || !orb.Equal(g.Waypoints, w.Waypoints) || !slices.Equal(g.WaypointNames, w.WaypointNames) || (g.WaypointNames == nil) != (w.WaypointNames == nil) {
			t.Fatalf("%s: line %d = %+v, want %+v", what, i, g, w)
		}
	}
}

func testPlanCRUD(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	in := planFixture()
	p := must[store.Plan](t, "CreatePlan")(s.CreatePlan(ctx, in))
	if !strings.HasPrefix(p.ID, store.PrefixPlan) || p.Version != 1 || !sameTime(p.CreatedAt, p.UpdatedAt) || p.CreatedAt.IsZero() {
		t.Fatalf("CreatePlan = %+v", p)
	}
	got := must[store.Plan](t, "GetPlan")(s.GetPlan(ctx, p.ID))
	samePlanContent(t, "GetPlan", got, in)
	if got.Version != 1 || !sameTime(got.CreatedAt, p.CreatedAt) || !sameTime(got.UpdatedAt, p.UpdatedAt) {
		t.Fatalf("GetPlan version/times = %d %v %v, want 1 %v", got.Version, got.CreatedAt, got.UpdatedAt, p.CreatedAt)
	}

	// Empty settings become {}; waypoint names that are all empty come back as nil.
	bare := store.Plan{ID: "quillon-bare", Name: "bare", Lines: []store.PlanLine{{Waypoints: orb.LineString{{0, 0}, {1, 1}}, WaypointNames: []string{"", ""}}}}
	b := must[store.Plan](t, "CreatePlan bare")(s.CreatePlan(ctx, bare))
	gb := must[store.Plan](t, "GetPlan bare")(s.GetPlan(ctx, b.ID))
	if b.ID != "quillon-bare" || string(gb.Settings) != "{}" || gb.Lines[0].WaypointNames != nil || bare.Lines[0].WaypointNames == nil {
		t.Fatalf("bare plan = %+v (settings %q); the caller's names must not be changed: %v", gb, gb.Settings, bare.Lines[0].WaypointNames)
	}
	_, err := s.CreatePlan(ctx, bare)
	wantErr(t, "duplicate plan id", err, store.ErrConflict)

	// Update replaces everything the caller gives; a stale version changes nothing.
	upd := got
	upd.Name = "Quillon lines, revised (SYNTHETIC)"
	upd.Lines = append(slices.Clone(upd.Lines[:1]), store.PlanLine{Name: "QA-3", Waypoints: orb.LineString{{-170, 5}, {-169, 5.5}}, WaypointNames: []string{"", "QA-3 end"}})
	upd.Settings = json.RawMessage(`{"dataset":"ds_quillon","swath_width_m":4000}`)
	u := must[store.Plan](t, "UpdatePlan")(s.UpdatePlan(ctx, upd))
	if u.Version != 2 || !sameTime(u.CreatedAt, p.CreatedAt) || u.UpdatedAt.Before(p.UpdatedAt) {
		t.Fatalf("UpdatePlan = version %d created %v updated %v", u.Version, u.CreatedAt, u.UpdatedAt)
	}
	g2 := must[store.Plan](t, "GetPlan after update")(s.GetPlan(ctx, p.ID))
	samePlanContent(t, "GetPlan after update", g2, upd)
	if g2.Version != 2 {
		t.Fatalf("version after update %d", g2.Version)
	}
	_, err = s.UpdatePlan(ctx, got) // still carries version 1
	wantErr(t, "stale plan update", err, store.ErrVersionMismatch)
	samePlanContent(t, "GetPlan after stale update", must[store.Plan](t, "GetPlan")(s.GetPlan(ctx, p.ID)), upd)

	// Unknown ids, and ids no store could hold, are not found everywhere.
	for _, id := range []string{"pl_nosuchplan", "\xff\xfe", "pl_\xc3", "a b", ""} {
		_, err = s.GetPlan(ctx, id)
		wantErr(t, fmt.Sprintf("GetPlan(%q)", id), err, store.ErrNotFound)
		wantErr(t, fmt.Sprintf("DeletePlan(%q)", id), s.DeletePlan(ctx, id, 0), store.ErrNotFound)
		if id != "" {
			miss := upd
			miss.ID = id
			_, err = s.UpdatePlan(ctx, miss)
			wantErr(t, fmt.Sprintf("UpdatePlan(%q)", id), err, store.ErrNotFound)
		}
	}

	// Delete with the wrong version keeps the plan; the right one removes it.
	wantErr(t, "delete with version 1", s.DeletePlan(ctx, p.ID, 1), store.ErrVersionMismatch)
	must[store.Plan](t, "GetPlan after refused delete")(s.GetPlan(ctx, p.ID))
	if err := s.DeletePlan(ctx, p.ID, 2); err != nil {
		t.Fatalf("DeletePlan: %v", err)
	}
	_, err = s.GetPlan(ctx, p.ID)
	wantErr(t, "get deleted plan", err, store.ErrNotFound)
	wantErr(t, "delete deleted plan", s.DeletePlan(ctx, p.ID, 0), store.ErrNotFound)
	_, err = s.UpdatePlan(ctx, g2)
	wantErr(t, "update deleted plan", err, store.ErrNotFound)
}

func testPlanValidation(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	line := store.PlanLine{Waypoints: orb.LineString{{0, 0}, {1, 1}}}
	mod := func(f func(p *store.Plan)) store.Plan {
		p := store.Plan{Name: "x", Lines: []store.PlanLine{line}}
		f(&p)
		return p
	}
	for _, c := range []struct {
		name string
		p    store.Plan
	}{
		{"no name", mod(func(p *store.Plan) { p.Name = "  " })},
		{"name not UTF-8", mod(func(p *store.Plan) { p.Name = "a\xffb" })},
		{"bad id", mod(func(p *store.Plan) { p.ID = "pl/1" })},
		{"no lines", mod(func(p *store.Plan) { p.Lines = nil })},
		{"too many lines", mod(func(p *store.Plan) { p.Lines = slices.Repeat([]store.PlanLine{line}, store.MaxPlanLines+1) })},
		{"one waypoint", mod(func(p *store.Plan) { p.Lines = []store.PlanLine{{Waypoints: orb.LineString{{0, 0}}}} })},
		{"latitude 95", mod(func(p *store.Plan) { p.Lines = []store.PlanLine{{Waypoints: orb.LineString{{0, 0}, {0, 95}}}} })},
		{"longitude 541", mod(func(p *store.Plan) { p.Lines = []store.PlanLine{{Waypoints: orb.LineString{{0, 0}, {541, 0}}}} })},
		{"waypoint names miscounted", mod(func(p *store.Plan) {
			p.Lines = []store.PlanLine{{Waypoints: line.Waypoints, WaypointNames: []string{"only one"}}}
		})},
		{"waypoint name with NUL", mod(func(p *store.Plan) {
			p.Lines = []store.PlanLine{{Waypoints: line.Waypoints, WaypointNames: []string{"a\x00", "b"}}}
		})},
		{"line name too long", mod(func(p *store.Plan) {
			p.Lines = []store.PlanLine{{Name: strings.Repeat("n", store.MaxNameLen+1), Waypoints: line.Waypoints}}
		})},
		{"settings not an object", mod(func(p *store.Plan) { p.Settings = json.RawMessage(`[1]`) })},
		{"settings not JSON", mod(func(p *store.Plan) { p.Settings = json.RawMessage(`{dataset: 1}`) })},
		{"settings with NUL escape", mod(func(p *store.Plan) { p.Settings = json.RawMessage(`{"a": "\u0000"}`) })},
	} {
		_, err := s.CreatePlan(ctx, c.p)
		wantErr(t, c.name, err, store.ErrInvalid)
	}
	if list := must[[]store.Plan](t, "ListPlans")(s.ListPlans(ctx, store.Page{})); len(list) != 0 {
		t.Fatalf("refused plans were stored: %d", len(list))
	}
	_, err := s.UpdatePlan(ctx, mod(func(p *store.Plan) {}))
	wantErr(t, "update without id", err, store.ErrInvalid)
	_, err = s.ListPlans(ctx, store.Page{Limit: -1})
	wantErr(t, "negative limit", err, store.ErrInvalid)
}

func testPlanPaging(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	var made []store.Plan
	for i := range 7 {
		p := store.Plan{Name: fmt.Sprintf("paging %d", i), Lines: []store.PlanLine{{Waypoints: orb.LineString{{float64(i), 0}, {float64(i), 1}}}}}
		if i%2 == 1 { // caller-chosen ids, so that equal creation times are ordered by id
			p.ID = fmt.Sprintf("plan-%d", 9-i)
		}
		made = append(made, must[store.Plan](t, "CreatePlan")(s.CreatePlan(ctx, p)))
	}
	sort.SliceStable(made, func(i, j int) bool {
		a, b := made[i], made[j]
		return a.CreatedAt.Before(b.CreatedAt) || a.CreatedAt.Equal(b.CreatedAt) && a.ID < b.ID
	})
	allIDs := ids(made, func(p store.Plan) string { return p.ID })
	all := must[[]store.Plan](t, "ListPlans")(s.ListPlans(ctx, store.Page{}))
	if got := ids(all, func(p store.Plan) string { return p.ID }); !slices.Equal(got, allIDs) {
		t.Fatalf("ListPlans = %v, want (created, id) order %v", got, allIDs)
	}
	for i, p := range all {
		if !reflect.DeepEqual(p.Lines, made[i].Lines) || string(p.Settings) != "{}" {
			t.Fatalf("listed plan %s = %+v, want lines %+v", p.ID, p, made[i].Lines)
		}
	}
	for _, c := range []struct{ limit, offset int }{{2, 0}, {2, 1}, {3, 5}, {1, 6}, {5, 7}, {0, 3}} {
		t.Run(fmt.Sprintf("limit=%d offset=%d", c.limit, c.offset), func(t *testing.T) {
			got := ids(must[[]store.Plan](t, "ListPlans")(s.ListPlans(ctx, store.Page{Limit: c.limit, Offset: c.offset})), func(p store.Plan) string { return p.ID })
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

// testPlanConcurrentSameVersion: writers holding the same version of a plan; exactly one may
// win, and the stored plan is wholly the winner's (its lines and settings together).
func testPlanConcurrentSameVersion(t *testing.T, open Opener) {
	ctx := ctxT(t)
	s := open(t)
	p := must[store.Plan](t, "CreatePlan")(s.CreatePlan(ctx, planFixture()))
	const n = 8
	var wg sync.WaitGroup
	errs := make([]error, n)
	start := make(chan struct{})
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			<-start
			u := p
			u.Lines = []store.PlanLine{{Name: fmt.Sprintf("writer %d", i), Waypoints: orb.LineString{{float64(i), 0}, {float64(i), 1}}}}
			u.Settings = json.RawMessage(fmt.Sprintf(`{"writer": %d}`, i))
			_, errs[i] = s.UpdatePlan(ctx, u)
		}()
	}
	close(start)
	wg.Wait()
	winner := -1
	for i, err := range errs {
		switch {
		case err == nil && winner < 0:
			winner = i
		case err == nil:
			t.Fatalf("writers %d and %d both succeeded with version 1", winner, i)
		case !errors.Is(err, store.ErrVersionMismatch):
			t.Errorf("writer %d: unexpected error %v", i, err)
		}
	}
	if winner < 0 {
		t.Fatal("no writer succeeded")
	}
	got := must[store.Plan](t, "GetPlan")(s.GetPlan(ctx, p.ID))
	if got.Version != 2 || len(got.Lines) != 1 || got.Lines[0].Name != fmt.Sprintf("writer %d", winner) ||
		got.Lines[0].Waypoints[0][0] != float64(winner) || string(got.Settings) != fmt.Sprintf(`{"writer": %d}`, winner) {
		t.Fatalf("stored plan %+v (settings %s), want wholly writer %d's at version 2", got, got.Settings, winner)
	}
}
