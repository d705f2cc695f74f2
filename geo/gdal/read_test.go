package gdal

import (
	"bytes"
	"errors"
	"fmt"
	"io/fs"
	"math"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"testing"
	"time"

	"ridgeflank/geo"
)

// The test inputs below are made with the gdal-bin command-line tools from an ASCII grid we
// write by hand, so the reader is checked against files it did not write. The ASCII grid layout
// (ncols/nrows/xllcorner/yllcorner/cellsize/NODATA_value header; xllcorner/yllcorner = outer
// lower-left corner; first data line = northernmost row) is the one GDAL's AAIGrid driver
// documentation describes.

const ascNoData = -9999

// ascGrid is the reference grid: 5 columns × 4 rows of 0.5° cells whose outer lower-left
// corner is at 170°E, 30°S; value = 100·row + col (row 0 north), one no-data cell.
func ascGrid() (text string, want *geo.Grid) {
	const nx, ny, cs = 5, 4, 0.5
	want = geo.NewGrid(nx, ny, 170+cs/2, -30+ny*cs-cs/2, cs, cs, geo.CellCentre)
	var b strings.Builder
	fmt.Fprintf(&b, "ncols %d\nnrows %d\nxllcorner 170\nyllcorner -30\ncellsize %g\nNODATA_value %d\n", nx, ny, cs, ascNoData)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			v := float32(100*r + c)
			if r == 1 && c == 2 {
				b.WriteString(strconv.Itoa(ascNoData) + " ")
				continue
			}
			want.Set(c, r, v)
			fmt.Fprintf(&b, "%g ", v)
		}
		b.WriteString("\n")
	}
	return b.String(), want
}

