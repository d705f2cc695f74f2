package geo

import (
	"context"
	"errors"
	"fmt"
	"math"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/thermal"
)

// resFill returns a grid whose every sample is f(lon, lat).
func resFill(nx, ny int, west, north, d float64, reg Registration, f func(lon, lat float64) float64) *Grid {
	g := NewGrid(nx, ny, west, north, d, d, reg)
	for r := 0; r < ny; r++ {
		for c := 0; c < nx; c++ {
			g.Data[r*nx+c] = float32(f(g.Lon(c), g.Lat(r)))
		}
	}
	return g
}

func resModel(t testing.TB, id string) thermal.Model {
	t.Helper()
	m, err := thermal.Builtin(id)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// resAge is a smooth age field of 0..~150 Ma over the small test lattices.
func resAge(lon, lat float64) float64 { return 2 + 1.3*math.Abs(lon+140) + 0.7*math.Abs(lat+30) }

func resShale(t testing.TB) thermal.Compaction {
	t.Helper()
	c, err := thermal.CompactionByName("shale")
	if err != nil {
		t.Fatal(err)
	}
	return c
}

// sedimentClosedFormM is the sediment unloading correction of an exponential porosity law in
// closed form: ∫₀ˢ (ρm − ρb) dz /(ρm − ρw) with ρb = φρw + (1−φ)ρg and φ = φ0·e^{−cz} gives
// [S(ρm − ρg) + (ρg − ρw)·φ0(1 − e^{−cS})/c] / (ρm − ρw) (Sclater & Christie 1980; the
// standard backstripping relation, e.g. Allen & Allen, Basin Analysis; integrated by hand).
func sedimentClosedFormM(sM float64, c thermal.Compaction, rm, rw float64) float64 {
	ck := c.DecayPerKm / 1000
	return (sM*(rm-c.GrainDensityKgM3) + (c.GrainDensityKgM3-rw)*c.SurfacePorosity*(1-math.Exp(-ck*sM))/ck) / (rm - rw)
}

// gdh1FitM is the GDH1 depth fit of Stein & Stein (1992), Nature 359, eqs. for depth:
// d = 2600 + 365·√t for t < 20 Ma, d = 5651 − 2473·e^{−0.0278 t} for t ≥ 20 Ma (from memory).
func gdh1FitM(t float64) float64 {
	if t < 20 {
		return 2600 + 365*math.Sqrt(t)
	}
	return 5651 - 2473*math.Exp(-0.0278*t)
}

func TestResidualZeroForModelDepth(t *testing.T) {
	// Observed depth = the model's own prediction from its series (not the table) must give
	// zero residual within the table's documented error bound (0.5 m, thermal.Table doc).
	for _, id := range thermal.BuiltinIDs() {
		t.Run(id, func(t *testing.T) {
			m := resModel(t, id)
			age := resFill(40, 30, -150, -20, 0.5, CellCentre, resAge)
			obs := resFill(40, 30, -150, -20, 0.5, CellCentre, func(lon, lat float64) float64 { return m.DepthM(resAge(lon, lat)) })
			res, err := Evaluate(context.Background(), Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m}, OutResidualDepth|OutPredictedDepth)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range res.ResidualDepthM.Data {
				if math.Abs(float64(v)) > 0.5 {
					t.Fatalf("cell %d: residual %g m, want 0 ± 0.5 m", i, v)
				}
			}
		})
	}
}

func TestResidualPredictionsAgainstPublished(t *testing.T) {
	// Predicted depth over a grid against the published GDH1 fit equations (Stein & Stein 1992;
	// the fits describe the model to about 15 m, tolerance common practice, no source).
	ages := []float64{1, 5, 10, 19, 25, 50, 100, 160}
	age := NewGrid(len(ages), 1, 0, 0, 1, 1, CellCentre)
	for i, a := range ages {
		age.Data[i] = float32(a)
	}
	m := resModel(t, "gdh1")
	res, err := Evaluate(context.Background(), Inputs{Age: age, Model: m}, OutPredictedDepth|OutHeatFlow|OutThermalThickness|OutDepth600C)
	if err != nil {
		t.Fatal(err)
	}
	if res.ResidualDepthM != nil || res.CorrectedDepthM != nil {
		t.Fatal("outputs not asked for were computed")
	}
	for i, a := range ages {
		t.Run(fmt.Sprintf("%gMa", a), func(t *testing.T) {
			if got, want := float64(res.PredictedDepthM.Data[i]), gdh1FitM(a); math.Abs(got-want) > 15 {
				t.Errorf("depth %g m, GDH1 fit %g m (±15)", got, want)
			}
			// The other outputs agree with the model's point functions (table error bounds from
			// the thermal.Table doc: 0.1 mW/m²; 0.1 km for thicknesses, common practice).
			if got, want := float64(res.HeatFlowMWm2.Data[i]), m.HeatFlowMWm2(a); math.Abs(got-want) > 0.1 {
				t.Errorf("heat flow %g, model %g mW/m²", got, want)
			}
			if got, want := float64(res.ThermalThicknessKm.Data[i]), m.ThermalThicknessKm(a); math.Abs(got-want) > 0.1 {
				t.Errorf("thermal thickness %g, model %g km", got, want)
			}
			if got, want := float64(res.Depth600CKm.Data[i]), m.IsothermDepthKm(600, a); math.Abs(got-want) > 0.1 {
				t.Errorf("600 °C depth %g, model %g km", got, want)
			}
		})
	}
}

