package evaluate

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/store"
	"ridgeflank/store/storetest"
	"ridgeflank/survey"
)

// planService is a Service over a fresh SQLite store holding one dataset, "quillon", whose age
// grid is a placeholder file (plan storage never reads grid files).
func planService(t *testing.T, lim Limits) (*Service, store.Store) {
	t.Helper()
	ctx := context.Background()
	st := storetest.OpenStore(t, store.BackendSQLite, filepath.Join(t.TempDir(), "store"))
	g, _, err := st.ImportGrid(ctx, store.Grid{Name: "placeholder age (SYNTHETIC)", Kind: store.KindAge, VerticalSense: store.VerticalNone,
		Footprint: orb.MultiPolygon{{{{-180, -60}, {180, -60}, {180, 60}, {-180, 60}, {-180, -60}}}}, ResolutionDeg: 1, Registration: store.CellCentre},
		func(tmp string) error { return os.WriteFile(tmp, []byte("placeholder"), 0o644) })
	if err != nil {
		t.Fatal(err)
	}
	if _, err := st.CreateDataset(ctx, store.Dataset{ID: "quillon", Name: "Quillon (SYNTHETIC)", AgeGridID: g.ID}); err != nil {
		t.Fatal(err)
	}
	return New(Config{Store: st, Limits: lim}), st
}

// planInput is an invented plan (SYNTHETIC): a named line across the antimeridian given with
// a sign change, a line with continuous longitudes past 180, and settings in which 0 °C is a
// real temperature and must not be lost.
func planInput() survey.Plan {
	zero, sal := 0.0, 34.5
	return survey.Plan{
		Name:        "Quillon dateline lines (SYNTHETIC)",
		Description: "Invented for the plan storage test.",
		Lines: []survey.Line{
			{Name: "QD-1", Waypoints: []geo.Waypoint{{Lon: 179.5, Lat: -10, Name: "QD-1 start"}, {Lon: -179.5, Lat: -9.75}, {Lon: -178.25, Lat: -8.5, Name: "QD-1 end"}}},
			{Waypoints: []geo.Waypoint{{Lon: 178.75, Lat: -10.5}, {Lon: 181.125, Lat: -9}}},
		},
		Settings: survey.Settings{Dataset: "quillon", Model: "psm", Sediment: "shale", SpeedOnLineKn: 9.5, SwathAngleDeg: 130, OverlapPct: 20,
			SafetyDepthM: 200, WaterTemperatureC: &zero, SalinityPSU: &sal,
			SoundProfile: []survey.ProfileStep{{DepthM: 0, TemperatureC: 24, SalinityPSU: 35}, {DepthM: 1000, TemperatureC: 4.5, SalinityPSU: 34.6}}},
	}
}

// withoutStoreFields clears what the store sets, to compare a stored plan with its input.
func withoutStoreFields(p survey.Plan) survey.Plan {
	p.ID, p.Version, p.CreatedAt, p.UpdatedAt = "", 0, nil, nil
	return p
}

