package server

import (
	"os"
	"path/filepath"
	"testing"
	"time"
)

func TestSweepExports(t *testing.T) {
	dir := t.TempDir()
	old, fresh, other := filepath.Join(dir, "export-old.tif"), filepath.Join(dir, "export-new.tif"), filepath.Join(dir, "keep.txt")
	for _, p := range []string{old, fresh, other} {
		if err := os.WriteFile(p, []byte("x"), 0o644); err != nil {
			t.Fatal(err)
		}
	}
	past := time.Now().Add(-ExportRetention - time.Hour)
	os.Chtimes(old, past, past)
	os.Chtimes(other, past, past)
	n, err := SweepExports(dir)
	if err != nil || n != 1 {
		t.Fatalf("removed %d (%v), want 1", n, err)
	}
	for p, want := range map[string]bool{old: false, fresh: true, other: true} {
		if _, err := os.Stat(p); (err == nil) != want {
			t.Errorf("%s exists = %v, want %v", filepath.Base(p), err == nil, want)
		}
	}
	if n, err := SweepExports(filepath.Join(dir, "absent")); n != 0 || err != nil {
		t.Errorf("absent dir: %d, %v", n, err)
	}
}