func TestResidualSignAndVerticalSense(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(20, 10, 10, 5, 1, Node, resAge)
	// Seafloor 300 m shallower than the model: residual +300 (the convention of
	// thermal.ResidualDepthM: positive = shallower than the model).
	depth := resFill(20, 10, 10, 5, 1, Node, func(lon, lat float64) float64 { return m.DepthM(resAge(lon, lat)) - 300 })
	elev := resFill(20, 10, 10, 5, 1, Node, func(lon, lat float64) float64 { return -(m.DepthM(resAge(lon, lat)) - 300) })
	cases := []struct {
		name  string
		g     *Grid
		sense VerticalSense
	}{
		{"depth positive down", depth, DepthPositiveDown},
		{"elevation positive up", elev, ElevationPositiveUp},
	}
	var first []float32
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			res, err := Evaluate(context.Background(), Inputs{Age: age, Depth: tc.g, DepthSense: tc.sense, Model: m}, OutResidualDepth|OutCorrectedDepth)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range res.ResidualDepthM.Data {
				if math.Abs(float64(v)-300) > 0.5 { // table error bound 0.5 m (thermal.Table doc)
					t.Fatalf("cell %d: residual %g m, want +300 ± 0.5", i, v)
				}
				want := thermal.ResidualDepthM(float64(res.ResidualDepthM.Data[i])+float64(res.CorrectedDepthM.Data[i]), float64(res.CorrectedDepthM.Data[i]))
				if math.Abs(float64(v)-want) > 1e-3 {
					t.Fatalf("cell %d: residual %g disagrees with thermal.ResidualDepthM %g", i, v, want)
				}
			}
			if first == nil {
				first = res.ResidualDepthM.Data
				return
			}
			for i := range first {
				if first[i] != res.ResidualDepthM.Data[i] {
					t.Fatalf("cell %d: elevation input gives %g, depth input %g", i, res.ResidualDepthM.Data[i], first[i])
				}
			}
		})
	}
	t.Run("unknown sense refused", func(t *testing.T) {
		_, err := Evaluate(context.Background(), Inputs{Age: age, Depth: depth, Model: m}, OutResidualDepth)
		if err == nil {
			t.Fatal("no error for an undeclared vertical sense")
		}
	})
}

func TestResidualSedimentCorrection(t *testing.T) {
	m := resModel(t, "gdh1")
	pr := m.Params()
	sh := resShale(t)
	// Sediment 0..3 km; the observed (loaded) seafloor is the model depth raised by the closed
	// form unloading correction, so the corrected depth must equal the model depth again.
	sedF := func(lon, lat float64) float64 { return 40 * (lon - 10 + 3*(lat-1)) }
	age := resFill(50, 20, 10, 20, 0.5, CellCentre, resAge)
	sed := resFill(50, 20, 10, 20, 0.5, CellCentre, sedF)
	obs := resFill(50, 20, 10, 20, 0.5, CellCentre, func(lon, lat float64) float64 {
		return m.DepthM(resAge(lon, lat)) - sedimentClosedFormM(sedF(lon, lat), sh, pr.MantleDensityKgM3, pr.WaterDensityKgM3)
	})
	in := Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Sediment: sed, Compaction: sh, Model: m}
	// The fused hot path (residual only) and the general path (corrected + residual) must agree.
	for _, want := range []Outputs{OutResidualDepth, OutResidualDepth | OutCorrectedDepth} {
		t.Run(fmt.Sprintf("outputs %b", want), func(t *testing.T) {
			res, err := Evaluate(context.Background(), in, want)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range res.ResidualDepthM.Data {
				// table 0.5 m + float32 rounding of 6 km depths (~0.5 mm)
				if math.Abs(float64(v)) > 0.5 {
					t.Fatalf("cell %d (sediment %g m): residual %g m, want 0 ± 0.5", i, sed.Data[i], v)
				}
			}
			if res.CorrectedDepthM != nil {
				for i, v := range res.CorrectedDepthM.Data {
					want := float64(obs.Data[i]) + thermal.SedimentCorrectionM(float64(sed.Data[i]), sh, pr.MantleDensityKgM3, pr.WaterDensityKgM3)
					if math.Abs(float64(v)-want) > 0.01 { // 1 cm: thermal's table bound 1 mm + float32
						t.Fatalf("cell %d: corrected %g, point function gives %g", i, v, want)
					}
				}
			}
		})
	}
	t.Run("no-data sediment gives no data", func(t *testing.T) {
		sed2 := sed.Clone()
		sed2.Data[7] = float32(math.NaN())
		sed2.Data[8] = -5
		in2 := in
		in2.Sediment = sed2
		res, err := Evaluate(context.Background(), in2, OutResidualDepth)
		if err != nil {
			t.Fatal(err)
		}
		if !math.IsNaN(float64(res.ResidualDepthM.Data[7])) || !math.IsNaN(float64(res.ResidualDepthM.Data[8])) {
			t.Fatalf("NaN/negative sediment gave %g, %g", res.ResidualDepthM.Data[7], res.ResidualDepthM.Data[8])
		}
	})
	t.Run("sediment needs a compaction law", func(t *testing.T) {
		in2 := in
		in2.Compaction = thermal.Compaction{}
		if _, err := Evaluate(context.Background(), in2, OutResidualDepth); err == nil {
			t.Fatal("no error without a compaction law")
		}
	})
}