func writeASC(t testing.TB, dir string) (string, *geo.Grid) {
	t.Helper()
	text, want := ascGrid()
	p := filepath.Join(dir, "ref.asc")
	if err := os.WriteFile(p, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	return p, want
}

func needTool(t testing.TB, name string) {
	t.Helper()
	if _, err := exec.LookPath(name); err != nil {
		t.Skipf("%s not installed (Debian package gdal-bin / netcdf-bin)", name)
	}
}

func run(t testing.TB, name string, args ...string) string {
	t.Helper()
	needTool(t, name)
	out, err := exec.Command(name, args...).CombinedOutput()
	if err != nil {
		t.Fatalf("%s %v: %v\n%s", name, args, err, out)
	}
	return string(out)
}

// mustRead is Read(path, opt...), failing the test on an error.
func mustRead(t *testing.T, path string, opt ...ReadOptions) (*geo.Grid, Meta) {
	t.Helper()
	g, m, err := Read(path, opt...)
	if err != nil {
		t.Fatal(err)
	}
	return g, m
}

func sameData(t *testing.T, got, want *geo.Grid) {
	t.Helper()
	if got.NX != want.NX || got.NY != want.NY {
		t.Fatalf("size %d×%d, want %d×%d", got.NX, got.NY, want.NX, want.NY)
	}
	for i := range want.Data {
		g, w := got.Data[i], want.Data[i]
		if (g != g) != (w != w) || (w == w && g != w) {
			t.Fatalf("cell %d (col %d row %d) = %g, want %g", i, i%want.NX, i/want.NX, g, w)
		}
	}
}

func sameHeader(t *testing.T, got, want *geo.Grid) {
	t.Helper()
	const tol = 1e-9
	if math.Abs(got.West-want.West) > tol || math.Abs(got.North-want.North) > tol ||
		math.Abs(got.DX-want.DX) > tol || math.Abs(got.DY-want.DY) > tol || got.Registration != want.Registration {
		t.Fatalf("header west %.12g north %.12g dx %g dy %g %v, want west %.12g north %.12g dx %g dy %g %v",
			got.West, got.North, got.DX, got.DY, got.Registration, want.West, want.North, want.DX, want.DY, want.Registration)
	}
}

func TestReadFormatsMadeByGDALTools(t *testing.T) {
	dir := t.TempDir()
	asc, want := writeASC(t, dir)
	tests := []struct {
		name   string
		args   []string // gdal_translate arguments; nil = read the ASCII grid itself
		ext    string
		reg    geo.Registration
		driver string
	}{
		{"ASCII grid without CRS", nil, "", geo.CellCentre, "AAIGrid"},
		{"GeoTIFF DEFLATE with nodata", []string{"-of", "GTiff", "-co", "COMPRESS=DEFLATE", "-a_srs", "EPSG:4326"}, ".tif", geo.CellCentre, "GTiff"},
		{"GeoTIFF PixelIsPoint", []string{"-of", "GTiff", "-a_srs", "EPSG:4326", "-mo", "AREA_OR_POINT=Point"}, ".tif", geo.Node, "GTiff"},
		// netCDF without registration hints: CF coordinates are sample points → node.
		{"netCDF classic", []string{"-of", "netCDF", "-co", "FORMAT=NC", "-a_srs", "EPSG:4326"}, ".nc", geo.Node, "netCDF"},
		{"netCDF-4 deflate", []string{"-of", "netCDF", "-co", "FORMAT=NC4", "-co", "COMPRESS=DEFLATE", "-a_srs", "EPSG:4326"}, ".nc", geo.Node, "netCDF"},
		{"netCDF-4 stored top-down", []string{"-of", "netCDF", "-co", "FORMAT=NC4C", "-co", "WRITE_BOTTOMUP=NO", "-a_srs", "EPSG:4326"}, ".nc", geo.Node, "netCDF"},
		{"netCDF-4 without a netCDF extension", []string{"-of", "netCDF", "-co", "FORMAT=NC4C", "-a_srs", "EPSG:4326"}, ".grid", geo.Node, "netCDF"},
	}
	for i, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			path := asc
			if tc.args != nil {
				path = filepath.Join(dir, fmt.Sprintf("f%d%s", i, tc.ext))
				if tc.ext == ".grid" { // written as .nc, then renamed
					tmp := path + ".nc"
					run(t, "gdal_translate", append(append([]string{"-q"}, tc.args...), asc, tmp)...)
					if err := os.Rename(tmp, path); err != nil {
						t.Fatal(err)
					}
				} else {
					run(t, "gdal_translate", append(append([]string{"-q"}, tc.args...), asc, path)...)
				}
			}
			g, m := mustRead(t, path)
			w := want.Clone()
			w.Registration = tc.reg
			sameHeader(t, g, w)
			sameData(t, g, w)
			if m.Driver != tc.driver {
				t.Errorf("driver %q, want %q", m.Driver, tc.driver)
			}
			if m.NoData == nil || *m.NoData != ascNoData {
				t.Errorf("nodata %v, want %d", m.NoData, ascNoData)
			}
		})
	}
}

// CF-1.8 §8.1 packed data: unpacked = packed·scale_factor + add_offset; no-data is compared
// with the packed value.
func TestReadPackedNetCDF(t *testing.T) {
	dir := t.TempDir()
	asc, want := writeASC(t, dir)
	p := filepath.Join(dir, "packed.nc")
	run(t, "gdal_translate", "-q", "-of", "netCDF", "-ot", "Int16", "-a_scale", "0.5", "-a_offset", "-1000", "-a_srs", "EPSG:4326", asc, p)
	out := run(t, "ncdump", "-h", p)
	if !strings.Contains(out, "scale_factor = 0.5") || !strings.Contains(out, "add_offset = -1000.") {
		t.Fatalf("gdal_translate did not pack:\n%s", out)
	}
	g, _ := mustRead(t, p)
	w := want.Clone()
	w.Registration = geo.Node
	for i, v := range w.Data {
		w.Data[i] = v*0.5 - 1000
	}
	sameHeader(t, g, w)
	sameData(t, g, w)
}

func nsGradient(reg geo.Registration) *geo.Grid {
	g := geo.NewGrid(6, 5, -20, 50, 2, 2, reg)
	for r := 0; r < g.NY; r++ {
		for c := 0; c < g.NX; c++ {
			g.Set(c, r, float32(g.Lat(r)))
		}
	}
	return g
}

