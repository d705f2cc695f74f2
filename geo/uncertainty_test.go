package geo

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"
	"time"

	"github.com/paulmach/orb"

	"ridgeflank/thermal"
)

// halfSpaceSlopeC is C of the half-space depth d = d_r + C·√t (Turcotte & Schubert, Geodynamics,
// 2nd ed. 2002, eq. 4-209: d − d_r = 2ρm α (Tm − Ts)/(ρm − ρw) · √(κt/π)), t in Myr, with the
// parameters of the built-in half-space set (ρm = 3300, ρw = 1000 kg/m³, α = 3e-5 /K,
// Tm − Ts = 1300 K, κ = 1e-6 m²/s). Worked by hand: 2·3300·3e-5·1300/2300 = 0.111913;
// √(1e-6 · 3.15576e13 s / π) = 3169.4 m; C = 354.7 m/Myr^½.
func halfSpaceSlopeC() float64 {
	return 2 * 3300 * 3e-5 * 1300 / (3300 - 1000) * math.Sqrt(1e-6*thermal.SecondsPerMyr/math.Pi)
}

// First order: the depth uncertainty is |∂d/∂t|·σ with ∂d/∂t = ½·C/√t (differentiating the
// closed form above), e.g. at 50 Ma ½·354.7/√50 = 25.08 m/Myr, so σ = 2 Ma gives 50.2 m. Heat
// flow q = k ΔT/√(πκt) (T&S eq. 4-127) has ∂q/∂t = −q/(2t), and the half-space thermal
// thickness 2·erfc⁻¹(0.1)·√(κt) has ∂L/∂t = L/(2t).
func TestAgeSpreadFirstOrderHalfSpace(t *testing.T) {
	m := resModel(t, thermal.IDHalfSpace)
	if c := halfSpaceSlopeC(); math.Abs(c-354.7) > 0.1 {
		t.Fatalf("worked constant C = %v, by hand 354.7", c)
	}
	ages := []float64{20, 50, 80, 150}
	const sigma = 2.0
	age := NewGrid(len(ages), 1, 0, 1, 1, 1, CellCentre)
	for i, a := range ages {
		age.Data[i] = float32(a)
	}
	res, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, AgeSigmaMa: sigma},
		OutPredictedDepthSigma|OutHeatFlowSigma|OutThermalThicknessSigma)
	if err != nil {
		t.Fatal(err)
	}
	for i, a := range ages {
		a := a
		q := m.HeatFlowMWm2(a)
		l := m.ThermalThicknessKm(a)
		for _, c := range []struct {
			name      string
			got, want float64
			tol       float64
		}{
			// Tolerances: the table's interpolation (0.5 m, 0.1 % of heat flow) over a difference
			// step of a/16, plus float32 rounding; "the table's stated bounds".
			{"depth m", float64(res.PredictedDepthSigmaM.Data[i]), 0.5 * halfSpaceSlopeC() / math.Sqrt(a) * sigma, 2e-3},
			{"heat flow mW/m2", float64(res.HeatFlowSigmaMWm2.Data[i]), q / (2 * a) * sigma, 3e-3},
			{"thickness km", float64(res.ThermalThicknessSigmaKm.Data[i]), l / (2 * a) * sigma, 2e-3},
		} {
			t.Run(fmt.Sprintf("%s at %g Ma", c.name, a), func(t *testing.T) {
				if math.Abs(c.got-c.want) > c.tol*c.want {
					t.Errorf("age %g σ %g: %v, analytic %v", a, sigma, c.got, c.want)
				}
			})
		}
	}
	// The worked value at 50 Ma.
	if got := float64(res.PredictedDepthSigmaM.Data[1]); math.Abs(got-50.16) > 0.1 {
		t.Errorf("50 Ma, σ 2 Ma: %v m, worked 50.16 m", got)
	}
}

// monteCarloSpread is the brute-force standard deviation of f over the normal about a with
// standard deviation s, truncated at 0 (rejection sampling), from n draws of a seeded source.
func monteCarloSpread(f func(float64) float64, a, s float64, n int, seed uint64) float64 {
	r := rand.New(rand.NewPCG(seed, 7))
	var mean, m2 float64
	for i := 1; i <= n; i++ {
		t := -1.0
		for t < 0 {
			t = a + s*r.NormFloat64()
		}
		y := f(t)
		d := y - mean
		mean += d / float64(i)
		m2 += d * (y - mean)
	}
	return math.Sqrt(m2 / float64(n))
}