func TestResidualCrustCorrection(t *testing.T) {
	// Airy isostasy: Δ = (h − 7 km)·(ρm − ρc)/(ρm − ρw); with ρc = 2900, ρm = 3330,
	// ρw = 1000 kg/m³ (GDH1 densities, Stein & Stein 1992) one extra km is 1000·430/2330 m.
	m := resModel(t, "gdh1")
	age := resFill(4, 3, 0, 0, 1, Node, func(lon, lat float64) float64 { return 30 })
	obs := resFill(4, 3, 0, 0, 1, Node, func(lon, lat float64) float64 { return 5000 })
	crust := resFill(4, 3, 0, 0, 1, Node, func(lon, lat float64) float64 { return 7 + lon })
	res, err := Evaluate(context.Background(), Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Crust: crust, Model: m}, OutCorrectedDepth)
	if err != nil {
		t.Fatal(err)
	}
	for c := 0; c < 4; c++ {
		want := 5000 + float64(c)*1000*430/2330
		if got := float64(res.CorrectedDepthM.At(c, 1)); math.Abs(got-want) > 0.01 {
			t.Errorf("crust %d km: corrected %g m, want %g", 7+c, got, want)
		}
	}
}

func TestResidualMask(t *testing.T) {
	m := resModel(t, "psm")
	age := resFill(30, 20, 100, 10, 0.25, CellCentre, resAge)
	obs := resFill(30, 20, 100, 10, 0.25, CellCentre, func(lon, lat float64) float64 { return 4000 })
	mask := make([]bool, len(age.Data))
	for i := range mask {
		mask[i] = i%3 != 0
	}
	bits := MaskFromBools(mask)
	want := OutResidualDepth | OutCorrectedDepth | OutPredictedDepth | OutHeatFlow | OutThermalThickness | OutDepth600C
	full, err := Evaluate(context.Background(), Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m}, want)
	if err != nil {
		t.Fatal(err)
	}
	masked, err := Evaluate(context.Background(), Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m, Mask: bits}, want)
	if err != nil {
		t.Fatal(err)
	}
	pairs := map[string][2]*Grid{
		"residual": {full.ResidualDepthM, masked.ResidualDepthM}, "corrected": {full.CorrectedDepthM, masked.CorrectedDepthM},
		"predicted": {full.PredictedDepthM, masked.PredictedDepthM}, "heat flow": {full.HeatFlowMWm2, masked.HeatFlowMWm2},
		"thickness": {full.ThermalThicknessKm, masked.ThermalThicknessKm}, "600C": {full.Depth600CKm, masked.Depth600CKm},
	}
	for name, p := range pairs {
		t.Run(name, func(t *testing.T) {
			for i, in := range mask {
				a, b := p[0].Data[i], p[1].Data[i]
				if in && a != b {
					t.Fatalf("cell %d inside the mask: %g vs unmasked %g", i, b, a)
				}
				if !in && !math.IsNaN(float64(b)) {
					t.Fatalf("cell %d outside the mask: %g, want NaN", i, b)
				}
			}
		})
	}
	t.Run("region and mask combined", func(t *testing.T) {
		box := orb.MultiPolygon{{{{100.9, 5.9}, {103.1, 5.9}, {103.1, 8.1}, {100.9, 8.1}, {100.9, 5.9}}}}
		res, err := Evaluate(context.Background(), Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m, Mask: bits, Region: box}, OutResidualDepth)
		if err != nil {
			t.Fatal(err)
		}
		inside := 0
		for r := 0; r < age.NY; r++ {
			for c := 0; c < age.NX; c++ {
				i := r*age.NX + c
				lon, lat := age.Lon(c), age.Lat(r)
				in := mask[i] && lon > 100.9 && lon < 103.1 && lat > 5.9 && lat < 8.1
				v := res.ResidualDepthM.Data[i]
				if in != !math.IsNaN(float64(v)) || (in && v != full.ResidualDepthM.Data[i]) {
					t.Fatalf("cell (%g, %g): %g, inside %v", lon, lat, v, in)
				}
				if in {
					inside++
				}
			}
		}
		if inside == 0 {
			t.Fatal("no cell inside the region")
		}
	})
	t.Run("wrong mask size", func(t *testing.T) {
		if _, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, Mask: MaskFromBools(mask[1:])}, OutPredictedDepth); err == nil {
			t.Fatal("no error for a mask of the wrong size")
		}
	})
}

