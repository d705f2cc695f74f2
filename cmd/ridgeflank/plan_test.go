package main

import (
	"bytes"
	"context"
	"encoding/json"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/server"
	"ridgeflank/store"
	"ridgeflank/store/storetest"
	"ridgeflank/survey"
)

// planWays is the demo basin installed twice: in a data directory for the command line, and
// in a store behind the HTTP API.
type planWays struct {
	dir string // the CLI's --data
	url string // the API
}

func newPlanWays(t *testing.T) planWays {
	t.Helper()
	ctx := context.Background()
	dir := t.TempDir()
	st, err := store.Open(ctx, store.Config{DataDir: dir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demobasin.Install(ctx, st, smallBasin(t)); err != nil {
		t.Fatal(err)
	}
	st.Close()
	api := storetest.OpenStore(t, "sqlite", t.TempDir())
	if _, err := demobasin.Install(ctx, api, smallBasin(t)); err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewServer(server.New(server.Deps{Store: api, Version: version, Config: server.Config{RateLimitPerMinute: -1}}))
	t.Cleanup(ts.Close)
	return planWays{dir: dir, url: ts.URL}
}

func (w planWays) cli(t *testing.T, args ...string) (string, string, int) {
	t.Helper()
	var out, errb bytes.Buffer
	code := run(context.Background(), append([]string{"plan"}, append(args, "--data", w.dir)...), &out, &errb)
	return out.String(), errb.String(), code
}

func (w planWays) post(t *testing.T, path string, body any) []byte {
	t.Helper()
	raw, _ := json.Marshal(body)
	resp, err := http.Post(w.url+path, "application/json", bytes.NewReader(raw))
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	if resp.StatusCode != 200 {
		t.Fatalf("POST %s: %d %s", path, resp.StatusCode, b)
	}
	return b
}

// The command line and the API write the same CSV and GeoJSON for the same plan: a plan file
// with settings flags against the same plan in a request body, and a stored plan by id.
func TestPlanCheckParity(t *testing.T) {
	w := newPlanWays(t)
	dir := t.TempDir()
	demo := demobasin.DemoPlan()
	// The plan file: the demo plan's lines as a GeoJSON FeatureCollection of named LineStrings.
	fc := map[string]any{"type": "FeatureCollection", "features": []any{}}
	for _, l := range demo.Lines {
		var coords [][2]float64
		for _, p := range l.Waypoints {
			coords = append(coords, [2]float64{p.Lon, p.Lat})
		}
		fc["features"] = append(fc["features"].([]any), map[string]any{"type": "Feature",
			"properties": map[string]any{"name": l.Name}, "geometry": map[string]any{"type": "LineString", "coordinates": coords}})
	}
	raw, _ := json.Marshal(fc)
	file := filepath.Join(dir, "lines.geojson")
	if err := os.WriteFile(file, raw, 0o644); err != nil {
		t.Fatal(err)
	}
	csvOut, gjOut := filepath.Join(dir, "c.csv"), filepath.Join(dir, "c.geojson")
	stdout, stderr, code := w.cli(t, "check", file, "--dataset", demobasin.DatasetID, "--name", "parity", "--speed-kn", "10",
		"--swath-deg", "130", "--overlap-pct", "20", "--safety-depth-m", "200", "--temperature-c", "2.5", "--csv", csvOut, "--geojson", gjOut)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, stderr)
	}
	t2 := 2.5
	body := survey.Plan{Name: "parity", Settings: survey.Settings{Dataset: demobasin.DatasetID, SpeedOnLineKn: 10, SwathAngleDeg: 130,
		OverlapPct: 20, SafetyDepthM: 200, WaterTemperatureC: &t2}}
	for _, l := range demo.Lines {
		var wps = l.Waypoints
		for i := range wps {
			wps[i].Name = "" // a GeoJSON LineString carries no waypoint names
		}
		body.Lines = append(body.Lines, survey.Line{Name: l.Name, Waypoints: wps})
	}
	tests := []struct {
		name, file, f string
	}{{"csv", csvOut, "csv"}, {"geojson", gjOut, "geojson"}}
	for _, tc := range tests {
		t.Run("file "+tc.name, func(t *testing.T) {
			got, err := os.ReadFile(tc.file)
			if err != nil {
				t.Fatal(err)
			}
			want := w.post(t, "/api/plans/check?f="+tc.f, body)
			if !bytes.Equal(got, want) {
				t.Errorf("CLI %s (%d bytes) differs from the API's (%d bytes)\nCLI: %.300s\nAPI: %.300s", tc.name, len(got), len(want), got, want)
			}
		})
	}
	t.Run("stored plan csv", func(t *testing.T) {
		out := filepath.Join(dir, "stored.csv")
		if _, stderr, code := w.cli(t, "check", "--plan", demobasin.PlanID, "--csv", out); code != 0 {
			t.Fatalf("exit %d: %s", code, stderr)
		}
		got, _ := os.ReadFile(out)
		want := w.post(t, "/api/plans/check?f=csv", map[string]string{"id": demobasin.PlanID})
		if !bytes.Equal(got, want) {
			t.Errorf("CLI CSV of the stored plan differs from the API's")
		}
	})
	// The table names the legs, the totals and the hazards, and carries the caution.
	for _, s := range []string{"length (nmi)", "Totals", "in transit", "total time", "line spacing (m)", "Hazards:", "Caution: "} {
		if !strings.Contains(stdout, s) {
			t.Errorf("the table has no %q:\n%s", s, stdout)
		}
	}
}

