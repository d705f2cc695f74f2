package main

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"log/slog"
	"math"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/evaluate"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// slab-pull by ages. Half-space at 100 Ma, 600 km slab at 45°: the closed form
// F = 2 g sin(dip) L ρm α ΔT √(κt/π) (∫₀^∞ erfc = 1/√π, worked by hand) with Turcotte &
// Schubert's parameters (Geodynamics, 2nd ed. 2002; from memory: ρm = 3300 kg/m³,
// α = 3e-5 /K, ΔT = 1300 K, κ = 1 mm²/s) and g = 9.81 m/s² is 3.395e13 N/m — of the order
// of 10¹³ N/m they quote for slab pull (from memory); the command must agree with the closed
// form with the model's own parameters to 1e-6 and with the textbook-parameter value to 10 %
// (the built-in half-space differs from their set). φ = 100 Ma × 50 mm/yr × sin 45° =
// 3535.534 km (worked by hand).
func TestSlabPullCommandAges(t *testing.T) {
	code, out, errOut := runCLI(t, nil, "slab-pull", "--model", "halfspace", "--age", "100", "--convergence-mm-yr", "50",
		"--slab-length-km", "600", "--dip-deg", "45", "--format", "json")
	if code != 0 {
		t.Fatal(errOut)
	}
	var got struct {
		Model thermal.Params `json:"model"`
		Slab  []struct {
			F, Phi, Core float64
		} `json:"slab"`
	}
	var raw struct {
		Model thermal.Params   `json:"model"`
		Slab  []map[string]any `json:"slab"`
	}
	if err := json.Unmarshal([]byte(out), &raw); err != nil {
		t.Fatal(err)
	}
	got.Model = raw.Model
	for _, r := range raw.Slab {
		got.Slab = append(got.Slab, struct{ F, Phi, Core float64 }{r["slab_pull_n_m"].(float64), r["thermal_parameter_km"].(float64), r["slab_core_below_600c_depth_km"].(float64)})
	}
	p := got.Model
	sin45 := math.Sqrt(0.5)
	exact := 2 * 9.81 * sin45 * 600e3 * p.MantleDensityKgM3 * p.ExpansivityPerK * (p.MantleTemperatureC - p.SurfaceTemperatureC) *
		math.Sqrt(p.DiffusivityM2s*100*thermal.SecondsPerMyr/math.Pi)
	textbook := 2 * 9.81 * sin45 * 600e3 * 3300 * 3e-5 * 1300 * math.Sqrt(1e-6*100*thermal.SecondsPerMyr/math.Pi)
	cases := []struct {
		name            string
		got, want, tolr float64
	}{
		{"closed form, model parameters", got.Slab[0].F, exact, 1e-6},
		{"textbook parameters (from memory)", got.Slab[0].F, textbook, 0.1},
		{"textbook value worked by hand", textbook, 3.395e13, 0.005},
		{"thermal parameter", got.Slab[0].Phi, 3535.534, 1e-6},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			within(t, c.name, c.got, c.want, c.tolr*c.want)
		})
	}
	if got.Slab[0].Core <= 0 || got.Slab[0].Core > 660 {
		t.Errorf("600 °C core depth %g km, want within the upper mantle", got.Slab[0].Core)
	}
	_, csvOut, _ := runCLI(t, nil, "slab-pull", "--age", "100", "--convergence-mm-yr", "50", "--slab-length-km", "600", "--dip-deg", "45", "--format", "csv")
	rows, _ := csv.NewReader(strings.NewReader(csvOut)).ReadAll()
	if len(rows) != 2 || strings.Join(rows[0][:4], ",") != "age_ma,"+evaluate.SlabPullColumn+","+evaluate.ThermalParameterColumn+","+evaluate.SlabCoreDepthColumn {
		t.Fatalf("CSV %q", csvOut)
	}
	for _, bad := range []struct {
		args []string
		msg  string
	}{
		{[]string{"--age", "100", "--convergence-mm-yr", "50", "--slab-length-km", "600"}, "dip-deg"},
		{[]string{"--age", "100", "--convergence-mm-yr", "50", "--slab-length-km", "600", "--dip-deg", "120"}, "dip-deg"},
		{[]string{"--age", "401", "--convergence-mm-yr", "50", "--slab-length-km", "600", "--dip-deg", "45"}, "outside 0 to 400 Ma"},
		{[]string{"--trench", "x.geojson", "--convergence-mm-yr", "50", "--slab-length-km", "600", "--dip-deg", "45"}, "--dataset"},
	} {
		if code, _, errOut := runCLI(t, nil, append([]string{"slab-pull"}, bad.args...)...); code != 2 || !strings.Contains(errOut, bad.msg) {
			t.Errorf("%v: exit %d, %q", bad.args, code, errOut)
		}
	}
}

// slab-pull along a trench file on the demo basin (SYNTHETIC): every sample carries thermal's
// answers at the sample's own age (7 significant digits in CSV: 1e-6 relative).
func TestSlabPullCommandTrench(t *testing.T) {
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
	trench := filepath.Join(dir, "trench.geojson")
	if err := os.WriteFile(trench, []byte(`{"type":"LineString","coordinates":[[-140,-30],[-135,-35]]}`), 0o644); err != nil {
		t.Fatal(err)
	}
	code, out, errOut := runCLI(t, nil, "slab-pull", "--trench", trench, "--dataset", demobasin.DatasetID, "--data", dir,
		"--model", "psm", "--convergence-mm-yr", "70", "--slab-length-km", "500", "--dip-deg", "50", "--spacing-km", "50", "--format", "csv")
	if code != 0 {
		t.Fatal(errOut)
	}
	rows, _ := csv.NewReader(strings.NewReader(out)).ReadAll()
	if len(rows) < 10 {
		t.Fatalf("%d rows", len(rows))
	}
	m, _ := thermal.Builtin("psm")
	answered := 0
	for _, r := range rows[1:] {
		if r[3] == "" {
			continue
		}
		answered++
		age, _ := strconv.ParseFloat(r[3], 64)
		f, _ := strconv.ParseFloat(r[4], 64)
		phi, _ := strconv.ParseFloat(r[5], 64)
		within(t, "slab pull", f, thermal.SlabPullNPerM(m, age, 500, 50), 1e-6*f)
		within(t, "φ", phi, thermal.ThermalParameterKm(age, 70, 50), 1e-6*phi+1e-9)
	}
	if answered == 0 {
		t.Error("no sample on the age grid")
	}
}
