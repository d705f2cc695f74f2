package thermal

import (
	"fmt"
	"math"
	"sync"
	"testing"
)

// minNormal32 is the smallest normal float32, 2^−126.
const minNormal32 = 0x1p-126

// nodeSweep is a dense set of float32 values over [0, end) and a little
// beyond: a uniform sweep, a geometric sweep down to the subnormals, the
// octave boundaries and their neighbours.
func nodeSweep(end float64) []float32 {
	var xs []float32
	for k := 0; k <= 100000; k++ {
		xs = append(xs, float32(end*float64(k)/100000))
	}
	for e := -44.0; e <= math.Log10(end); e += 0.01 {
		xs = append(xs, float32(math.Pow(10, e)))
	}
	for e := -20; float64(e) <= math.Log2(end); e++ {
		p := float32(math.Ldexp(1, e))
		xs = append(xs, p, math.Nextafter32(p, 0), math.Nextafter32(p, 2*p))
	}
	return xs
}

// The node interpolation against closed forms computed by the math package
// (a general reference library): a power law C·x^p on nodes of spacing
// h ≤ x/256 misses by at most h²·|f″|/8 = |p(p−1)|/524288 of the value (the
// textbook error bound of linear interpolation, e.g. Burden & Faires,
// Numerical Analysis, theorem on the Lagrange remainder; from memory), plus
// float32 rounding of the nodes and the sum (a few 6e-8 of the value,
// allowed as 3e-7). The cases are the shapes the tables hold: √x (depth and
// thickness of half-space cooling), 1/√x (heat flow), and a smooth
// saturating exponential (sediment correction). The relative bound holds for
// normal numbers (x ≥ 2^−126 ≈ 1.2e-38); below, the float32 subnormals are
// spaced uniformly and only the values stay inside the table.
func TestFloat32NodesAgainstClosedForms(t *testing.T) {
	for _, tc := range []struct {
		name     string
		end      float32
		f        func(float64) float64
		relBound float64 // interpolation bound relative to |f| (or abs, see absBound)
		absBound float64
	}{
		{"sqrt", 512, math.Sqrt, 0.25/524288 + 3e-7, 0},
		{"inverse sqrt", 512, func(x float64) float64 { return 1 / math.Sqrt(x) }, 0.75/524288 + 3e-7, 0},
		// 1000·(1 − e^(−x/5000)): f″ ≤ 1000/5000² = 4e-5, h ≤ x/256, so
		// h²f″/8 ≤ x²·4e-5·e^(−x/5000)/524288 ≤ 4·5000²·4e-5·e^−2/524288
		// ≈ 1.0e-3 (largest at x = 10 km); float32 rounding of ≤ 1000 adds
		// 1.2e-4.
		{"saturating exponential", 1 << 15, func(x float64) float64 { return 1000 * (1 - math.Exp(-x/5000)) }, 0, 1.2e-3},
	} {
		t.Run(tc.name, func(t *testing.T) {
			n := newFloat32Nodes(tc.end, tc.f)
			if got, want := n.EndBits(), math.Float32bits(tc.end); got != want {
				t.Fatalf("EndBits %#x, want %#x", got, want)
			}
			if n.Len() != int(math.Float32bits(tc.end)>>Float32NodeShift) {
				t.Fatalf("%d nodes", n.Len())
			}
			xs := nodeSweep(float64(tc.end))
			out := make([]float32, len(xs))
			outside := n.batch(xs, out)
			if !outside {
				t.Error("the sweep's values at the end were not reported outside")
			}
			worst := 0.0
			for i, x := range xs {
				in := x < tc.end
				if math.IsNaN(float64(out[i])) == in {
					t.Fatalf("x = %g: %g (inside the table: %v)", x, out[i], in)
				}
				if !in || x > 0 && x < minNormal32 || x == 0 && math.IsInf(tc.f(0), 0) {
					continue // the subnormals are spaced uniformly: no relative bound there
				}
				want := tc.f(float64(x))
				err := math.Abs(float64(out[i]) - want)
				bound := tc.absBound + tc.relBound*math.Abs(want)
				if bound > 0 {
					worst = max(worst, err/bound)
				}
				if err > bound {
					t.Fatalf("x = %g: %g, want %g (error %.3g, bound %.3g)", x, out[i], want, err, bound)
				}
			}
			t.Logf("worst error %.2f of the bound", worst)
		})
	}
}