func TestPlanCRUD(t *testing.T) {
	ctx := context.Background()
	s, st := planService(t, Limits{})
	in := planInput()
	p, err := s.CreatePlan(ctx, in)
	if err != nil {
		t.Fatal(err)
	}
	if !strings.HasPrefix(p.ID, store.PrefixPlan) || p.Version != 1 || p.CreatedAt == nil || p.UpdatedAt == nil {
		t.Fatalf("CreatePlan = id %q version %d times %v %v", p.ID, p.Version, p.CreatedAt, p.UpdatedAt)
	}
	got, err := s.GetPlan(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(withoutStoreFields(got), in) {
		t.Fatalf("GetPlan = %+v\nwant %+v", got, in)
	}
	// Settings are stored as given (no defaults filled in), as their JSON encoding.
	row, err := st.GetPlan(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := json.Marshal(in.Settings)
	if !bytes.Equal(row.Settings, want) || row.Lines[1].WaypointNames != nil || row.Lines[0].WaypointNames[1] != "" {
		t.Fatalf("stored settings %s, want %s; names %v", row.Settings, want, row.Lines)
	}

	second := planInput()
	second.ID, second.Name = "quillon-second", "second"
	if _, err := s.CreatePlan(ctx, second); err != nil {
		t.Fatal(err)
	}
	_, err = s.CreatePlan(ctx, second)
	if !errors.Is(err, store.ErrConflict) {
		t.Fatalf("duplicate id: %v, want store.ErrConflict", err)
	}
	list, err := s.ListPlans(ctx, store.Page{})
	if err != nil || len(list) != 2 || list[0].ID != p.ID || list[1].ID != "quillon-second" {
		t.Fatalf("ListPlans = %v, %v", list, err)
	}
	if page, err := s.ListPlans(ctx, store.Page{Limit: 1, Offset: 1}); err != nil || len(page) != 1 || page[0].ID != "quillon-second" {
		t.Fatalf("ListPlans page 2 = %v, %v", page, err)
	}

	upd := got
	upd.Lines = upd.Lines[:1]
	upd.Settings.SwathAngleDeg, upd.Settings.SwathWidthM = 0, 3500
	u, err := s.UpdatePlan(ctx, upd)
	if err != nil || u.Version != 2 || !reflect.DeepEqual(withoutStoreFields(u), withoutStoreFields(upd)) {
		t.Fatalf("UpdatePlan = %+v, %v", u, err)
	}
	if _, err := s.UpdatePlan(ctx, got); !errors.Is(err, store.ErrVersionMismatch) {
		t.Fatalf("stale update: %v, want store.ErrVersionMismatch", err)
	}
	if err := s.DeletePlan(ctx, p.ID, 1); !errors.Is(err, store.ErrVersionMismatch) {
		t.Fatalf("delete with a stale version: %v, want store.ErrVersionMismatch", err)
	}
	if err := s.DeletePlan(ctx, p.ID, 2); err != nil {
		t.Fatal(err)
	}
	for _, id := range []string{p.ID, "\xff\xfe", ""} {
		if _, err := s.GetPlan(ctx, id); !errors.Is(err, store.ErrNotFound) {
			t.Fatalf("GetPlan(%q): %v, want store.ErrNotFound", id, err)
		}
		if err := s.DeletePlan(ctx, id, 0); !errors.Is(err, store.ErrNotFound) {
			t.Fatalf("DeletePlan(%q): %v, want store.ErrNotFound", id, err)
		}
	}
	gone := u
	gone.ID = "\xff"
	if _, err := s.UpdatePlan(ctx, gone); !errors.Is(err, store.ErrNotFound) {
		t.Fatalf("UpdatePlan of an impossible id: %v, want store.ErrNotFound", err)
	}
}

// Every refused plan is a fault naming the field at fault, and nothing is stored.
func TestPlanRules(t *testing.T) {
	ctx := context.Background()
	s, _ := planService(t, Limits{MaxPlanLines: 2, MaxVertices: 3})
	mod := func(f func(p *survey.Plan)) survey.Plan {
		p := planInput()
		f(&p)
		return p
	}
	line := survey.Line{Waypoints: []geo.Waypoint{{Lon: 0, Lat: 0}, {Lon: 1, Lat: 1}}}
	cases := []struct {
		name  string
		plan  survey.Plan
		kind  fault.Kind
		field string
	}{
		{"no name", mod(func(p *survey.Plan) { p.Name = " " }), fault.InvalidParameter, "name"},
		{"name not UTF-8", mod(func(p *survey.Plan) { p.Name = "Quillon \xff" }), fault.InvalidParameter, "name"},
		{"description too long", mod(func(p *survey.Plan) { p.Description = strings.Repeat("d", store.MaxDescriptionLen+1) }), fault.InvalidParameter, "description"},
		{"line name with NUL", mod(func(p *survey.Plan) { p.Lines[1].Name = "a\x00" }), fault.InvalidParameter, "lines[1].name"},
		{"waypoint name too long", mod(func(p *survey.Plan) { p.Lines[0].Waypoints[2].Name = strings.Repeat("w", store.MaxNameLen+1) }), fault.InvalidParameter, "lines[0].waypoints[2].name"},
		{"id not an id", mod(func(p *survey.Plan) { p.ID = "plans/1" }), fault.InvalidParameter, "id"},
		{"no lines", mod(func(p *survey.Plan) { p.Lines = nil }), fault.InvalidParameter, "lines"},
		{"three lines over a limit of two", mod(func(p *survey.Plan) { p.Lines = []survey.Line{line, line, line} }), fault.LimitExceeded, "lines"},
		{"four waypoints over a limit of three", mod(func(p *survey.Plan) {
			p.Lines[1].Waypoints = append(p.Lines[1].Waypoints, geo.Waypoint{Lon: 182, Lat: -8}, geo.Waypoint{Lon: 183, Lat: -7})
		}), fault.LimitExceeded, "lines[1].waypoints"},
		{"one waypoint", mod(func(p *survey.Plan) { p.Lines[1].Waypoints = p.Lines[1].Waypoints[:1] }), fault.InvalidParameter, "lines[1].waypoints"},
		{"latitude 91", mod(func(p *survey.Plan) { p.Lines[0].Waypoints[0].Lat = 91 }), fault.InvalidParameter, "lines[0].waypoints"},
		{"overlap 100 %", mod(func(p *survey.Plan) { p.Settings.OverlapPct = 100 }), fault.InvalidParameter, "settings.overlap_pct"},
		{"no dataset", mod(func(p *survey.Plan) { p.Settings.Dataset = "" }), fault.InvalidParameter, "settings.dataset"},
		{"unknown dataset", mod(func(p *survey.Plan) { p.Settings.Dataset = "atlantis" }), fault.NotFound, "settings.dataset"},
		{"dataset id not UTF-8", mod(func(p *survey.Plan) { p.Settings.Dataset = "\xff\xfe" }), fault.NotFound, "settings.dataset"},
		{"unknown model", mod(func(p *survey.Plan) { p.Settings.Model = "no-such-model" }), fault.UnknownModel, "settings.model"},
		{"unknown sediment", mod(func(p *survey.Plan) { p.Settings.Sediment = "marmalade" }), fault.UnknownSediment, "settings.sediment"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := s.CreatePlan(ctx, c.plan)
			f, ok := fault.As(err)
			if !ok || f.Kind != c.kind || f.Field != c.field {
				t.Fatalf("CreatePlan: %v (%#v), want %s about %q", err, f, c.kind, c.field)
			}
			if c.field == "id" { // an update's id is looked up, not validated (TestPlanCRUD)
				return
			}
			up := c.plan
			up.ID, up.Version = "quillon-any", 1
			_, err = s.UpdatePlan(ctx, up)
			if g, ok := fault.As(err); !ok || g.Kind != c.kind || g.Field != c.field {
				t.Fatalf("UpdatePlan: %v, want %s about %q", err, c.kind, c.field)
			}
		})
	}
	noID := planInput()
	if _, err := s.UpdatePlan(ctx, noID); !fault.Is(err, fault.InvalidParameter) {
		t.Fatalf("update without an id: %v", err)
	}
	if list, err := s.ListPlans(ctx, store.Page{}); err != nil || len(list) != 0 {
		t.Fatalf("refused plans were stored: %v, %v", list, err)
	}
	if _, err := s.ListPlans(ctx, store.Page{Limit: store.MaxListLimit + 1}); !errors.Is(err, store.ErrInvalid) {
		t.Fatalf("over-long page: %v, want store.ErrInvalid", err)
	}
	// The limits above are the service's: the default service accepts the plan the limits refused.
	d, _ := planService(t, Limits{})
	for _, i := range []int{7, 8} {
		if _, err := d.CreatePlan(ctx, cases[i].plan); err != nil {
			t.Fatalf("%s, under the default limits: %v", cases[i].name, err)
		}
	}
}