func TestResidualMismatchedLattices(t *testing.T) {
	m := resModel(t, "gdh1")
	// Bilinear interpolation reproduces a linear field exactly, so observed depth and sediment
	// on other lattices (finer, node-registered, offset, other longitude convention) must give
	// the same residual as on the age lattice itself (exactness: common practice, no source).
	depthF := func(lon, lat float64) float64 { return 4000 + 10*(lon+145) - 20*(lat+30) }
	sedF := func(lon, lat float64) float64 { return 300 + 5*(lon+145) + 8*(lat+30) }
	age := resFill(40, 30, -149.875, -25.125, 0.25, CellCentre, resAge)
	sh := resShale(t)
	ref, err := Evaluate(context.Background(), Inputs{
		Age: age, Model: m, Compaction: sh, DepthSense: DepthPositiveDown,
		Depth:    resFill(40, 30, -149.875, -25.125, 0.25, CellCentre, depthF),
		Sediment: resFill(40, 30, -149.875, -25.125, 0.25, CellCentre, sedF),
	}, OutResidualDepth)
	if err != nil {
		t.Fatal(err)
	}
	cases := []struct {
		name       string
		depth, sed *Grid
		tol        float64
		direct     bool
	}{
		{"same lattice, larger grid, whole-cell offset (direct index)",
			resFill(60, 50, -152.375, -22.125, 0.25, CellCentre, depthF),
			resFill(44, 34, -150.375, -24.625, 0.25, CellCentre, sedF), 1e-3, true},
		{"finer node grid (bilinear)",
			resFill(131, 101, -151, -24, 0.1, Node, depthF),
			resFill(131, 101, -151, -24, 0.1, Node, sedF), 0.05, false},
		{"coarser grid in 0..360 longitudes (bilinear)",
			resFill(24, 21, 209, -24, 0.5, Node, func(lon, lat float64) float64 { return depthF(lon-360, lat) }),
			resFill(24, 21, 209, -24, 0.5, Node, func(lon, lat float64) float64 { return sedF(lon-360, lat) }), 0.05, false},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			in := Inputs{Age: age, Model: m, Compaction: sh, DepthSense: DepthPositiveDown, Depth: tc.depth, Sediment: tc.sed}
			p, err := newResidualPlan(in, OutResidualDepth)
			if err != nil {
				t.Fatal(err)
			}
			if p.depth.direct != tc.direct || p.sed.direct != tc.direct {
				t.Fatalf("direct indexing %v/%v, want %v", p.depth.direct, p.sed.direct, tc.direct)
			}
			res, err := Evaluate(context.Background(), in, OutResidualDepth)
			if err != nil {
				t.Fatal(err)
			}
			for i, v := range res.ResidualDepthM.Data {
				if d := math.Abs(float64(v - ref.ResidualDepthM.Data[i])); !(d <= tc.tol) {
					t.Fatalf("cell %d: %g vs %g on the same lattice", i, v, ref.ResidualDepthM.Data[i])
				}
			}
		})
	}
	t.Run("partial coverage gives no data outside", func(t *testing.T) {
		// depth grid covering only the western half (whole-cell offset, direct index)
		d := resFill(20, 30, -149.875, -25.125, 0.25, CellCentre, depthF)
		res, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, DepthSense: DepthPositiveDown, Depth: d}, OutResidualDepth)
		if err != nil {
			t.Fatal(err)
		}
		if v := res.ResidualDepthM.At(19, 5); math.IsNaN(float64(v)) {
			t.Error("covered cell is NaN")
		}
		if v := res.ResidualDepthM.At(20, 5); !math.IsNaN(float64(v)) {
			t.Errorf("uncovered cell is %g, want NaN", v)
		}
	})
}