// netCDF readers conventionally expect latitude increasing with the row index (CF data are
// usually written south to north); GDAL writes that way and returns rows north first. Checked
// with ncdump, the netCDF library's own dump tool (Unidata netCDF User Guide).
func TestNetCDFRowOrder(t *testing.T) {
	dir := t.TempDir()
	g := nsGradient(geo.CellCentre)
	p := filepath.Join(dir, "gradient.nc")
	if err := WriteNetCDF(p, g, Meta{Name: "lat_value", Units: "degree_north"}); err != nil {
		t.Fatal(err)
	}
	back, _ := mustRead(t, p)
	t.Run("row 0 is north after reading", func(t *testing.T) {
		if back.North != 50 || back.At(0, 0) != 50 || back.At(0, back.NY-1) != 42 {
			t.Errorf("north %g, row 0 = %g, last row = %g; want 50, 50, 42", back.North, back.At(0, 0), back.At(0, back.NY-1))
		}
	})
	t.Run("stored south to north (ncdump)", func(t *testing.T) {
		out := run(t, "ncdump", "-v", "lat,lat_value", p)
		data := out[strings.Index(out, "data:"):]
		lat := numbersAfter(data, "lat =")
		if len(lat) != 5 || lat[0] != 42 || lat[4] != 50 {
			t.Fatalf("lat variable %v, want 42..50 ascending", lat)
		}
		vals := numbersAfter(data, "lat_value =")
		if len(vals) != 30 || vals[0] != 42 || vals[29] != 50 {
			t.Fatalf("first stored row %v..., want the southern row (42) first", vals[:min(6, len(vals))])
		}
	})
}

// numbersAfter parses the comma-separated numbers following key up to ";" in ncdump output.
func numbersAfter(s, key string) []float64 {
	i := strings.Index(s, key)
	if i < 0 {
		return nil
	}
	s = s[i+len(key):]
	s = s[:strings.Index(s, ";")]
	var out []float64
	for _, f := range strings.FieldsFunc(s, func(r rune) bool { return r == ',' || r == ' ' || r == '\n' }) {
		if v, err := strconv.ParseFloat(f, 64); err == nil {
			out = append(out, v)
		}
	}
	return out
}

