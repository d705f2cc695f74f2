package gdal

import (
	"context"
	"encoding/binary"
	"os"
	"path/filepath"
	"testing"

	"ridgeflank/geo"
)

// tiffLayout reads the first image file directory of a little-endian TIFF (TIFF 6.0 §2;
// BigTIFF's 8-byte offsets): its offset and the tile offsets and byte counts.
func tiffLayout(t *testing.T, b []byte) (ifd int64, offsets, counts []int64) {
	t.Helper()
	le := binary.LittleEndian
	if len(b) < 16 || string(b[:2]) != "II" {
		t.Fatal("not a little-endian TIFF")
	}
	big := le.Uint16(b[2:]) == 43
	entry, countSize, valueSize := int64(12), int64(2), int64(4)
	if big {
		entry, countSize, valueSize = 20, 8, 8
		ifd = int64(le.Uint64(b[8:]))
	} else {
		ifd = int64(le.Uint32(b[4:]))
	}
	word := func(at, size int64) int64 {
		if size == 8 {
			return int64(le.Uint64(b[at:]))
		}
		return int64(le.Uint32(b[at:]))
	}
	n := int64(le.Uint16(b[ifd:]))
	if big {
		n = int64(le.Uint64(b[ifd:]))
	}
	for i := range n {
		e := ifd + countSize + i*entry
		tag, typ := le.Uint16(b[e:]), le.Uint16(b[e+2:])
		if tag != 324 && tag != 325 {
			continue
		}
		count := word(e+4, valueSize)
		size := int64(4)
		if typ == 16 {
			size = 8
		}
		at := e + 4 + valueSize
		if count*size > valueSize {
			at = word(at, valueSize)
		}
		vals := make([]int64, count)
		for k := range count {
			vals[k] = word(at+k*size, size)
		}
		if tag == 324 {
			offsets = vals
		} else {
			counts = vals
		}
	}
	return ifd, offsets, counts
}

// TestCOGStreamInPlace: without compression and overviews, with the destination known, the
// stream writes the file in place (no staging file) and it reads back as WriteCOG's COG does
// (values, lattice, units, name, sense, metadata), for grids of one tile (the tile tables
// held in the directory entries) and of several rows and columns of tiles cut at the edges,
// in both registrations. Its layout is a cloud-optimized GeoTIFF's (OGC 21-026, "COG"
// requirements class: the image file directory before the tiles, tiles in row-major order):
// directory at the start, tile offsets increasing after it, every tile 512×512×4 bytes.
func TestCOGStreamInPlace(t *testing.T) {
	for _, tc := range []struct {
		nx, ny int
		reg    geo.Registration
		block  int
	}{{300, 200, geo.CellCentre, 32 << 10}, {1100, 1030, geo.Node, 64 << 10}, {1100, 1030, geo.CellCentre, 96 << 20}} {
		t.Run(tc.reg.String(), func(t *testing.T) {
			dir := t.TempDir()
			stageDir := t.TempDir()
			g := streamGrid(tc.nx, tc.ny, tc.reg)
			m := Meta{Name: "depth", Units: "m", Sense: geo.DepthPositiveDown, Metadata: map[string]string{"kind": "depth", "ridgeflank_note": "in place"}}
			mem := filepath.Join(dir, "mem.tif")
			if err := WriteCOG(mem, g, m); err != nil {
				t.Fatal(err)
			}
			out := filepath.Join(dir, "direct.tif")
			s, err := NewCOGStream(*g, StreamOptions{BlockBytes: tc.block, StageDir: stageDir, Compress: "none", NoOverviews: true, Destination: out})
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			if s.direct == nil {
				t.Fatal("not written in place")
			}
			writeAllRows(t, s, g)
			if err := s.Finish(context.Background(), out, m, nil); err != nil {
				t.Fatal(err)
			}
			if left, _ := os.ReadDir(stageDir); len(left) != 0 {
				t.Errorf("staging files made: %v", left)
			}
			if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) != 0 {
				t.Errorf("temporary files left: %v", left)
			}
			sameGridFile(t, out, mem, g)
			raw, err := os.ReadFile(out)
			if err != nil {
				t.Fatal(err)
			}
			ifd, offs, counts := tiffLayout(t, raw)
			tiles := ((tc.nx + 511) / 512) * ((tc.ny + 511) / 512)
			if ifd != 8 && ifd != 16 {
				t.Errorf("directory at %d, want right after the TIFF header", ifd)
			}
			if len(offs) != tiles || len(counts) != tiles {
				t.Fatalf("%d tile offsets, %d counts, want %d", len(offs), len(counts), tiles)
			}
			for i := range offs {
				if counts[i] != 512*512*4 {
					t.Errorf("tile %d: %d bytes", i, counts[i])
				}
				if i == 0 && offs[0] <= ifd || i > 0 && offs[i] != offs[i-1]+counts[i-1] {
					t.Errorf("tile %d at %d (previous at %d)", i, offs[i], offs[max(i-1, 0)])
				}
			}
			if end := offs[tiles-1] + counts[tiles-1]; end != int64(len(raw)) {
				t.Errorf("file of %d bytes, tiles end at %d", len(raw), end)
			}
			d, err := Open(out, ReadOptions{})
			if err != nil {
				t.Fatal(err)
			}
			defer d.Close()
			if lv, err := d.Levels(); err != nil || len(lv) != 1 {
				t.Errorf("levels %v (%v), want the full resolution only", lv, err)
			}
		})
	}
}

