package ingest

import (
	"bytes"
	"context"
	"math"
	"os"
	"path/filepath"
	"testing"
	"time"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

// FuzzOpenReader feeds corrupt grid files to the import reader: a tiny valid GeoTIFF (COG) and
// netCDF-CF file, written here with GDAL, are the seeds, and the fuzzer mutates their bytes.
// GDAL's errors go to the error handler of geo/gdal (collected, never printed or fatal), so
// every file must either be refused with a fault.InvalidGrid naming the file (or the variable)
// or give a grid with a sane lattice whose rows read back as NaN or values within the kind's
// plausible range.
//
//	go test ./ingest -run '^$' -fuzz '^FuzzOpenReader$' -fuzztime 60s
func FuzzOpenReader(f *testing.F) {
	// 4 × 3 cells of SYNTHETIC seafloor age (Ma) with one no-data cell.
	g := geo.NewGrid(4, 3, 170.5, -10.5, 0.5, 0.5, geo.CellCentre)
	for i := range g.Data {
		g.Data[i] = float32(10 + 3*i)
	}
	g.Data[5] = float32(math.NaN())
	cog, err := gdal.EncodeCOG(g, gdal.Meta{Units: "Ma", Title: "fuzz seed (SYNTHETIC)"})
	if err != nil {
		f.Fatal(err)
	}
	nc, err := gdal.EncodeNetCDF(g, gdal.Meta{Units: "Ma", Name: "age", Title: "fuzz seed (SYNTHETIC)"})
	if err != nil {
		f.Fatal(err)
	}
	f.Add(cog, uint8(0))
	f.Add(nc, uint8(1))
	f.Add(cog[:len(cog)/2], uint8(0))
	f.Add(nc[:len(nc)/2], uint8(1))
	f.Add([]byte{}, uint8(0))
	f.Add([]byte("CDF\x01"), uint8(1))
	f.Add([]byte("II*\x00\x08\x00\x00\x00"), uint8(0))
	f.Add(cog, uint8(1)) // a GeoTIFF named .nc: GDAL goes by content
	f.Fuzz(func(t *testing.T, data []byte, ext uint8) {
		if len(data) > 64<<10 {
			return // keep inputs small
		}
		name := "grid.tif"
		if ext%2 == 1 {
			name = "grid.nc"
		}
		start := time.Now()
		defer func() {
			if el := time.Since(start); el > 20*time.Second {
				t.Errorf("reading this %d-byte file took %v", len(data), el)
			}
		}()
		p := filepath.Join(t.TempDir(), name)
		if err := os.WriteFile(p, data, 0o644); err != nil {
			t.Fatal(err)
		}
		seed := bytes.Equal(data, cog) || bytes.Equal(data, nc)
		rd, err := OpenReader(context.Background(), Request{Path: p, Kind: store.KindAge}, nil)
		if err != nil {
			if seed {
				t.Fatalf("the unchanged seed file is refused: %v", err)
			}
			checkGridFault(t, err)
			return
		}
		defer rd.Close()
		h := rd.Header()
		if h.NX <= 0 || h.NY <= 0 || !(h.DX > 0) || !(h.DY > 0) || math.IsInf(h.DX, 0) || math.IsInf(h.DY, 0) ||
			math.IsNaN(h.West) || math.IsNaN(h.North) || math.IsInf(h.West, 0) || math.IsInf(h.North, 0) {
			t.Fatalf("grid opened with an unusable lattice: %d × %d, west %v north %v, spacing %v × %v", h.NX, h.NY, h.West, h.North, h.DX, h.DY)
		}
		if rd.Unit() != "Ma" {
			t.Fatalf("age grid read in %q, want Ma (the stored unit)", rd.Unit())
		}
		// Read at most 64k cells: a corrupt header may claim a huge grid.
		if h.NX > 1<<16 {
			return
		}
		rows := min(h.NY, max(1, (1<<16)/h.NX))
		dst := make([]float32, rows*h.NX)
		if err := rd.ReadRows(0, dst); err != nil {
			checkGridFault(t, err)
			return
		}
		lo, hi, _ := PlausibleRange(store.KindAge)
		for i, v := range dst {
			if !math.IsNaN(float64(v)) && (float64(v) < lo || float64(v) > hi) {
				t.Fatalf("cell %d = %v accepted, outside the plausible age range %v..%v", i, v, lo, hi)
			}
		}
		if seed { // round trip: the file written here reads back as the grid written
			for i, v := range dst {
				w := g.Data[i]
				if v != w && !(math.IsNaN(float64(v)) && math.IsNaN(float64(w))) {
					t.Fatalf("seed cell %d reads %v, written %v", i, v, w)
				}
			}
		}
		if rows == h.NY && rd.ContentID() == "" {
			t.Fatal("every row was read in order but there is no content id")
		}
	})
}

// checkGridFault asserts err is the reader's refusal: a fault.InvalidGrid about the file or the
// variable with a message.
func checkGridFault(t *testing.T, err error) {
	t.Helper()
	fe, ok := fault.As(err)
	if !ok {
		t.Fatalf("error %v (%T) is not a *fault.Error", err, err)
	}
	if fe.Kind != fault.InvalidGrid && fe.Kind != fault.LimitExceeded {
		t.Fatalf("fault kind %q, want %q: %v", fe.Kind, fault.InvalidGrid, err)
	}
	if fe.Field != "file" && fe.Field != "variable" && fe.Field != "units" {
		t.Fatalf("fault names field %q, want file, variable or units: %v", fe.Field, err)
	}
	if err.Error() == "" {
		t.Fatal("empty error message")
	}
}