// Bad input is one plain sentence on stderr and exit status 2.
func TestPlanCheckErrors(t *testing.T) {
	w := newPlanWays(t)
	dir := t.TempDir()
	bad := filepath.Join(dir, "bad.csv")
	os.WriteFile(bad, []byte("lon,lat\n-128,95\n-127,-23\n"), 0o644)
	good := filepath.Join(dir, "good.csv")
	os.WriteFile(good, []byte("lon,lat\n-128,-24\n-127,-23\n"), 0o644)
	tests := []struct {
		name string
		args []string
		want string
	}{
		{"bad latitude", []string{"check", bad, "--dataset", demobasin.DatasetID}, "latitude"},
		{"no dataset", []string{"check", good}, "--dataset"},
		{"unknown dataset", []string{"check", good, "--dataset", "nope"}, "nope"},
		{"bad setting", []string{"check", good, "--dataset", demobasin.DatasetID, "--overlap-pct", "150"}, "settings.overlap_pct"},
		{"both swath flags", []string{"check", good, "--dataset", demobasin.DatasetID, "--swath-deg", "120", "--swath-width-m", "5000"}, "swath"},
		{"unknown stored plan", []string{"check", "--plan", "nope"}, "no stored plan"},
		{"report extension", []string{"check", good, "--dataset", demobasin.DatasetID, "--report", filepath.Join(dir, "r.doc")}, ".pdf or .png"},
		{"unknown subcommand", []string{"draw"}, "unknown plan command"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, stderr, code := w.cli(t, tc.args...)
			if code != 2 || strings.Count(stderr, "\n") != 1 || !strings.Contains(stderr, tc.want) {
				t.Errorf("exit %d, stderr %q; want exit 2 and one line naming %q", code, stderr, tc.want)
			}
		})
	}
}

// save stores a plan from a file; list and show find it.
func TestPlanSaveListShow(t *testing.T) {
	w := newPlanWays(t)
	file := filepath.Join(t.TempDir(), "two.csv")
	os.WriteFile(file, []byte("line,name,lat,lon\nA,a1,24°00.0'S,128°00.0'W\nA,a2,23 00.0 S,127 00.0 W\nB,b1,-24.1,-128\nB,b2,-23.1,-127\n"), 0o644)
	out, stderr, code := w.cli(t, "save", file, "--name", "two lines (SYNTHETIC)", "--id", "two-lines", "--dataset", demobasin.DatasetID, "--speed-kn", "9")
	if code != 0 || !strings.Contains(out, "two-lines") {
		t.Fatalf("save: exit %d %s %s", code, out, stderr)
	}
	out, _, code = w.cli(t, "list")
	if code != 0 || !strings.Contains(out, "two-lines") || !strings.Contains(out, demobasin.PlanID) {
		t.Errorf("list: %s", out)
	}
	out, _, code = w.cli(t, "show", "two-lines")
	var p survey.Plan
	if code != 0 || json.Unmarshal([]byte(out), &p) != nil {
		t.Fatalf("show: exit %d %s", code, out)
	}
	// 24°00.0'S 128°00.0'W = (−128, −24) exactly.
	if len(p.Lines) != 2 || p.Lines[0].Name != "A" || p.Lines[0].Waypoints[0].Lon != -128 || p.Lines[0].Waypoints[0].Lat != -24 ||
		p.Lines[1].Waypoints[1].Name != "b2" || p.Settings.SpeedOnLineKn != 9 || p.Settings.SwathAngleDeg != 0 {
		t.Errorf("shown plan %+v", p)
	}
}