// Everything outside the table falls out through the one index test, and a
// value whose f is infinite (heat flow at age 0) gives that infinity.
func TestFloat32NodesOutside(t *testing.T) {
	n := newFloat32Nodes(TableMaxAgeMa, func(x float64) float64 { return 1 / math.Sqrt(x) })
	for _, tc := range []struct {
		x       float32
		outside bool // not NaN and outside: needs the caller's fallback
	}{
		{float32(math.NaN()), false},
		{float32(math.Copysign(0, -1)), true},
		{-1e-40, true},
		{-5, true},
		{float32(math.Inf(-1)), true},
		{float32(math.Inf(1)), true},
		{TableMaxAgeMa, true},
		{math.Nextafter32(TableMaxAgeMa, 1000), true},
		{1e30, true},
	} {
		t.Run(fmt.Sprint(tc.x), func(t *testing.T) {
			out := []float32{7}
			if got := n.batch([]float32{tc.x}, out); got != tc.outside || !math.IsNaN(float64(out[0])) {
				t.Errorf("outside %v, value %g; want %v, NaN", got, out[0], tc.outside)
			}
		})
	}
	out := []float32{7, 7}
	n.batch([]float32{0, math.Nextafter32(TableMaxAgeMa, 0)}, out)
	if !math.IsInf(float64(out[0]), 1) {
		t.Errorf("f(0) = %g, want +Inf", out[0])
	}
	near(t, "last value below the end", float64(out[1]), 1/math.Sqrt(TableMaxAgeMa), 1e-8)
}

// The end of each table is on a node boundary and is the documented value.
func TestNodeTableEnds(t *testing.T) {
	tb := TableFor(mustBuiltin(t, IDGDH1))
	c, _ := CompactionByName("shale")
	sc, err := NewSedimentCorrector(c, testMantleKgM3, testSeaWaterKgM3)
	if err != nil {
		t.Fatal(err)
	}
	for _, tc := range []struct {
		name string
		n    Float32Nodes
		end  float32
	}{
		{"depth", tb.DepthNodes(), TableMaxAgeMa},
		{"heat flow", tb.HeatFlowNodes(), TableMaxAgeMa},
		{"thickness", tb.ThermalThicknessNodes(), TableMaxAgeMa},
		{"sediment", sc.Nodes(), SedimentNodesMaxM},
	} {
		t.Run(tc.name, func(t *testing.T) {
			if got, want := tc.n.EndBits(), math.Float32bits(tc.end); got != want {
				t.Errorf("table ends at %g, want %g", math.Float32frombits(got), tc.end)
			}
		})
	}
}

// The batch forms give exactly the scalar methods' values (both read the
// same nodes and share the fallback), including every value outside the
// tables: NaN, −0, negative, infinite, at and beyond the end.
func TestBatchEqualsScalar(t *testing.T) {
	specials := []float32{float32(math.NaN()), float32(math.Copysign(0, -1)), -1e-30, -1, float32(math.Inf(-1)), float32(math.Inf(1)),
		0, 1e-44, 1e-30, 399.99, math.Nextafter32(TableMaxAgeMa, 0), TableMaxAgeMa, 400.01, 511.9, 512, 1e4}
	same := func(a, b float64) bool { return a == b || math.IsNaN(a) && math.IsNaN(b) }
	for _, id := range BuiltinIDs() {
		tb := TableFor(mustBuiltin(t, id))
		t.Run(id, func(t *testing.T) {
			ages := append(nodeSweep(300), specials...)
			out := make([]float32, len(ages))
			for _, q := range []struct {
				name   string
				batch  func(ages, out []float32)
				scalar func(float64) float64
			}{
				{"depth", tb.DepthsM, tb.DepthM},
				{"heat flow", tb.HeatFlowsMWm2, tb.HeatFlowMWm2},
				{"thickness", tb.ThermalThicknessesKm, tb.ThermalThicknessKm},
			} {
				q.batch(ages, out)
				for i, a := range ages {
					if want := float64(float32(q.scalar(float64(a)))); !same(float64(out[i]), want) {
						t.Fatalf("%s at %g Ma: batch %g, scalar %g", q.name, a, out[i], want)
					}
				}
			}
		})
	}
	c, _ := CompactionByName("sand")
	sc, err := NewSedimentCorrector(c, testMantleKgM3, testSeaWaterKgM3)
	if err != nil {
		t.Fatal(err)
	}
	t.Run("sediment", func(t *testing.T) {
		hs := append(nodeSweep(40000), float32(math.NaN()), float32(math.Copysign(0, -1)), -3, float32(math.Inf(1)), SedimentNodesMaxM)
		out := make([]float32, len(hs))
		sc.CorrectionsM(hs, out)
		nodes := sc.Nodes()
		for i, h := range hs {
			want := float32(sc.CorrectionM(float64(h)))
			b := math.Float32bits(h)
			if j := uint(b >> Float32NodeShift); j < uint(len(nodes)) {
				want = nodes[j].At(b)
			}
			if !same(float64(out[i]), float64(want)) {
				t.Fatalf("thickness %g m: batch %g, want %g", h, out[i], want)
			}
		}
	})
}