// The sampling branch (σ > SamplingRatio·age) against a brute-force Monte Carlo of 400 000 draws
// (seeded; its own standard error on a standard deviation is about 1/√(2n) = 0.11 %, more for
// skewed laws): within 1 %. Heat flow is tested only where the distribution stays clear of age 0
// (its variance is unbounded there).
func TestAgeSpreadSamplingMonteCarlo(t *testing.T) {
	tbl := thermal.TableFor(resModel(t, thermal.IDGDH1))
	hs := thermal.TableFor(resModel(t, thermal.IDHalfSpace))
	for _, c := range []struct {
		name       string
		f          func(float64) float64
		age, sigma float64
		tol        float64
	}{
		{"gdh1 depth 2 Ma σ 1", tbl.DepthM, 2, 1, 0.01},
		{"gdh1 depth 0.5 Ma σ 1 (truncated)", tbl.DepthM, 0.5, 1, 0.01},
		{"gdh1 depth 0 Ma σ 3 (at the ridge)", tbl.DepthM, 0, 3, 0.01},
		{"half-space depth 4 Ma σ 2", hs.DepthM, 4, 2, 0.01},
		{"gdh1 thickness 5 Ma σ 2", tbl.ThermalThicknessKm, 5, 2, 0.01},
		{"gdh1 heat flow 20 Ma σ 4", tbl.HeatFlowMWm2, 20, 4, 0.01},
		{"gdh1 depth 100 Ma σ 30 (plate flattening)", tbl.DepthM, 100, 30, 0.01},
	} {
		t.Run(c.name, func(t *testing.T) {
			if c.sigma <= SamplingRatio*c.age {
				t.Fatal("case does not exercise the sampling branch")
			}
			got := ageSpread(c.f, nil, c.age, c.sigma)
			want := monteCarloSpread(c.f, c.age, c.sigma, 400000, 42)
			if math.Abs(got-want) > c.tol*want {
				t.Errorf("quadrature %v, Monte Carlo %v", got, want)
			}
		})
	}
}

// At the switch (σ = SamplingRatio·age) the two branches agree within 1 % for a √age law (the
// half-space: the neglected terms are of order (σ/age)²) and within 3 % for the plate (GDH1),
// whose flattening adds terms of order (σ/τ)² with τ = L²/(π²κ) ≈ 36 Myr for GDH1 (Stein &
// Stein 1992 parameters; worked from L = 95 km, κ = 8e-7 m²/s).
func TestAgeSpreadBranchesMeet(t *testing.T) {
	tbl := thermal.TableFor(resModel(t, thermal.IDGDH1))
	hs := thermal.TableFor(resModel(t, thermal.IDHalfSpace))
	for _, c := range []struct {
		name string
		f    func(float64) float64
		age  float64
		tol  float64
	}{
		{"half-space 1 Ma", hs.DepthM, 1, 0.01},
		{"half-space 10 Ma", hs.DepthM, 10, 0.01},
		{"half-space 100 Ma", hs.DepthM, 100, 0.01},
		{"gdh1 1 Ma", tbl.DepthM, 1, 0.01},
		{"gdh1 10 Ma", tbl.DepthM, 10, 0.01},
		{"gdh1 60 Ma", tbl.DepthM, 60, 0.03},
	} {
		t.Run(c.name, func(t *testing.T) {
			s := SamplingRatio * c.age
			fo := ageSpread(c.f, nil, c.age, s)
			sm := sampledSpread(c.f, c.age, s)
			if math.Abs(fo-sm) > c.tol*sm {
				t.Errorf("first order %v, sampled %v", fo, sm)
			}
		})
	}
	if v := ageSpread(tbl.DepthM, nil, 10, 0); v != 0 {
		t.Errorf("σ 0: %v", v)
	}
	for _, bad := range [][2]float64{{-1, 1}, {10, -1}, {math.NaN(), 1}, {10, math.NaN()}} {
		if v := ageSpread(tbl.DepthM, nil, bad[0], bad[1]); !math.IsNaN(v) {
			t.Errorf("age %g σ %g: %v, want NaN", bad[0], bad[1], v)
		}
	}
}