func TestRoundTrip(t *testing.T) {
	nan := float32(math.NaN())
	regional := func(reg geo.Registration) *geo.Grid {
		g := geo.NewGrid(7, 5, 170.25, -28.25, 0.5, 0.5, reg)
		for i := range g.Data {
			g.Data[i] = float32(i)*1.5 - 3000
		}
		g.Data[3], g.Data[17] = nan, nan
		return g
	}
	global360 := geo.NewGrid(36, 18, 5, 85, 10, 10, geo.CellCentre)
	globalNode := geo.NewGrid(37, 19, -180, 90, 10, 10, geo.Node) // nodes on both poles and both seams
	for _, g := range []*geo.Grid{global360, globalNode} {
		for r := 0; r < g.NY; r++ {
			for c := 0; c < g.NX; c++ {
				g.Set(c, r, float32(g.Lat(r)*1000+geo.LonTo360(g.Lon(c))))
			}
		}
	}
	grids := []struct {
		name string
		g    *geo.Grid
	}{
		{"regional cell-centre with NaN", regional(geo.CellCentre)},
		{"regional node with NaN", regional(geo.Node)},
		{"global 0..360 cell-centre", global360},
		{"global node pole to pole", globalNode},
	}
	meta := Meta{Name: "depth", LongName: "observed depth (SYNTHETIC)", Units: "m", Title: "Quillon Basin test grid (SYNTHETIC)",
		Source: "unit test", History: "2026-01-01T00:00:00Z made by hand", Sense: geo.DepthPositiveDown}
	formats := []struct {
		name  string
		ext   string
		write func(string, *geo.Grid, Meta) error
	}{
		{"COG", ".tif", WriteCOG},
		{"netCDF", ".nc", WriteNetCDF},
	}
	for _, f := range formats {
		for _, gc := range grids {
			t.Run(f.name+"/"+gc.name, func(t *testing.T) {
				p := filepath.Join(t.TempDir(), "grid"+f.ext)
				if err := f.write(p, gc.g, meta); err != nil {
					t.Fatal(err)
				}
				got, m := mustRead(t, p)
				sameHeader(t, got, gc.g)
				sameData(t, got, gc.g)
				if m.Name != meta.Name || m.Units != meta.Units || m.LongName != meta.LongName || m.Title != meta.Title ||
					m.Source != meta.Source || m.Sense != meta.Sense {
					t.Errorf("meta %+v", m)
				}
				if !strings.HasPrefix(m.History, meta.History+"\n") || !strings.Contains(m.History, "ridgeflank: written as") {
					t.Errorf("history %q does not keep the old line and add ours", m.History)
				}
				if m.CRS != "WGS 84" {
					t.Errorf("CRS %q", m.CRS)
				}
			})
		}
	}
	t.Run("COG layout", func(t *testing.T) {
		p := filepath.Join(t.TempDir(), "c.tif")
		big := geo.NewGrid(1100, 600, 0.05, 29.95, 0.1, 0.1, geo.CellCentre)
		for i := range big.Data {
			big.Data[i] = float32(i % 977)
		}
		if err := WriteCOG(p, big, Meta{}); err != nil {
			t.Fatal(err)
		}
		info := run(t, "gdalinfo", p)
		for _, want := range []string{"LAYOUT=COG", "COMPRESSION=DEFLATE", "Block=512x512", "Overviews: 550x300", "NoData Value=nan", `ID["EPSG",4326]`} {
			if !strings.Contains(info, want) {
				t.Errorf("gdalinfo lacks %q", want)
			}
		}
	})
	t.Run("netCDF CF attributes", func(t *testing.T) {
		p := filepath.Join(t.TempDir(), "c.nc")
		if err := WriteNetCDF(p, regional(geo.CellCentre), meta); err != nil {
			t.Fatal(err)
		}
		hdr := run(t, "ncdump", "-h", p)
		for _, want := range []string{`:Conventions = "CF-1.8"`, `depth:units = "m"`, `depth:long_name = "observed depth (SYNTHETIC)"`,
			`lon:units = "degrees_east"`, `lat:units = "degrees_north"`, `:title = "Quillon Basin test grid (SYNTHETIC)"`,
			`:source = "unit test"`, `depth:_FillValue = 9.96921e+36f`, `:grid_registration = "cell-centre"`} {
			if !strings.Contains(hdr, want) {
				t.Errorf("ncdump -h lacks %q", want)
			}
		}
		if strings.Contains(hdr, "tmp-") || strings.Contains(hdr, "GDAL CreateCopy") {
			t.Errorf("temporary path or tool history leaked into the file:\n%s", hdr)
		}
	})
	t.Run("custom nodata", func(t *testing.T) {
		p := filepath.Join(t.TempDir(), "nd.tif")
		nd := -99999.0
		g := regional(geo.CellCentre)
		if err := WriteCOG(p, g, Meta{NoData: &nd}); err != nil {
			t.Fatal(err)
		}
		got, m := mustRead(t, p)
		if m.NoData == nil || *m.NoData != nd {
			t.Errorf("nodata %v", m.NoData)
		}
		sameData(t, got, g)
		if !math.IsNaN(float64(g.Data[3])) {
			t.Error("writer modified the caller's grid")
		}
	})
}