func TestResidualWindowAndRows(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(120, 90, -179.75, 60, 0.5, Node, resAge)
	obs := resFill(120, 90, -179.75, 60, 0.5, Node, func(lon, lat float64) float64 { return 4500 + lat })
	in := Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m, Workers: 3}
	want := OutResidualDepth | OutPredictedDepth
	full, err := Evaluate(context.Background(), in, want)
	if err != nil {
		t.Fatal(err)
	}
	t.Run("window", func(t *testing.T) {
		b := orb.Bound{Min: orb.Point{-170, 30}, Max: orb.Point{-160, 40}}
		w := in
		w.Window = &b
		res, err := Evaluate(context.Background(), w, want)
		if err != nil {
			t.Fatal(err)
		}
		g := res.ResidualDepthM
		ref, err := age.Window(b) // the selection rule Window documents
		if err != nil {
			t.Fatal(err)
		}
		if g.NX != ref.NX || g.NY != ref.NY || g.West != ref.West || g.North != ref.North || g.NX*g.NY >= len(age.Data) {
			t.Fatalf("window lattice %d×%d at %g,%g; want %d×%d at %g,%g", g.NX, g.NY, g.West, g.North, ref.NX, ref.NY, ref.West, ref.North)
		}
		c0 := int(math.Round((g.West - age.West) / age.DX))
		r0 := int(math.Round((age.North - g.North) / age.DY))
		for r := 0; r < g.NY; r++ {
			for c := 0; c < g.NX; c++ {
				if a, b := g.At(c, r), full.ResidualDepthM.At(c+c0, r+r0); a != b {
					t.Fatalf("(%d,%d): %g in window, %g in full", c, r, a, b)
				}
			}
		}
	})
	for _, rows := range []int{1, 7, 90, 1000} {
		t.Run(fmt.Sprintf("EvaluateRows %d rows", rows), func(t *testing.T) {
			next := 0
			var prog []int
			in2 := in
			in2.Progress = func(done, total int) { prog = append(prog, done) }
			err := EvaluateRows(context.Background(), in2, want, rows, func(b RowBlock) error {
				if b.Row0 != next {
					return fmt.Errorf("block at row %d, want %d", b.Row0, next)
				}
				if b.Lattice.NX != 120 || len(b.ResidualDepthM) != b.Rows*120 || b.HeatFlowMWm2 != nil {
					return fmt.Errorf("block shape: %d values for %d rows", len(b.ResidualDepthM), b.Rows)
				}
				for i, v := range b.ResidualDepthM {
					if w := full.ResidualDepthM.Data[b.Row0*120+i]; v != w {
						return fmt.Errorf("row %d: %g vs %g", b.Row0+i/120, v, w)
					}
				}
				next += b.Rows
				return nil
			})
			if err != nil {
				t.Fatal(err)
			}
			if next != 90 || len(prog) == 0 || prog[len(prog)-1] != 90 {
				t.Fatalf("covered %d rows, progress %v", next, prog)
			}
		})
	}
	t.Run("callback error stops", func(t *testing.T) {
		boom := errors.New("boom")
		calls := 0
		err := EvaluateRows(context.Background(), in, want, 5, func(b RowBlock) error {
			calls++
			if calls == 3 {
				return boom
			}
			return nil
		})
		if !errors.Is(err, boom) || calls != 3 {
			t.Fatalf("err %v after %d calls", err, calls)
		}
	})
}

func TestResidualCancellation(t *testing.T) {
	m := resModel(t, "gdh1")
	// 2000 columns: Evaluate's blocks of 256 Ki cells hold 131 rows, so 400 rows make 4 blocks.
	age := resFill(2000, 400, 0, 60, 0.1, Node, resAge)
	obs := resFill(2000, 400, 0, 60, 0.1, Node, func(lon, lat float64) float64 { return 5000 })
	t.Run("already cancelled", func(t *testing.T) {
		ctx, cancel := context.WithCancel(context.Background())
		cancel()
		_, err := Evaluate(ctx, Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m}, OutResidualDepth)
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("err %v, want context.Canceled", err)
		}
	})
	t.Run("cancelled during Evaluate", func(t *testing.T) {
		ctx, cancel := context.WithCancel(context.Background())
		defer cancel()
		last := 0
		in := Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m, Workers: 2,
			Progress: func(done, total int) {
				last = done
				if done >= total/4 {
					cancel()
				}
			}}
		_, err := Evaluate(ctx, in, OutResidualDepth)
		if !errors.Is(err, context.Canceled) {
			t.Fatalf("err %v, want context.Canceled", err)
		}
		if last >= 400 {
			t.Fatalf("all %d rows done despite cancellation", last)
		}
	})
	t.Run("cancelled during EvaluateRows", func(t *testing.T) {
		ctx, cancel := context.WithCancel(context.Background())
		defer cancel()
		rows := 0
		err := EvaluateRows(ctx, Inputs{Age: age, Depth: obs, DepthSense: DepthPositiveDown, Model: m}, OutResidualDepth, 4, func(b RowBlock) error {
			rows += b.Rows
			if rows >= 40 {
				cancel()
			}
			return nil
		})
		if !errors.Is(err, context.Canceled) || rows >= 400 {
			t.Fatalf("err %v after %d rows, want context.Canceled early", err, rows)
		}
	})
}