// An age-uncertainty grid holding one value everywhere and that single value give the same
// answers, bit for bit on the grid path and the point path except the depth and residual
// uncertainties of the single value's sampled ages, which come from its spreadTable (within
// spreadTableTol of the direct quadrature, TestSpreadTableMatchesQuadrature); the residual's
// uncertainty is the predicted depth's where the residual has a value.
func TestAgeSpreadGridEqualsSingleValue(t *testing.T) {
	m := resModel(t, "gdh1")
	const nx, ny, d = 12, 9, 0.25
	age := resFill(nx, ny, -141, -29, d, CellCentre, resAge)
	depth := resFill(nx, ny, -141, -29, d, CellCentre, func(lon, lat float64) float64 { return 3000 + 40*math.Abs(lon+140) })
	depth.Data[5] = float32(math.NaN())
	// on another lattice: sampled bilinearly, a constant stays the constant
	sig := resFill(50, 40, -142, -28, 0.1, CellCentre, func(lon, lat float64) float64 { return 3 })
	want := OutPredictedDepthSigma | OutHeatFlowSigma | OutThermalThicknessSigma | OutResidualDepthSigma | OutRidgePush
	base := Inputs{Age: age, Depth: depth, DepthSense: DepthPositiveDown, Model: m}
	one := base
	one.AgeSigmaMa = 3
	grid := base
	grid.AgeSigma = sig
	r1, err := Evaluate(context.Background(), one, want)
	if err != nil {
		t.Fatal(err)
	}
	r2, err := Evaluate(context.Background(), grid, want)
	if err != nil {
		t.Fatal(err)
	}
	pe, err := NewPointEvaluator(grid, want)
	if err != nil {
		t.Fatal(err)
	}
	for k := range nx * ny {
		for _, c := range []struct {
			name string
			a, b float32
		}{
			{"depth", r1.PredictedDepthSigmaM.Data[k], r2.PredictedDepthSigmaM.Data[k]},
			{"heat flow", r1.HeatFlowSigmaMWm2.Data[k], r2.HeatFlowSigmaMWm2.Data[k]},
			{"thickness", r1.ThermalThicknessSigmaKm.Data[k], r2.ThermalThicknessSigmaKm.Data[k]},
			{"residual", r1.ResidualDepthSigmaM.Data[k], r2.ResidualDepthSigmaM.Data[k]},
			{"ridge push", r1.RidgePushNPerM.Data[k], r2.RidgePushNPerM.Data[k]},
		} {
			tabulated := (c.name == "depth" || c.name == "residual") && 3 > SamplingRatio*float64(age.Data[k])
			switch {
			case tabulated && c.a == c.a && c.b == c.b:
				if d := math.Abs(float64(c.a) - float64(c.b)); d > spreadTableTol(float64(c.b)) {
					t.Fatalf("cell %d %s: single %v, grid %v (beyond the table's bound)", k, c.name, c.a, c.b)
				}
			case math.Float32bits(c.a) != math.Float32bits(c.b):
				t.Fatalf("cell %d %s: single %v, grid %v", k, c.name, c.a, c.b)
			}
		}
		v := pe.At(age.Lon(k%nx), age.Lat(k/nx))
		if float32(v.PredictedDepthSigmaM) != r2.PredictedDepthSigmaM.Data[k] || float32(v.ResidualDepthSigmaM) != r2.ResidualDepthSigmaM.Data[k] &&
			!(math.IsNaN(v.ResidualDepthSigmaM) && math.IsNaN(float64(r2.ResidualDepthSigmaM.Data[k]))) {
			t.Fatalf("cell %d: point %v/%v, grid %v/%v", k, v.PredictedDepthSigmaM, v.ResidualDepthSigmaM,
				r2.PredictedDepthSigmaM.Data[k], r2.ResidualDepthSigmaM.Data[k])
		}
	}
	if !math.IsNaN(float64(r1.ResidualDepthSigmaM.Data[5])) {
		t.Error("residual uncertainty where the observed depth has no data")
	}
	if r1.ResidualDepthSigmaM.Data[6] != r1.PredictedDepthSigmaM.Data[6] {
		t.Error("residual uncertainty differs from the predicted depth's")
	}
}

// No uncertainty source, or a bad single value, is refused; NaN is no data.
func TestAgeSpreadRefused(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(4, 4, 0, 4, 1, CellCentre, resAge)
	for _, s := range []float64{0, -1, math.Inf(1)} {
		if _, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, AgeSigmaMa: s}, OutPredictedDepthSigma); err == nil {
			t.Errorf("σ %v accepted", s)
		}
	}
	r, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, AgeSigmaMa: math.NaN()}, OutPredictedDepthSigma)
	if err != nil || !math.IsNaN(float64(r.PredictedDepthSigmaM.Data[0])) {
		t.Errorf("σ NaN: %v, %v", err, r)
	}
}