func TestEncode(t *testing.T) {
	g := nsGradient(geo.Node)
	g.Data[4] = float32(math.NaN())
	tests := []struct {
		name   string
		encode func(*geo.Grid, Meta) ([]byte, error)
		magic  [][]byte
		ext    string
	}{
		// TIFF magic (TIFF 6.0 §2, little-endian "II*\0"; BigTIFF "II+\0"), HDF5 signature
		// (HDF5 File Format Specification, superblock signature) for netCDF-4.
		{"COG", EncodeCOG, [][]byte{[]byte("II*\x00"), []byte("II+\x00")}, ".tif"},
		{"netCDF", EncodeNetCDF, [][]byte{[]byte("\x89HDF\r\n\x1a\n")}, ".nc"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			for i := 0; i < 3; i++ { // repeated: unique in-memory names, nothing left behind
				b, err := tc.encode(g, Meta{Name: "lat_value"})
				if err != nil {
					t.Fatal(err)
				}
				ok := false
				for _, m := range tc.magic {
					ok = ok || bytes.HasPrefix(b, m)
				}
				if !ok {
					t.Fatalf("bytes start %q", b[:min(8, len(b))])
				}
				p := filepath.Join(t.TempDir(), "e"+tc.ext)
				if err := os.WriteFile(p, b, 0o644); err != nil {
					t.Fatal(err)
				}
				sameAsGrid(t, p, g)
			}
		})
	}
}

func TestMultiVariableNetCDF(t *testing.T) {
	dir := t.TempDir()
	asc, want := writeASC(t, dir)
	// a second grid = first + 1000, then a two-variable netCDF (Band1, Band2)
	text, _ := ascGrid()
	lines := strings.Split(text, "\n")
	for i := 6; i < len(lines); i++ {
		f := strings.Fields(lines[i])
		for j, s := range f {
			if v, _ := strconv.Atoi(s); v != ascNoData {
				f[j] = strconv.Itoa(v + 1000)
			}
		}
		lines[i] = strings.Join(f, " ")
	}
	asc2 := filepath.Join(dir, "second.asc")
	if err := os.WriteFile(asc2, []byte(strings.Join(lines, "\n")), 0o644); err != nil {
		t.Fatal(err)
	}
	vrt := filepath.Join(dir, "both.vrt")
	run(t, "gdalbuildvrt", "-q", "-separate", vrt, asc, asc2)
	nc := filepath.Join(dir, "two.nc")
	run(t, "gdal_translate", "-q", "-of", "netCDF", "-co", "FORMAT=NC4C", "-a_srs", "EPSG:4326", vrt, nc)
	want2 := want.Clone()
	for i, v := range want2.Data {
		want2.Data[i] = v + 1000
	}
	want.Registration, want2.Registration = geo.Node, geo.Node

	t.Run("no variable named lists them", func(t *testing.T) {
		_, _, err := Read(nc)
		if !errors.Is(err, ErrSeveralVariables) || !strings.Contains(err.Error(), "Band1") || !strings.Contains(err.Error(), "Band2") {
			t.Fatalf("err = %v", err)
		}
	})
	t.Run("variable option", func(t *testing.T) {
		g, m := mustRead(t, nc, ReadOptions{Variable: "Band2"})
		sameHeader(t, g, want2)
		sameData(t, g, want2)
		if m.Name != "Band2" {
			t.Errorf("name %q", m.Name)
		}
	})
	t.Run("NETCDF:file:variable form", func(t *testing.T) {
		g, _ := mustRead(t, `NETCDF:"`+nc+`":Band1`)
		sameData(t, g, want)
	})
	t.Run("unknown variable", func(t *testing.T) {
		_, _, err := Read(nc, ReadOptions{Variable: "age"})
		if !errors.Is(err, ErrNoSuchVariable) || !strings.Contains(err.Error(), "Band1") {
			t.Fatalf("err = %v", err)
		}
	})
	t.Run("variable must match a single-variable file", func(t *testing.T) {
		one := filepath.Join(dir, "one.nc")
		run(t, "gdal_translate", "-q", "-of", "netCDF", "-a_srs", "EPSG:4326", asc, one)
		if _, _, err := Read(one, ReadOptions{Variable: "age"}); !errors.Is(err, ErrNoSuchVariable) {
			t.Fatalf("err = %v", err)
		}
		if _, _, err := Read(one, ReadOptions{Variable: "Band1"}); err != nil {
			t.Fatal(err)
		}
	})
}