func TestResidualInputErrors(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(3, 3, 0, 0, 1, Node, resAge)
	cases := []struct {
		name string
		in   Inputs
		want Outputs
	}{
		{"no outputs", Inputs{Age: age, Model: m}, 0},
		{"unknown output bit", Inputs{Age: age, Model: m}, 1 << 20},
		{"no age", Inputs{Model: m}, OutPredictedDepth},
		{"no model", Inputs{Age: age}, OutPredictedDepth},
		{"residual without depth", Inputs{Age: age, Model: m}, OutResidualDepth},
		{"bad age grid", Inputs{Age: &Grid{NX: 2, NY: 2, DX: 1, DY: 1}, Model: m}, OutPredictedDepth},
	}
	for _, tc := range cases {
		t.Run(tc.name, func(t *testing.T) {
			if _, err := Evaluate(context.Background(), tc.in, tc.want); err == nil {
				t.Fatal("no error")
			}
		})
	}
}

func ExampleEvaluate() {
	// One cell of 25 Ma seafloor, observed 300 m shallower than GDH1 predicts (the model gives
	// 4416 m; Stein & Stein's 1992 fit 5651 − 2473·e^(−0.0278·25) ≈ 4417 m), stored as
	// elevation (negative down).
	m, _ := thermal.Builtin("gdh1")
	age := NewGrid(1, 1, -140, -30, 0.05, 0.05, CellCentre)
	age.Data[0] = 25
	elev := NewGrid(1, 1, -140, -30, 0.05, 0.05, CellCentre)
	elev.Data[0] = float32(-(m.DepthM(25) - 300))
	res, err := Evaluate(context.Background(), Inputs{Age: age, Depth: elev, DepthSense: ElevationPositiveUp, Model: m}, OutPredictedDepth|OutResidualDepth)
	if err != nil {
		fmt.Println(err)
		return
	}
	fmt.Printf("predicted %.0f m, residual %+.0f m (shallower than the model)\n", res.PredictedDepthM.Data[0], res.ResidualDepthM.Data[0])
	// Output: predicted 4416 m, residual +300 m (shallower than the model)
}

func TestResidualSedimentTable(t *testing.T) {
	// The float32 table of the fused loop against thermal's point function (Sclater & Christie
	// 1980 integral by quadrature), over the table and beyond thermal's uniform one (> thermal.MaxSedimentTableM),
	// and against the closed form: within 1 cm (float32 rounding of corrections up to ~10 km).
	sh := resShale(t)
	tab, err := sedTableFor(sh, 3330, 1000)
	if err != nil {
		t.Fatal(err)
	}
	for _, s := range []float64{0, 0.3, 4.99, 5, 12.5, 333.3, 1000, 2718.28, 9999.9, 19999, 20000, 20001.5, 25000} {
		t.Run(fmt.Sprintf("%gm", s), func(t *testing.T) {
			want := thermal.SedimentCorrectionM(s, sh, 3330, 1000)
			closed := sedimentClosedFormM(s, sh, 3330, 1000)
			got := float64(tab.at(float32(s)))
			if math.Abs(got-want) > 0.01 || math.Abs(got-closed) > 0.01 {
				t.Fatalf("table %g m, thermal %g m, closed form %g m", got, want, closed)
			}
			res := make([]float32, 1)
			residualSedChunk(res, []float32{5000}, []float32{4000}, []float32{float32(s)}, 1, tab)
			if math.Abs(float64(res[0])-(1000-want)) > 0.01 {
				t.Fatalf("fused loop residual %g, want %g", res[0], 1000-want)
			}
		})
	}
	for _, s := range []float32{-0.1, -5, -1e6, float32(math.NaN())} {
		if v := tab.at(s); !math.IsNaN(float64(v)) {
			t.Errorf("thickness %g: %g, want NaN", s, v)
		}
	}
}

func TestEvaluateIntoChecks(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(5, 4, 0, 0, 1, Node, resAge)
	if err := EvaluateInto(context.Background(), Inputs{Age: age, Model: m}, nil); err == nil {
		t.Error("no error for a nil result")
	}
	if err := EvaluateInto(context.Background(), Inputs{Age: age, Model: m}, &Result{}); err == nil {
		t.Error("no error for a result with no grids")
	}
	wrong := NewGrid(4, 4, 0, 0, 1, 1, Node)
	if err := EvaluateInto(context.Background(), Inputs{Age: age, Model: m}, &Result{PredictedDepthM: wrong}); err == nil {
		t.Error("no error for a grid of the wrong size")
	}
	ok := NewGrid(5, 4, 0, 0, 1, 1, Node)
	if err := EvaluateInto(context.Background(), Inputs{Age: age, Model: m}, &Result{PredictedDepthM: ok}); err != nil {
		t.Fatal(err)
	}
	if want := float32(m.DepthM(float64(age.Data[3]))); math.Abs(float64(ok.Data[3]-want)) > 0.5 {
		t.Errorf("cell 3: %g, want %g", ok.Data[3], want)
	}
}