// TestCOGStreamInPlaceElsewhere: a stream written in place and finished to another path than
// its destination (or given a header too large for the room left for it) writes the header
// and a copy of the tiles there, the same values.
func TestCOGStreamInPlaceElsewhere(t *testing.T) {
	dir := t.TempDir()
	g := streamGrid(700, 600, geo.CellCentre)
	big := make([]byte, directSlack+10000)
	for i := range big {
		big[i] = 'a' + byte(i%26)
	}
	for _, tc := range []struct {
		name string
		md   map[string]string
		to   string
	}{{"other path", nil, "other.tif"}, {"large header", map[string]string{"ridgeflank_long": string(big)}, "planned.tif"}} {
		t.Run(tc.name, func(t *testing.T) {
			planned := filepath.Join(dir, "planned.tif")
			s, err := NewCOGStream(*g, StreamOptions{BlockBytes: 64 << 10, Compress: "none", NoOverviews: true, Destination: planned})
			if err != nil {
				t.Fatal(err)
			}
			defer s.Close()
			writeAllRows(t, s, g)
			out := filepath.Join(dir, tc.to)
			if err := s.Finish(context.Background(), out, Meta{Units: "m", Metadata: tc.md}, nil); err != nil {
				t.Fatal(err)
			}
			b, mb := mustRead(t, out)
			sameHeader(t, b, g)
			sameData(t, b, g)
			for k, v := range tc.md {
				if mb.Metadata[k] != v {
					t.Errorf("metadata %s: %d bytes, want %d", k, len(mb.Metadata[k]), len(v))
				}
			}
			raw, _ := os.ReadFile(out)
			if ifd, offs, _ := tiffLayout(t, raw); ifd > 16 || offs[0] <= ifd {
				t.Errorf("directory at %d, first tile at %d", ifd, offs[0])
			}
			s.Close()
			if left, _ := filepath.Glob(filepath.Join(dir, ".*")); len(left) != 0 {
				t.Errorf("temporary files left: %v", left)
			}
			os.Remove(out)
		})
	}
}

// TestCOGStreamInPlaceBigTIFF: the in-place writer's BigTIFF form (chosen for files that can
// pass 4 GiB; forced here on a small grid) reads back with the same values, its tile tables
// of 8-byte entries filled in (BigTIFF: magic 43, 8-byte offsets).
func TestCOGStreamInPlaceBigTIFF(t *testing.T) {
	dir := t.TempDir()
	g := streamGrid(1100, 600, geo.CellCentre)
	out := filepath.Join(dir, "big.tif")
	s, err := NewCOGStream(*g, StreamOptions{BlockBytes: 64 << 10, Compress: "none", NoOverviews: true, Destination: out})
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	s.direct.bigTIFF = true
	writeAllRows(t, s, g)
	if err := s.Finish(context.Background(), out, Meta{Units: "m"}, nil); err != nil {
		t.Fatal(err)
	}
	raw, err := os.ReadFile(out)
	if err != nil {
		t.Fatal(err)
	}
	if binary.LittleEndian.Uint16(raw[2:]) != 43 {
		t.Fatalf("TIFF magic %d, want 43 (BigTIFF)", binary.LittleEndian.Uint16(raw[2:]))
	}
	ifd, offs, counts := tiffLayout(t, raw)
	if ifd != 16 || len(offs) != 6 || len(counts) != 6 || offs[5]+counts[5] != int64(len(raw)) {
		t.Errorf("directory at %d, %d tiles, last ending at %d of %d bytes", ifd, len(offs), offs[len(offs)-1]+counts[len(counts)-1], len(raw))
	}
	sameAsGrid(t, out, g)
}

// TestStreamCOGOptions: the creation options of each compression and overview choice.
func TestStreamCOGOptions(t *testing.T) {
	has := func(opts []string, o string) bool {
		for _, x := range opts {
			if x == o {
				return true
			}
		}
		return false
	}
	for _, tc := range []struct {
		compress  string
		noOvr     bool
		want, not []string
	}{
		{"", false, []string{"COMPRESS=DEFLATE", "PREDICTOR=YES", "OVERVIEWS=AUTO"}, nil},
		{"zstd", false, []string{"COMPRESS=ZSTD", "LEVEL=1", "PREDICTOR=YES"}, []string{"COMPRESS=DEFLATE"}},
		{"none", true, []string{"COMPRESS=NONE", "OVERVIEWS=NONE"}, []string{"PREDICTOR=YES", "COMPRESS=DEFLATE", "OVERVIEWS=AUTO"}},
		{"deflate", true, []string{"COMPRESS=DEFLATE", "OVERVIEWS=NONE"}, []string{"OVERVIEWS=AUTO"}},
	} {
		got, err := streamCOGOptions(cogOptions, tc.compress, tc.noOvr)
		if err != nil {
			t.Fatal(err)
		}
		for _, o := range tc.want {
			if !has(got, o) {
				t.Errorf("%q/%v: %v lacks %s", tc.compress, tc.noOvr, got, o)
			}
		}
		for _, o := range tc.not {
			if has(got, o) {
				t.Errorf("%q/%v: %v has %s", tc.compress, tc.noOvr, got, o)
			}
		}
	}
	if _, err := streamCOGOptions(cogOptions, "lzw", false); err == nil {
		t.Error("lzw accepted")
	}
}