// BAG (Bathymetry Attributed Grid, Open Navigation Surface) written by GDAL's BAG driver in a
// geographic CRS: band 1 elevation (positive up), band 2 uncertainty; node registration
// (AREA_OR_POINT=Point).
func TestReadBAG(t *testing.T) {
	dir := t.TempDir()
	asc, want := writeASC(t, dir)
	bag := filepath.Join(dir, "survey.bag")
	run(t, "gdal_translate", "-q", "-of", "BAG", "-a_srs", "EPSG:4326", asc, bag)
	g, m := mustRead(t, bag)
	want.Registration = geo.Node
	sameHeader(t, g, want)
	sameData(t, g, want)
	if m.Driver != "BAG" || m.Sense != geo.ElevationPositiveUp || m.Name != "elevation" {
		t.Errorf("driver %q sense %v name %q", m.Driver, m.Sense, m.Name)
	}
	u, _ := mustRead(t, bag, ReadOptions{Band: 2})
	for i, v := range u.Data {
		if v == v {
			t.Fatalf("uncertainty cell %d = %g, want no data (none was written)", i, v)
		}
	}
	if _, _, err := Read(bag, ReadOptions{Band: 3}); err == nil {
		t.Error("band 3 of a BAG accepted")
	}
}

func TestReadRejects(t *testing.T) {
	dir := t.TempDir()
	asc, _ := writeASC(t, dir)
	utm := filepath.Join(dir, "utm.tif")
	// 5×4 cells of 500 m in UTM zone 31N, upper-left corner at E 500000, N 5000000.
	run(t, "gdal_translate", "-q", "-a_srs", "EPSG:32631", "-a_ullr", "500000", "5000000", "502500", "4998000", asc, utm)
	rotated := filepath.Join(dir, "rotated.vrt")
	noGeo := filepath.Join(dir, "nogeo.vrt")
	vrt := func(gt string) string {
		s := `<VRTDataset rasterXSize="5" rasterYSize="4">`
		if gt != "" {
			s += `<SRS>EPSG:4326</SRS><GeoTransform>` + gt + `</GeoTransform>`
		}
		return s + `<VRTRasterBand dataType="Float32" band="1"><SimpleSource><SourceFilename relativeToVRT="1">ref.asc</SourceFilename>
<SourceBand>1</SourceBand></SimpleSource></VRTRasterBand></VRTDataset>`
	}
	os.WriteFile(rotated, []byte(vrt("170, 0.5, 0.05, -28, 0.05, -0.5")), 0o644)
	os.WriteFile(noGeo, []byte(vrt("")), 0o644)
	junk := filepath.Join(dir, "junk.nc")
	os.WriteFile(junk, append([]byte("\x89HDF\r\n\x1a\n"), bytes.Repeat([]byte{0xAB}, 4096)...), 0o644)

	tests := []struct {
		name    string
		path    string
		wantErr error
		text    string
	}{
		{"projected CRS", utm, ErrProjected, "only geographic lon/lat grids are supported"},
		{"rotated geotransform", rotated, ErrRotated, "rotated"},
		{"no georeferencing", noGeo, ErrNoGeoreference, "no georeferencing"},
		{"missing file", filepath.Join(dir, "absent.nc"), fs.ErrNotExist, "absent.nc"},
		{"not a raster", junk, nil, "junk.nc"},
	}
	for _, tc := range tests {
		t.Run(tc.name, func(t *testing.T) {
			_, _, err := Read(tc.path)
			if err == nil {
				t.Fatal("accepted")
			}
			if tc.wantErr != nil && !errors.Is(err, tc.wantErr) {
				t.Errorf("err = %v, want %v", err, tc.wantErr)
			}
			if !strings.Contains(err.Error(), tc.text) {
				t.Errorf("err %q lacks %q", err, tc.text)
			}
		})
	}
	t.Run("projected CRS reprojected on request", func(t *testing.T) {
		g, m := mustRead(t, utm, ReadOptions{WarpToLonLat: true})
		// UTM zone 31's central meridian is 3°E (zone n: 6n − 183°; the UTM definition, NGA
		// TR8358.2), so easting 500000 m is longitude 3° exactly. Northing 5000 km is about
		// 45.1° N (from memory; tolerance 0.1°).
		b := g.Bounds()
		if math.Abs(b.Min.X()-3) > 0.002 || math.Abs(b.Max.Y()-45.15) > 0.1 || b.Max.X() < 3.03 || b.Max.X() > 3.04 {
			t.Errorf("bounds %v", b)
		}
		if !strings.Contains(m.CRS, "reprojected") {
			t.Errorf("CRS %q does not say it was reprojected", m.CRS)
		}
		var valid int
		for _, v := range g.Data {
			if v == v {
				valid++
				if v < 0 || v > 304 {
					t.Fatalf("interpolated value %g outside the source range", v)
				}
			}
		}
		if valid < len(g.Data)/2 {
			t.Errorf("only %d of %d cells valid", valid, len(g.Data))
		}
	})
	t.Run("too large", func(t *testing.T) {
		if _, _, err := Read(asc, ReadOptions{MaxCells: 10}); !errors.Is(err, ErrTooLarge) {
			t.Errorf("err = %v", err)
		}
	})
	t.Run("forced registration", func(t *testing.T) {
		g, _, err := Read(asc, ReadOptions{Registration: "node"})
		if err != nil || g.Registration != geo.Node || g.West != 170.25 {
			t.Errorf("%v %v", g, err)
		}
	})
}

