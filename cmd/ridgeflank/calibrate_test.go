package main

import (
	"bytes"
	"context"
	"log/slog"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/evaluate"
	"ridgeflank/store"
)

// calibrate over the SYNTHETIC demo basin prints the fit, writes the plot, saves the model
// (which the service then resolves like any custom model), and refuses bad input with exit status 2. (Recovery of known
// parameters is evaluate's TestCalibrateDataset; this checks the command's plumbing.)
func TestCalibrateCommand(t *testing.T) {
	ctx := context.Background()
	dataDir := filepath.Join(t.TempDir(), "data")
	st, err := store.Open(ctx, store.Config{DataDir: dataDir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := demobasin.Install(ctx, st, smallBasin(t)); err != nil {
		t.Fatal(err)
	}
	st.Close()
	dir := t.TempDir()
	geom := filepath.Join(dir, "box.geojson")
	os.WriteFile(geom, []byte(`{"type":"Polygon","coordinates":[[[-148,-43],[-122,-43],[-122,-22],[-148,-22],[-148,-43]]]}`), 0o644)
	plot := filepath.Join(dir, "fit.svg")
	code, out, errOut := runCLI(t, nil, "calibrate", "--data", dataDir, "--dataset", demobasin.DatasetID, "--geometry", geom,
		"--free", "plate_thickness_km,ridge_depth_m", "--bootstrap", "10", "--save-as", "basin-fit", "--plot", plot)
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	for _, want := range []string{"plate_thickness_km (km)", "ridge_depth_m (m)", "excluded_area_fraction", "not for navigation"} {
		if !strings.Contains(out, want) {
			t.Errorf("summary lacks %q:\n%s", want, out)
		}
	}
	if b, err := os.ReadFile(plot); err != nil || !bytes.HasPrefix(b, []byte("<?xml")) {
		t.Errorf("plot file: %v %q", err, b[:min(len(b), 20)])
	}
	st, err = store.Open(ctx, store.Config{DataDir: dataDir, Logger: slog.New(slog.DiscardHandler)})
	if err != nil {
		t.Fatal(err)
	}
	if m, err := evaluate.New(evaluate.Config{Store: st}).Model(ctx, "basin-fit"); err != nil || m.Params().Kind != "plate" {
		t.Errorf("the saved model: %v", err)
	}
	st.Close()
	for _, c := range []struct {
		name string
		args []string
	}{
		{"no free", []string{"--dataset", demobasin.DatasetID, "--geometry", geom}},
		{"unknown free", []string{"--dataset", demobasin.DatasetID, "--geometry", geom, "--free", "thickness"}},
		{"plot extension", []string{"--dataset", demobasin.DatasetID, "--geometry", geom, "--free", "ridge_depth_m", "--plot", "x.pdf"}},
		{"model id taken", []string{"--dataset", demobasin.DatasetID, "--geometry", geom, "--free", "ridge_depth_m", "--save-as", "basin-fit"}},
	} {
		t.Run(c.name, func(t *testing.T) {
			code, _, errOut := runCLI(t, nil, append([]string{"calibrate", "--data", dataDir}, c.args...)...)
			if code != 2 || errOut == "" {
				t.Errorf("exit %d, stderr %q; want 2 and a message", code, errOut)
			}
		})
	}
}