// Tables built on first use are built once under concurrent first calls.
func TestLazyNodesConcurrent(t *testing.T) {
	p := mustBuiltin(t, IDPSM).Params()
	p.ID, p.PlateThicknessKm = "lazy-test", 109
	m, err := NewModel(p)
	if err != nil {
		t.Fatal(err)
	}
	tb := newTable(m)
	var wg sync.WaitGroup
	got := make([]Float32Nodes, 8)
	for i := range got {
		wg.Add(1)
		go func() {
			defer wg.Done()
			got[i] = tb.HeatFlowNodes()
		}()
	}
	wg.Wait()
	for i := range got {
		if &got[i][0] != &got[0][0] {
			t.Fatal("heat-flow nodes built more than once")
		}
	}
}

// The exported node counts match the tables' lengths.
func TestNodeCounts(t *testing.T) {
	tb := TableFor(mustBuiltin(t, IDHalfSpace))
	c, _ := CompactionByName("shale")
	sc, err := NewSedimentCorrector(c, testMantleKgM3, testSeaWaterKgM3)
	if err != nil {
		t.Fatal(err)
	}
	if got := tb.DepthNodes().Len(); got != AgeNodeCount || AgeNodeCount != int(math.Float32bits(TableMaxAgeMa)>>Float32NodeShift) {
		t.Errorf("age tables hold %d nodes, AgeNodeCount %d", got, AgeNodeCount)
	}
	if got := sc.Nodes().Len(); got != SedimentNodeCount || SedimentNodeCount != int(math.Float32bits(SedimentNodesMaxM)>>Float32NodeShift) {
		t.Errorf("sediment table holds %d nodes, SedimentNodeCount %d", got, SedimentNodeCount)
	}
}

// The subsidence-rate nodes resample SubsidenceRateMPerMyr within 1e-5 of its value over the
// table (the float32 node layer's stated accuracy for the 1/√age quantities, 1.4e-6 for heat
// flow, plus float32 rounding), and against the half-space's analytic rate ½·C/√t (Turcotte &
// Schubert, Geodynamics, 2nd ed. 2002, eq. 4-209 differentiated, C = 354.7 m/Myr^½ with the
// built-in half-space parameters, worked by hand) within the table's 0.1 %.
func TestSubsidenceRateNodes(t *testing.T) {
	tb := TableFor(mustBuiltin(t, IDHalfSpace))
	n := tb.SubsidenceRateNodes()
	if got, want := n.EndBits(), math.Float32bits(TableMaxAgeMa); got != want {
		t.Errorf("table ends at %g", math.Float32frombits(got))
	}
	c := 2 * 3300 * 3e-5 * 1300 / (3300 - 1000) * math.Sqrt(1e-6*SecondsPerMyr/math.Pi)
	for _, a := range []float32{0.01, 0.5, 3, 17.3, 64, 150, 399} {
		b := math.Float32bits(a)
		got := float64(n[b>>Float32NodeShift].At(b))
		if want := tb.SubsidenceRateMPerMyr(float64(a)); math.Abs(got-want) > 1e-5*want {
			t.Errorf("%g Ma: nodes %v, table %v", a, got, want)
		}
		if want := 0.5 * c / math.Sqrt(float64(a)); math.Abs(got-want) > 1e-3*want {
			t.Errorf("%g Ma: nodes %v, analytic %v", a, got, want)
		}
	}
}