// The smallest positive σ values (5e-324 Ma, the least float64, made the spread table's
// interval width underflow to 0 and panic): the depth uncertainty is finite and, by the first
// order rule |∂d/∂t|·σ, at most 1e-6 m (∂d/∂t is below 1e3 m/Myr beyond 0.1 Ma, from memory).
func TestAgeSpreadTinySigma(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(4, 4, 0, 4, 1, CellCentre, resAge)
	for _, s := range []float64{5e-324, 1e-310, 1e-300, 1e-40} {
		r, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, AgeSigmaMa: s}, OutPredictedDepthSigma)
		if err != nil {
			t.Fatalf("σ %g: %v", s, err)
		}
		for i, v := range r.PredictedDepthSigmaM.Data {
			if !(math.Abs(float64(v)) <= 1e-6) && !math.IsNaN(float64(age.Data[i])) {
				t.Errorf("σ %g: depth uncertainty %v m at age %v Ma", s, v, age.Data[i])
			}
		}
	}
}

// Across the antimeridian: an output lattice in 0..360 longitudes (170°E to 170°W) with the age
// uncertainty on a global −180..180 grid, σ = 2 + sin(lon) (continuous across ±180°). Each cell's
// uncertainty is ageSpread at the σ of its true position (bilinear sampling of sin on 0.25°
// cells errs by < 1e-5 Ma; tolerance 1e-4 of the value).
func TestAgeSpreadAntimeridian(t *testing.T) {
	m := resModel(t, "gdh1")
	tbl := thermal.TableFor(m)
	sigf := func(lon, lat float64) float64 { return 2 + math.Sin(lon*math.Pi/180) }
	age := resFill(80, 4, 170, 1, 0.25, CellCentre, func(lon, lat float64) float64 { return 30 + 0.5*math.Abs(lon-180) })
	sig := resFill(1440, 720, -180, 90, 0.25, CellCentre, sigf)
	res, err := Evaluate(context.Background(), Inputs{Age: age, Model: m, AgeSigma: sig}, OutPredictedDepthSigma)
	if err != nil {
		t.Fatal(err)
	}
	for r := range age.NY {
		for c := range age.NX {
			k := r*age.NX + c
			want := ageSpread(tbl.DepthM, tbl.SubsidenceRateMPerMyr, float64(age.Data[k]), sigf(age.Lon(c), age.Lat(r)))
			if got := float64(res.PredictedDepthSigmaM.Data[k]); math.Abs(got-want) > 1e-4*want {
				t.Fatalf("lon %g: %v, want %v", age.Lon(c), got, want)
			}
		}
	}
}

// The ridge-push table against thermal.RidgePushNPerM directly (its own check values are in
// thermal's tests: Turcotte & Schubert's closed form for the half-space) within 1e-4, and 0 at
// the ridge.
func TestRidgePushTable(t *testing.T) {
	for _, id := range []string{thermal.IDHalfSpace, thermal.IDGDH1} {
		m := resModel(t, id)
		tb := ridgePushTableFor(m)
		for _, a := range []float64{0, 3.7, 10, 42, 100, 180, 399, 450} {
			got, want := tb.at(a), thermal.RidgePushNPerM(m, a)
			if math.Abs(got-want) > 1e-4*math.Abs(want) {
				t.Errorf("%s %g Ma: table %v, direct %v", id, a, got, want)
			}
		}
		if !math.IsNaN(tb.at(-1)) || !math.IsNaN(tb.at(math.NaN())) {
			t.Errorf("%s: negative or NaN age gives a value", id)
		}
	}
}