func TestResidualFusedDepthTable(t *testing.T) {
	// The fused loop's resampled depth table against thermal's Table.DepthM (the published
	// models' lookup table): within 1 cm (float32 rounding of depths up to ~6.5 km is 0.5 mm;
	// tolerance common practice, no source), also beyond TableMaxAgeMa; NaN and negative ages
	// give NaN.
	sh := resShale(t)
	st, err := sedTableFor(sh, 3330, 1000)
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range thermal.BuiltinIDs() {
		t.Run(id, func(t *testing.T) {
			tbl := thermal.TableFor(resModel(t, id))
			dt := depthTableFor(tbl)
			ages := []float32{0, 1e-4, 0.01, 0.5, 1, 2.5, 7.3, 19.99, 20, 33.3, 64, 99.9, 155, 180, 250, 399.99, 400, 420, -1, float32(math.NaN())}
			res := make([]float32, len(ages))
			obs := make([]float32, len(ages))
			sed := make([]float32, len(ages))
			residualFusedChunk(res, ages, obs, sed, 1, dt, st)
			for i, a := range ages {
				want := tbl.DepthM(float64(a))
				if got := float64(res[i]); !(math.Abs(got-want) <= 0.01) && !(math.IsNaN(got) && math.IsNaN(want)) {
					t.Errorf("age %g Ma: fused %g m, thermal table %g m", a, got, want)
				}
			}
		})
	}
	t.Run("fused and two-pass paths agree", func(t *testing.T) {
		m := resModel(t, "gdh1")
		age := resFill(200, 50, -150, -20, 0.1, CellCentre, resAge)
		obs := resFill(200, 50, -150, -20, 0.1, CellCentre, func(lon, lat float64) float64 { return -4000 - lat })
		sed := resFill(200, 50, -150, -20, 0.1, CellCentre, func(lon, lat float64) float64 { return 20 * (lon + 151) })
		in := Inputs{Age: age, Depth: obs, DepthSense: ElevationPositiveUp, Sediment: sed, Compaction: sh, Model: m}
		a, err := Evaluate(context.Background(), in, OutResidualDepth)
		if err != nil {
			t.Fatal(err)
		}
		b, err := Evaluate(context.Background(), in, OutResidualDepth|OutPredictedDepth)
		if err != nil {
			t.Fatal(err)
		}
		for i := range a.ResidualDepthM.Data {
			if d := math.Abs(float64(a.ResidualDepthM.Data[i] - b.ResidualDepthM.Data[i])); d > 0.01 {
				t.Fatalf("cell %d: fused %g, two-pass %g", i, a.ResidualDepthM.Data[i], b.ResidualDepthM.Data[i])
			}
		}
	})
}

func TestResidualFusedSweep(t *testing.T) {
	// The fused loop's bit-indexed tables against the point functions over dense sweeps:
	// predicted depth (observed depth and sediment 0) within 1 cm of thermal's Table.DepthM
	// everywhere (tolerance common practice, no source: float32 rounding of ~6 km is 0.5 mm)
	// and within 0.5 m of the model's own Model.DepthM over 0–300 Ma (the thermal package's
	// bound for its table); ages outside the table (NaN, negative, −0, from 400 Ma on, infinite)
	// must give what Table.DepthM gives. Every sweep also runs the ages in one chunk mixed with
	// out-of-table values, so the recomputation pass is exercised next to table cells.
	specials := []float64{math.NaN(), math.Copysign(0, -1), -1e-30, -1e-6, -1, -400, math.Inf(-1), math.Inf(1),
		399.99, 400, 400.01, 511.9, 512, 512.5, 600, 1e4, 1e-40, 1e-30, 1e-12, 1e-9}
	var ages []float64
	for k := 0; k <= 80000; k++ {
		ages = append(ages, 0.005*float64(k)) // 0..400 Ma by 5 ka
	}
	for e := -40.0; e <= 0; e += 0.125 {
		ages = append(ages, math.Pow(10, e)) // young ages 1e-40..1 Ma, where √age is steepest
	}
	for i, a := range specials {
		ages = append(ages, a) // grouped at the end, and interleaved below
		if j := 97 * (i + 1); j < len(ages) {
			ages[j], ages[len(ages)-1] = ages[len(ages)-1], ages[j]
		}
	}
	sh := resShale(t)
	for _, id := range thermal.BuiltinIDs() {
		t.Run(id, func(t *testing.T) {
			m := resModel(t, id)
			pr := m.Params()
			tbl := thermal.TableFor(m)
			dt := depthTableFor(tbl)
			st, err := sedTableFor(sh, pr.MantleDensityKgM3, pr.WaterDensityKgM3)
			if err != nil {
				t.Fatal(err)
			}
			a32 := make([]float32, len(ages))
			for i, a := range ages {
				a32[i] = float32(a)
			}
			zero := make([]float32, len(ages))
			res := make([]float32, len(ages))
			for c0 := 0; c0 < len(ages); c0 += residualChunk {
				c1 := min(c0+residualChunk, len(ages))
				residualFusedChunk(res[c0:c1], a32[c0:c1], zero[c0:c1], zero[c0:c1], 1, dt, st)
			}
			bad := 0
			var maxTbl, maxModel float64
			defer func() {
				t.Logf("max |fused − Table.DepthM| %.2g m, max |fused − Model.DepthM| (0–300 Ma) %.2g m", maxTbl, maxModel)
			}()
			for i := range ages {
				a := float64(a32[i])
				got := float64(res[i])
				want := tbl.DepthM(a)
				if math.IsNaN(want) || math.IsInf(want, 0) {
					if !(math.IsNaN(got) && math.IsNaN(want)) && got != want {
						t.Errorf("age %g Ma: fused %g, thermal table %g", a, got, want)
						bad++
					}
				} else if maxTbl = max(maxTbl, math.Abs(got-want)); !(math.Abs(got-want) <= 0.01) {
					t.Errorf("age %g Ma: fused %.4f m, thermal table %.4f m", a, got, want)
					bad++
				}
				if a >= 0 && a <= 300 {
					mw := m.DepthM(a)
					maxModel = max(maxModel, math.Abs(got-mw))
					if !(math.Abs(got-mw) <= 0.5) {
						t.Errorf("age %g Ma: fused %.4f m, model %.4f m", a, got, mw)
						bad++
					}
				}
				if bad > 10 {
					t.Fatal("too many failures")
				}
			}
		})
	}
}

