package main

import (
	"os"
	"path/filepath"
	"strings"
	"testing"
)

func TestDemoWritesSyntheticFiles(t *testing.T) {
	dir := filepath.Join(t.TempDir(), "quillon")
	code, out, errOut := runCLI(t, nil, "demo", "--out", dir, "--cell-deg", "0.25")
	if code != 0 {
		t.Fatalf("exit %d, stderr %q", code, errOut)
	}
	if !strings.Contains(out, "SYNTHETIC") || !strings.Contains(out, "Not for navigation") {
		t.Errorf("output lacks the SYNTHETIC label or the navigation caution:\n%s", out)
	}
	for _, name := range []string{"quillon-basin-synthetic-age.tif", "quillon-basin-synthetic-elevation.tif",
		"quillon-basin-synthetic-sediment-thickness.tif", "quillon-basin-synthetic-age.nc", "README-quillon-basin-synthetic.txt"} {
		p := filepath.Join(dir, name)
		if _, err := os.Stat(p); err != nil {
			t.Errorf("%s not written: %v", name, err)
		}
		if !strings.Contains(out, p) {
			t.Errorf("output does not list %s", p)
		}
	}
}

func TestDemoInstall(t *testing.T) {
	data := t.TempDir()
	for i := range 2 { // the second run finds everything in place
		code, out, errOut := runCLI(t, nil, "demo", "--install", "--data", data, "--cell-deg", "0.5")
		if code != 0 {
			t.Fatalf("run %d: exit %d, stderr %q", i+1, code, errOut)
		}
		if !strings.Contains(out, "installed dataset quillon-basin-synthetic") {
			t.Fatalf("run %d: %s", i+1, out)
		}
	}
}

func TestDemoBadUsage(t *testing.T) {
	for _, args := range [][]string{
		{"demo"},
		{"demo", "--out", t.TempDir(), "--cell-deg", "0.07"},
		{"demo", "--out", t.TempDir(), "--seed", "0"},
	} {
		code, _, errOut := runCLI(t, nil, args...)
		if code != 2 || strings.Count(errOut, "\n") != 1 {
			t.Errorf("%v: exit %d, stderr %q; want 2 and one sentence", args, code, errOut)
		}
	}
}