// Stats.QuadratureMean, the uncertainty of a weighted mean of independent cells, √(Σw²σ²)/Σw:
// worked by hand for two cells at latitudes 0° and 60° (weights 1 and 0.5) holding σ = 1 each:
// √(1 + 0.25)/1.5 = 0.745356; and four equal cells on the equator holding σ = 10: 10/√4 = 5
// (the σ/√n rule). AreaWeightedStats and StatsStream agree.
func TestQuadratureMean(t *testing.T) {
	two := NewGrid(1, 2, 0, 60, 1, 60, Node) // rows at 60° and 0°
	two.Data = []float32{1, 1}
	four := NewGrid(4, 1, 0, 0, 1, 1, Node)
	four.Data = []float32{10, 10, 10, 10}
	for _, c := range []struct {
		name string
		g    *Grid
		want float64
	}{
		{"latitudes 60 and 0", two, math.Sqrt(1.25) / 1.5},
		{"four equal cells", four, 5},
	} {
		t.Run(c.name, func(t *testing.T) {
			st, err := AreaWeightedStats(c.g, Mask{}, StatsOptions{HistogramBins: 2})
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(st.QuadratureMean-c.want) > 1e-9 {
				t.Errorf("AreaWeightedStats %v, worked %v", st.QuadratureMean, c.want)
			}
			ss, err := NewStatsStream(StatsOptions{HistogramBins: 2}, 0)
			if err != nil {
				t.Fatal(err)
			}
			if err := ss.AddMoments(c.g, Mask{}); err != nil {
				t.Fatal(err)
			}
			if err := ss.BeginHistogram(); err != nil {
				t.Fatal(err)
			}
			if err := ss.AddHistogram(c.g, Mask{}); err != nil {
				t.Fatal(err)
			}
			sr, err := ss.Result()
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(sr.QuadratureMean-c.want) > 1e-9 {
				t.Errorf("StatsStream %v, worked %v", sr.QuadratureMean, c.want)
			}
		})
	}
}

// BenchmarkAgeUncertainty reports the cost of the residual depth with its age uncertainty
// relative to the plain residual kernel (ratio x-residual; the goal is ≤ 1.5) over a
// 30°×30° window of the SYNTHETIC benchmark grids, both written into output grids the caller
// reuses (EvaluateInto, as streaming exports and the grid command do), so the ratio compares
// kernels rather than the page faults of fresh output grids. Cases: one σ for the question
// (0.5 and 2 Ma; about one cell in eleven young enough, age < 20 Ma, to be sampled) and a σ grid
// on the age grid's lattice (0.2–4 Ma varying smoothly, as an uploaded age-uncertainty grid does).
//
// The plain and uncertainty runs alternate within each iteration, so load on a shared machine
// falls on both; the ratio is the figure to read. The uncertainty moves more bytes: one more
// output stream for one σ (5 streams against 4), one more input and one more output for a σ
// grid (6 against 4), a floor of 1.25 and 1.5 where the pass is bound by memory.
//
// Measured on a shared 2-core machine (AMD EPYC, load average about 11 from other work;
// -benchtime 200x -cpu 1, three runs each): one σ 1.46–1.57 (σ 2 Ma: 1.46–1.48; 0.5 Ma:
// 1.52–1.57), residual 2.4–3.8 ns per cell; a σ grid 2.04–2.08 (4.1 before the σ-bucket rows,
// with every young cell integrated directly). Under a load average of 15–20 the ratios spread
// by ±0.3.
func BenchmarkAgeUncertainty(b *testing.B) {
	m, err := thermal.Builtin("gdh1")
	if err != nil {
		b.Fatal(err)
	}
	sh, err := thermal.CompactionByName("shale")
	if err != nil {
		b.Fatal(err)
	}
	ageG, depthG, sedG, _, _ := residualBenchGrids()
	// the window is cut once, outside the timed loop, so both runs time the kernels alone
	win := orb.Bound{Min: orb.Point{0, 0}, Max: orb.Point{30, 30}}
	var age, depth, sed *Grid
	for _, c := range []struct {
		dst **Grid
		g   *Grid
	}{{&age, ageG}, {&depth, depthG}, {&sed, sedG}} {
		w, err := c.g.Window(win)
		if err != nil {
			b.Fatal(err)
		}
		*c.dst = w
	}
	// the σ grid on the age grid's lattice, as an age grid's uncertainty grid comes
	sigGrid := &Grid{NX: age.NX, NY: age.NY, West: age.West, North: age.North, DX: age.DX, DY: age.DY,
		Registration: age.Registration, Data: make([]float32, len(age.Data))}
	for r := range age.NY {
		for c := range age.NX {
			sigGrid.Data[r*age.NX+c] = float32(2.1 + 1.9*math.Sin(0.02*float64(c))*math.Cos(0.015*float64(r)))
		}
	}
	for _, tc := range []struct {
		name  string
		sigma float64
		grid  *Grid
	}{{"sigma=0.5Ma", 0.5, nil}, {"sigma=2Ma", 2, nil}, {"sigma-grid", 0, sigGrid}} {
		b.Run(tc.name, func(b *testing.B) {
			in := Inputs{Age: age, Depth: depth, DepthSense: ElevationPositiveUp, Sediment: sed, Compaction: sh, Model: m,
				AgeSigmaMa: tc.sigma, AgeSigma: tc.grid}
			plain, err := Evaluate(context.Background(), in, OutResidualDepth)
			if err != nil {
				b.Fatal(err)
			}
			out := plain.ResidualDepthM
			cells := float64(out.NX * out.NY)
			sigOut := &Grid{NX: out.NX, NY: out.NY, Data: make([]float32, len(out.Data))}
			dPlain := &Result{ResidualDepthM: out}
			dUnc := &Result{ResidualDepthM: out, ResidualDepthSigmaM: sigOut}
			var tPlain, tUnc time.Duration
			b.ReportAllocs()
			b.ResetTimer()
			for i := 0; i < b.N; i++ {
				t0 := time.Now()
				if err := EvaluateInto(context.Background(), in, dPlain); err != nil {
					b.Fatal(err)
				}
				t1 := time.Now()
				if err := EvaluateInto(context.Background(), in, dUnc); err != nil {
					b.Fatal(err)
				}
				tPlain += t1.Sub(t0)
				tUnc += time.Since(t1)
			}
			b.StopTimer()
			p := float64(tPlain.Nanoseconds()) / float64(b.N) / cells
			u := float64(tUnc.Nanoseconds()) / float64(b.N) / cells
			b.ReportMetric(p, "residual-ns/cell")
			b.ReportMetric(u, "ns/cell")
			b.ReportMetric(u/p, "x-residual")
		})
	}
}

