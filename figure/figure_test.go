package figure

import (
	"math"
	"testing"

	"ridgeflank/colour"
	"ridgeflank/fault"
	"ridgeflank/geo"
)

// One degree of longitude along a parallel of the WGS84 ellipsoid.
func TestParallelKm(t *testing.T) {
	for _, c := range []struct {
		name    string
		lat, km float64
		tol     float64
		source  string
	}{
		// a·π/180 with a = 6378137 m (NIMA TR8350.2 table 3.1): 111.3195 km.
		{"equator", 0, 111.3195, 1e-4, "a·π/180, worked by hand"},
		// Tabulated length of a degree of longitude at 60°: 55.800 km (from memory, geodesy tables).
		{"60S", -60, 55.800, 0.01, "tables, from memory"},
		// At 45°: 78.847 km (from memory, geodesy tables).
		{"45N", 45, 78.847, 0.01, "tables, from memory"},
	} {
		t.Run(c.name, func(t *testing.T) {
			if got := ParallelKm(c.lat); math.Abs(got-c.km) > c.tol {
				t.Errorf("ParallelKm(%g) = %.4f km, want %.4f ± %g (%s)", c.lat, got, c.km, c.tol, c.source)
			}
		})
	}
}

func TestLabels(t *testing.T) {
	for _, c := range []struct {
		name string
		got  string
		want string
	}{
		{"west", lonLabel(-145, 1), "145°W"},
		{"east across the antimeridian", lonLabel(190, 5), "170°W"},
		{"antimeridian", lonLabel(180, 5), "180°"},
		{"greenwich", lonLabel(360, 5), "0°"},
		{"half degrees", lonLabel(12.5, 0.5), "12.5°E"},
		{"south", latLabel(-30, 2), "30°S"},
		{"equator", latLabel(0, 2), "0°"},
		{"north", latLabel(0.25, 0.25), "0.25°N"},
	} {
		t.Run(c.name, func(t *testing.T) {
			if c.got != c.want {
				t.Errorf("got %q, want %q", c.got, c.want)
			}
		})
	}
}

// A PNG is exactly width-px wide (the figure is width-px/dpi inches at dpi); sizes outside the
// limits are faults naming the field, over the upper limits fault.Over with the limit's name.
func TestLayoutLimits(t *testing.T) {
	l, err := NewLayout(-150, -35, -138, -24, 1600, 150)
	if err != nil {
		t.Fatal(err)
	}
	if l.WidthPx != 1600 || l.Map.Dx() <= 0 || l.Map.Max.X > 1600 || l.Map.Max.Y > l.HeightPx {
		t.Errorf("layout %+v", l)
	}
	// 8000 × about 2700 pixels: within each side's limit, over the total.
	if _, err := NewLayout(-180, -40, -60, -10, 8000, 600); err == nil {
		t.Error("an 8000 px wide figure of a 120° × 30° box was accepted")
	} else if f, ok := fault.As(err); !ok || f.Limit == nil || f.Limit.Name != "max_figure_pixels" {
		t.Errorf("err %v, want max_figure_pixels", err)
	}
	for _, c := range []struct {
		name       string
		w, dpi     int
		west, east float64
		kind       fault.Kind
		limit      string
	}{
		{"too wide", 9000, 150, -150, -138, fault.LimitExceeded, "max_figure_width_px"},
		{"too narrow", 100, 72, -150, -138, fault.InvalidParameter, ""},
		{"dpi too high", 1600, 1200, -150, -138, fault.LimitExceeded, "max_figure_dpi"},
		{"dpi zero", 1600, 0, -150, -138, fault.InvalidParameter, ""},
		{"under 2.5 in", 600, 300, -150, -138, fault.InvalidParameter, ""},
		{"too tall", 8000, 600, -150, -149.9, fault.LimitExceeded, "max_figure_height_px"},
		{"empty box", 1600, 150, -140, -140, fault.InvalidParameter, ""},
	} {
		t.Run(c.name, func(t *testing.T) {
			_, err := NewLayout(c.west, -35, c.east, -24, c.w, c.dpi)
			f, ok := fault.As(err)
			if !ok || f.Kind != c.kind {
				t.Fatalf("err %v, want a %s fault", err, c.kind)
			}
			if c.limit != "" && (f.Limit == nil || f.Limit.Name != c.limit) {
				t.Errorf("limit %+v, want %s", f.Limit, c.limit)
			}
		})
	}
}

// BenchmarkDraw draws a 1600 px wide PNG of a SYNTHETIC lattice of one cell per map pixel,
// without the area evaluation (BenchmarkFigurePNG in package server includes it).
func BenchmarkDraw(b *testing.B) {
	l, err := NewLayout(-154, -34, -134, -24, 1600, 150)
	if err != nil {
		b.Fatal(err)
	}
	resX, resY := l.Resolution()
	g := geo.NewGrid(l.Map.Dx(), l.Map.Dy(), l.West+resX/2, l.North-resY/2, resX, resY, geo.CellCentre)
	for i := range g.Data {
		g.Data[i] = float32(i%997) - 500 // SYNTHETIC values across the residual scale
	}
	bind, _ := colour.BindingFor("residual_depth")
	m := mapData{title: "Residual depth", sub: "Dataset: SYNTHETIC", caution: "SYNTHETIC caution text", label: "Residual depth (m)", sign: "SYNTHETIC", scale: bind, grid: g}
	b.ReportAllocs()
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		if _, err := draw1(l, m, PNG); err != nil {
			b.Fatal(err)
		}
	}
}
