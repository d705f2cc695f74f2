package gdal

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
)

// TestRawTilesMatchGDAL: GeoTIFFs made by gdal_translate from one ASCII grid (value
// 1000·row + col, row 0 north, some no-data cells), read with ReadOptions.RawTiles, give every
// cell as GDAL reads it and as the ASCII text holds it, for row blocks starting anywhere
// (across tile rows, partial tiles at the right and bottom edges, strips); files that cannot be
// read raw (compressed, big-endian, not float32) are read by GDAL with the option set.
func TestRawTilesMatchGDAL(t *testing.T) {
	needTool(t, "gdal_translate")
	dir := t.TempDir()
	const nx, ny, noData = 75, 45, -9999
	var b strings.Builder
	fmt.Fprintf(&b, "ncols %d\nnrows %d\nxllcorner -20\nyllcorner 10\ncellsize 0.25\nNODATA_value %d\n", nx, ny, noData)
	want := make([]float32, nx*ny)
	for r := range ny {
		for c := range nx {
			v := float32(1000*r + c)
			if (r*nx+c)%37 == 5 {
				b.WriteString("-9999 ")
				v = float32(math.NaN())
			} else {
				fmt.Fprintf(&b, "%g ", v)
			}
			want[r*nx+c] = v
		}
		b.WriteString("\n")
	}
	asc := filepath.Join(dir, "g.asc")
	if err := os.WriteFile(asc, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		co   []string
		raw  bool
	}{
		{"tiled", []string{"-ot", "Float32", "-co", "TILED=YES", "-co", "BLOCKXSIZE=32", "-co", "BLOCKYSIZE=16"}, true},
		{"tiled-one-column-of-tiles", []string{"-ot", "Float32", "-co", "TILED=YES", "-co", "BLOCKXSIZE=80", "-co", "BLOCKYSIZE=16"}, true},
		{"strips", []string{"-ot", "Float32", "-co", "BLOCKYSIZE=7"}, true},
		{"one-strip", []string{"-ot", "Float32", "-co", "BLOCKYSIZE=45"}, true},
		{"deflate", []string{"-ot", "Float32", "-co", "TILED=YES", "-co", "COMPRESS=DEFLATE"}, false},
		{"big-endian", []string{"-ot", "Float32", "-co", "TILED=YES", "-co", "ENDIANNESS=BIG"}, false},
		{"float64", []string{"-ot", "Float64", "-co", "TILED=YES"}, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			p := filepath.Join(dir, tc.name+".tif")
			run(t, "gdal_translate", append(append([]string{"-q"}, tc.co...), asc, p)...)
			viaGDAL, err := Open(p, ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			defer viaGDAL.Close()
			raw, err := Open(p, ReadOptions{RawTiles: true})
			if err != nil {
				t.Fatal(err)
			}
			defer raw.Close()
			if (raw.raw != nil) != tc.raw {
				t.Fatalf("read raw: %v, want %v", raw.raw != nil, tc.raw)
			}
			if viaGDAL.raw != nil {
				t.Fatal("read raw without the option")
			}
			for _, rows := range []int{1, 5, 16, 17, ny} {
				for row0 := 0; row0 < ny; row0 += rows {
					n := min(rows, ny-row0)
					got, ref := make([]float32, n*nx), make([]float32, n*nx)
					if err := raw.ReadRows(row0, got); err != nil {
						t.Fatal(err)
					}
					if err := viaGDAL.ReadRows(row0, ref); err != nil {
						t.Fatal(err)
					}
					for i := range got {
						w := want[row0*nx+i]
						if math.Float32bits(got[i]) != math.Float32bits(ref[i]) || (w == w) != (got[i] == got[i]) || w == w && got[i] != w {
							t.Fatalf("blocks of %d rows, row %d col %d: raw %g, GDAL %g, ASCII %g", rows, row0+i/nx, i%nx, got[i], ref[i], w)
						}
					}
				}
			}
		})
	}
}