// EvaluateRows gives the uncertainty and ridge-push outputs of Evaluate, block by block.
func TestAgeSpreadRowsEqualEvaluate(t *testing.T) {
	m := resModel(t, "gdh1")
	age := resFill(12, 9, -141, -29, 0.25, CellCentre, resAge)
	in := Inputs{Age: age, Model: m, AgeSigmaMa: 4}
	want := OutPredictedDepthSigma | OutHeatFlowSigma | OutThermalThicknessSigma | OutRidgePush
	all, err := Evaluate(context.Background(), in, want)
	if err != nil {
		t.Fatal(err)
	}
	err = EvaluateRows(context.Background(), in, want, 2, func(b RowBlock) error {
		for _, c := range []struct {
			name string
			got  []float32
			g    *Grid
		}{
			{"depth", b.PredictedDepthSigmaM, all.PredictedDepthSigmaM}, {"heat flow", b.HeatFlowSigmaMWm2, all.HeatFlowSigmaMWm2},
			{"thickness", b.ThermalThicknessSigmaKm, all.ThermalThicknessSigmaKm}, {"ridge push", b.RidgePushNPerM, all.RidgePushNPerM},
		} {
			for i := range b.Rows * 12 {
				if c.got[i] != c.g.Data[b.Row0*12+i] {
					t.Fatalf("%s row %d: rows %v, grid %v", c.name, b.Row0+i/12, c.got[i], c.g.Data[b.Row0*12+i])
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// spreadTableTol is the stated bound of a spreadTable against the direct quadrature at depth
// uncertainty v (m): 1e-4 of it plus 1 mm (linear interpolation over 512 intervals of
// σ/SamplingRatio misses a √age law's spread by about (10/512)²·(3/4)/8 ≈ 4e-5 of it at age σ,
// less elsewhere, plus float32 rounding; common practice, no source).
func spreadTableTol(v float64) float64 { return 1e-4*v + 1e-3 }

// The tabulated sampling branch (spreadTable, through depthSpread as the grid and point paths
// use it) against the direct quadrature (ageSpread over the model's table) over a grid of σ from
// 0.01 to 300 Ma and ages from 0 (the ridge, where the truncation matters most) through tiny
// ages to the switch (the node boundary at or just above σ/SamplingRatio), for the half-space
// and GDH1 depths; and the first-order branch from the switch to the table's end, within float32
// rounding of |dd/dt|·σ computed per cell.
func TestSpreadTableMatchesQuadrature(t *testing.T) {
	for _, id := range []string{thermal.IDHalfSpace, thermal.IDGDH1} {
		m := resModel(t, id)
		tbl := thermal.TableFor(m)
		for _, sigma := range []float64{0.01, 0.5, 2, 7.3, 40, 300} {
			t.Run(fmt.Sprintf("%s σ %g Ma", id, sigma), func(t *testing.T) {
				p := &residualPlan{tbl: tbl, sigmaMa: sigma, rate: (*ageNodes)(tbl.SubsidenceRateNodes())}
				direct := &residualPlan{tbl: tbl, rate: p.rate}
				p.spread = spreadTableFor(m, tbl, sigma)
				end := sigma / SamplingRatio
				ages := []float32{0, 1e-30, 1e-9, float32(1e-6 * sigma), float32(0.01 * sigma)}
				for k := 1; k < 400; k++ {
					ages = append(ages, float32(end*float64(k)/400))
				}
				ages = append(ages, math.Nextafter32(float32(end), 0), float32(end), float32(1.002*end), float32(1.01*end), float32(3*end), 350, 399.9)
				row := make([]float32, len(ages))
				p.depthSpreadRow(row, ages, nil, sigma)
				worst := 0.0
				for i, a := range ages {
					if got := float32(p.depthSpread(a, sigma)); got != row[i] {
						t.Errorf("age %g: row %v, point %v", a, row[i], got)
					}
					if math.Float32bits(a) >= p.spread.switchBits {
						// the first-order branch: the rate nodes times σ, within float32 rounding
						want := direct.depthSpread(a, sigma)
						if d := math.Abs(float64(row[i]) - want); !(d <= 1e-6*want+1e-9) {
							t.Errorf("age %g (first order): row %v, per cell %v", a, row[i], want)
						}
						continue
					}
					if a > float32(end) && float64(a) > end*(1+1.0/256) {
						t.Errorf("age %g: sampled, but the switch is at %g (more than a node above σ/SamplingRatio)", a, end)
					}
					want := sampledSpread(tbl.DepthM, float64(a), sigma)
					d := math.Abs(float64(row[i]) - want)
					worst = max(worst, d/want)
					if d > spreadTableTol(want) {
						t.Errorf("age %g: table %v, quadrature %v (%.2g m)", a, row[i], want, d)
					}
				}
				t.Logf("largest relative difference %.2g", worst)
			})
		}
	}
}

// sigmaGridTol is the stated bound of the σ-bucket rows (sigmaGrid) against the direct
// quadrature at depth uncertainty v (m): 2e-4 of it plus 5 mm (the x interpolation as
// spreadTableTol, about 4e-5, plus the σ interpolation, about 3e-5 for a √age law, plus float32
// rounding of the rows; where a plate model has flattened, σ of a hundred Ma or more, the
// spread at fixed age/σ is far from √σ and small, and the σ interpolation's few millimetres
// dominate; common practice, no source).
func sigmaGridTol(v float64) float64 { return 2e-4*v + 5e-3 }

// The σ-grid branch of depthSpread (an age-uncertainty grid: every cell its own σ) against the
// direct quadrature (ageSpread over the model's table) for σ from 0.01 to 300 Ma, including
// values inside buckets and at bucket starts, and ages from the ridge to just below the switch
// to first order; beyond the switch it is the first-order branch, unchanged.
func TestSigmaGridMatchesQuadrature(t *testing.T) {
	for _, id := range []string{thermal.IDHalfSpace, thermal.IDGDH1} {
		m := resModel(t, id)
		tbl := thermal.TableFor(m)
		p := &residualPlan{tbl: tbl, rate: (*ageNodes)(tbl.SubsidenceRateNodes()), sigGrid: newSigmaGrid(m, tbl)}
		direct := &residualPlan{tbl: tbl, rate: p.rate}
		worst := 0.0
		for _, sigma := range []float64{0.01, 0.37, 0.5, 1, 1.9, 2, 3.3, 7.3, 40, 111, 300} {
			end := sigma / SamplingRatio
			for k := 0; k <= 200; k++ {
				a := float32(end * float64(k) / 200)
				if k == 200 {
					a = math.Nextafter32(float32(end), 0)
				}
				got := p.depthSpread(a, sigma)
				want := ageSpread(tbl.DepthM, tbl.SubsidenceRateMPerMyr, float64(a), sigma)
				if d := math.Abs(got - want); !(d <= sigmaGridTol(want)) {
					t.Fatalf("%s σ %g Ma age %g Ma: table %.6f m, quadrature %.6f m (|Δ| %.3g m > %.3g m)", id, sigma, a, got, want, d, sigmaGridTol(want))
				} else if want > 1 {
					worst = math.Max(worst, d/want)
				}
			}
			for _, a := range []float32{float32(end), float32(1.5 * end), float32(30 * end)} {
				if got, want := p.depthSpread(a, sigma), direct.depthSpread(a, sigma); got != want {
					t.Errorf("%s σ %g Ma age %g Ma (first order): %v, untabulated %v", id, sigma, a, got, want)
				}
			}
		}
		t.Logf("%s: largest relative difference %.2g", id, worst)
		for _, c := range []struct{ a, s float64 }{{math.NaN(), 1}, {1, math.NaN()}, {-1, 1}, {5, 0}, {5, 1e-9}} {
			got, want := p.depthSpread(float32(c.a), c.s), direct.depthSpread(float32(c.a), c.s)
			if !(got == want || math.IsNaN(got) && math.IsNaN(want)) {
				t.Errorf("age %g σ %g: %v, untabulated %v", c.a, c.s, got, want)
			}
		}
	}
}

// The residual's uncertainty found in the residual's own loop (residualSigmaFused: residual
// and its uncertainty alone, with sediment) equals, bit for bit, the separate pass the other
// output sets take (asking for the predicted depth's uncertainty as well), for one σ and for an
// age-uncertainty grid, over ages that reach every branch: the ridge, young ages sampled, old
// ages to first order, beyond the model's table, negative, NaN; sediment beyond its table; σ
// values NaN, zero, negative, tiny and large.
func TestResidualSigmaFusedEqualsSeparatePass(t *testing.T) {
	m := resModel(t, thermal.IDGDH1)
	const nx, ny = 40, 9
	ages := []float32{0, 1e-30, 0.01, 0.3, 1, 2.5, 7, 19, 20, 21, 60, 150, 399, 1e4, -3, float32(math.NaN()), float32(math.Inf(1))}
	sigmas := []float32{2, 0.5, 1e-9, 0, -1, float32(math.NaN()), 40, 3e5}
	age := NewGrid(nx, ny, -20, 10, 0.5, 0.5, CellCentre)
	depth := NewGrid(nx, ny, -20, 10, 0.5, 0.5, CellCentre)
	sed := NewGrid(nx, ny, -20, 10, 0.5, 0.5, CellCentre)
	sig := NewGrid(nx, ny, -20, 10, 0.5, 0.5, CellCentre)
	for i := range age.Data {
		age.Data[i] = ages[i%len(ages)]
		depth.Data[i] = float32(-2500 - 11*float64(i%97))
		sed.Data[i] = float32(37 * float64(i%13))
		if i%31 == 5 {
			sed.Data[i] = 1e6 // beyond the sediment nodes
		}
		if i%29 == 3 {
			depth.Data[i] = float32(math.NaN())
		}
		sig.Data[i] = sigmas[(i/len(ages))%len(sigmas)]
	}
	for _, c := range []struct {
		name  string
		sigma float64
		grid  *Grid
	}{{"one σ 2 Ma", 2, nil}, {"one σ 0.5 Ma", 0.5, nil}, {"σ grid", 0, sig}} {
		t.Run(c.name, func(t *testing.T) {
			in := Inputs{Age: age, Depth: depth, DepthSense: ElevationPositiveUp, Sediment: sed, Compaction: resShale(t), Model: m,
				AgeSigmaMa: c.sigma, AgeSigma: c.grid}
			fused, err := Evaluate(context.Background(), in, OutResidualDepth|OutResidualDepthSigma)
			if err != nil {
				t.Fatal(err)
			}
			sep, err := Evaluate(context.Background(), in, OutResidualDepth|OutResidualDepthSigma|OutPredictedDepthSigma)
			if err != nil {
				t.Fatal(err)
			}
			finite := 0
			for i := range fused.ResidualDepthM.Data {
				a, b := fused.ResidualDepthM.Data[i], sep.ResidualDepthM.Data[i]
				sa, sb := fused.ResidualDepthSigmaM.Data[i], sep.ResidualDepthSigmaM.Data[i]
				same := func(x, y float32) bool { return x == y || x != x && y != y }
				if !same(a, b) || !same(sa, sb) {
					t.Fatalf("cell %d (age %g, σ %g): fused %v ± %v, separate %v ± %v", i, age.Data[i], sig.Data[i], a, sa, b, sb)
				}
				if sa == sa {
					finite++
				}
			}
			if finite < nx*ny/3 {
				t.Errorf("only %d of %d uncertainties have a value: the test reaches too few branches", finite, nx*ny)
			}
		})
	}
}