// HDF5 prints "HDF5-DIAG" blocks on stderr when asked to open a broken file unless its
// automatic error printing is off, and that setting is per thread. Read a truncated netCDF-4
// file from goroutines locked to fresh OS threads while file descriptor 2 is captured.
func TestHDF5Quiet(t *testing.T) {
	dir := t.TempDir()
	good := filepath.Join(dir, "good.nc")
	if err := WriteNetCDF(good, nsGradient(geo.CellCentre), Meta{}); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(good)
	trunc := filepath.Join(dir, "truncated.nc")
	os.WriteFile(trunc, b[:len(b)/2], 0o644)
	capture := filepath.Join(dir, "stderr.txt")
	f, err := os.Create(capture)
	if err != nil {
		t.Fatal(err)
	}
	saved, err := syscall.Dup(2)
	if err != nil {
		t.Fatal(err)
	}
	syscall.Dup3(int(f.Fd()), 2, 0)
	var wg sync.WaitGroup
	var failures atomic.Int32
	for i := 0; i < 3; i++ {
		wg.Add(1)
		go func() {
			defer wg.Done()
			runtime.LockOSThread() // never unlocked: the thread ends with the goroutine
			if _, _, err := Read(trunc); err != nil {
				failures.Add(1)
			}
		}()
	}
	wg.Wait()
	syscall.Dup3(saved, 2, 0)
	syscall.Close(saved)
	f.Close()
	out, _ := os.ReadFile(capture)
	if failures.Load() != 3 {
		t.Errorf("%d of 3 reads of a truncated file failed", failures.Load())
	}
	if bytes.Contains(out, []byte("HDF5-DIAG")) {
		t.Errorf("diagnostics printed:\n%s", out)
	}
}