func TestResidualFusedSedimentSweep(t *testing.T) {
	// The fused loop's sediment table against the closed form of the Sclater & Christie (1980)
	// exponential-porosity correction (sedimentClosedFormM) for every built-in compaction law,
	// over 0–40 km by 0.37 m (beyond the 32 768 m table end, where thermal's quadrature takes
	// over): within 1 cm (tolerance common practice, no source). NaN, negative and infinite
	// thicknesses must give what thermal's SedimentCorrector gives (NaN, NaN, +Inf).
	const rm, rw = 3330, 1000 // kg/m³, GDH1's mantle and water densities (Stein & Stein 1992)
	for _, name := range thermal.CompactionNames() {
		t.Run(name, func(t *testing.T) {
			c, err := thermal.CompactionByName(name)
			if err != nil {
				t.Fatal(err)
			}
			st, err := sedTableFor(c, rm, rw)
			if err != nil {
				t.Fatal(err)
			}
			dt := depthTableFor(thermal.TableFor(resModel(t, "gdh1")))
			var sed []float32
			for s := 0.0; s <= 40000; s += 0.37 {
				sed = append(sed, float32(s))
			}
			specials := []float32{float32(math.NaN()), -0.001, -5, float32(math.Inf(-1)), float32(math.Inf(1)), 1e-30, 32767.9, 32768}
			for i, s := range specials {
				sed[4096*i+7] = s // among table cells, in different chunks
			}
			age := make([]float32, len(sed)) // age 0: predicted depth = Table.DepthM(0)
			obs := make([]float32, len(sed))
			res := make([]float32, len(sed))
			for c0 := 0; c0 < len(sed); c0 += residualChunk {
				c1 := min(c0+residualChunk, len(sed))
				residualFusedChunk(res[c0:c1], age[c0:c1], obs[c0:c1], sed[c0:c1], 1, dt, st)
			}
			sc, err := thermal.NewSedimentCorrector(c, rm, rw)
			if err != nil {
				t.Fatal(err)
			}
			d0 := thermal.TableFor(resModel(t, "gdh1")).DepthM(0)
			bad := 0
			var maxErr float64
			defer func() { t.Logf("max |fused − closed form| %.2g m", maxErr) }()
			for i, s32 := range sed {
				s := float64(s32)
				got := d0 - float64(res[i]) // the correction the loop applied
				var want float64
				if s >= 0 && !math.IsInf(s, 1) {
					want = sedimentClosedFormM(s, c, rm, rw)
					maxErr = max(maxErr, math.Abs(got-want))
				} else {
					want = sc.CorrectionM(s)
				}
				ok := math.Abs(got-want) <= 0.01 || (math.IsNaN(got) && math.IsNaN(want)) || (math.IsInf(want, 0) && math.IsInf(got, 0) && math.Signbit(got) == math.Signbit(want))
				if !ok {
					t.Errorf("sediment %g m: fused correction %.4f m, want %.4f m", s, got, want)
					if bad++; bad > 10 {
						t.Fatal("too many failures")
					}
				}
			}
		})
	}
}