func TestConcurrentReads(t *testing.T) {
	dir := t.TempDir()
	g := nsGradient(geo.CellCentre)
	cog, nc := filepath.Join(dir, "c.tif"), filepath.Join(dir, "c.nc")
	if err := WriteCOG(cog, g, Meta{}); err != nil {
		t.Fatal(err)
	}
	if err := WriteNetCDF(nc, g, Meta{}); err != nil {
		t.Fatal(err)
	}
	d, err := Open(nc, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	defer d.Close()
	var wg sync.WaitGroup
	errs := make(chan error, 64)
	for i := 0; i < 8; i++ {
		wg.Add(1)
		go func(i int) {
			defer wg.Done()
			for j := 0; j < 5; j++ {
				p := []string{cog, nc}[(i+j)%2]
				got, _, err := Read(p)
				if err != nil {
					errs <- err
					return
				}
				if got.At(3, 2) != g.At(3, 2) {
					errs <- fmt.Errorf("%s: %g", p, got.At(3, 2))
				}
				row := make([]float32, g.NX) // shared handle, one row at a time
				if err := d.ReadRows(j%g.NY, row); err != nil || row[0] != g.At(0, j%g.NY) {
					errs <- fmt.Errorf("shared handle row %d: %v %v", j%g.NY, row, err)
				}
			}
		}(i)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Error(err)
	}
}

func TestStreamingRows(t *testing.T) {
	dir := t.TempDir()
	g := nsGradient(geo.CellCentre)
	p := filepath.Join(dir, "s.nc")
	if err := WriteNetCDF(p, g, Meta{}); err != nil {
		t.Fatal(err)
	}
	d, err := Open(p, ReadOptions{})
	if err != nil {
		t.Fatal(err)
	}
	h := d.Header()
	if h.Data != nil || h.NX != g.NX {
		t.Fatalf("header %+v", h)
	}
	buf := make([]float32, 2*h.NX)
	if err := d.ReadRows(3, buf); err != nil {
		t.Fatal(err)
	}
	if buf[0] != g.At(0, 3) || buf[h.NX] != g.At(0, 4) {
		t.Errorf("rows 3..4 start %g, %g; want %g, %g", buf[0], buf[h.NX], g.At(0, 3), g.At(0, 4))
	}
	if err := d.ReadRows(4, buf); err == nil {
		t.Error("read past the last row accepted")
	}
	if err := d.Close(); err != nil {
		t.Fatal(err)
	}
	if err := d.ReadRows(0, buf[:h.NX]); err == nil {
		t.Error("read after close accepted")
	}
}

func TestCacheBounded(t *testing.T) {
	if _, set := os.LookupEnv("GDAL_CACHEMAX"); set {
		t.Skip("GDAL_CACHEMAX set in the environment")
	}
	if got := cacheMaxBytes(); got > DefaultCacheMaxMB<<20 {
		t.Errorf("GDAL cache %d bytes, want ≤ %d MB", got, DefaultCacheMaxMB)
	}
}

func ExampleRead() {
	dir, _ := os.MkdirTemp("", "example")
	defer os.RemoveAll(dir)
	g := geo.NewGrid(3, 2, 170.5, -29.5, 1, 1, geo.CellCentre)
	copy(g.Data, []float32{-4100, -4200, -4300, -4400, float32(math.NaN()), -4600})
	p := filepath.Join(dir, "quillon-depth.nc")
	if err := WriteNetCDF(p, g, Meta{Name: "elevation", Units: "m", Title: "Quillon Basin (SYNTHETIC)", Sense: geo.ElevationPositiveUp}); err != nil {
		fmt.Println(err)
		return
	}
	back, meta, err := Read(p)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Println(back.NX, back.NY, back.West, back.North, back.Registration, back.Data)
	fmt.Println(meta.Name, meta.Units, meta.Sense, meta.Title)
	// Output:
	// 3 2 170.5 -29.5 cell-centre [-4100 -4200 -4300 -4400 NaN -4600]
	// elevation m elevation Quillon Basin (SYNTHETIC)
}

// TestCOGDeterministic: the same grid and metadata give the same COG bytes, so content hashes
// recognise a re-import; a Written time is recorded when the caller sets one.
func TestCOGDeterministic(t *testing.T) {
	g := nsGradient(geo.CellCentre)
	m := Meta{Name: "z", Units: "m", Title: "determinism check"}
	a, err := EncodeCOG(g, m)
	if err != nil {
		t.Fatal(err)
	}
	b, err := EncodeCOG(g, m)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(a, b) {
		t.Fatal("two encodings of the same grid differ")
	}
	m.Written = time.Date(2026, 1, 2, 3, 4, 5, 0, time.UTC)
	c, err := EncodeCOG(g, m)
	if err != nil {
		t.Fatal(err)
	}
	if !bytes.Contains(c, []byte("2026-01-02T03:04:05Z ridgeflank: written as COG")) {
		t.Fatal("the Written time is not in the file's history")
	}
}
