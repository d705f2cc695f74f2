package thermal

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"
	"testing"
)

// tableTestAges covers 0–300 Ma densely: a uniform sweep, the region near
// the half-space switch, tiny ages and random ages (fixed seed).
func tableTestAges() []float64 {
	var ages []float64
	for i := 0; i <= 30000; i++ {
		ages = append(ages, float64(i)*0.01)
	}
	for i := 1; i <= 200; i++ {
		ages = append(ages, math.Pow(10, -6+float64(i)*0.03)) // 1e-6 .. 1 Ma
	}
	r := rand.New(rand.NewPCG(1, 2))
	for i := 0; i < 5000; i++ {
		ages = append(ages, 300*r.Float64())
	}
	return ages
}

// The project's accuracy bound for the lookup table (our own requirement:
// depth within 0.5 m, heat flow within 0.1 mW/m² or 0.1 %) holds against the
// series over 0–300 Ma, for every built-in model. The derived columns are held
// to bounds of our own: thickness and 600 °C depth 0.01 km, subsidence rate
// 0.1 %.
func TestTableAgainstSeries(t *testing.T) {
	ages := tableTestAges()
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		tb := TableFor(m)
		t.Run(id, func(t *testing.T) {
			var worstD, worstQ float64
			for _, age := range ages {
				dd := math.Abs(tb.DepthM(age) - m.DepthM(age))
				worstD = math.Max(worstD, dd)
				if dd > 0.5 {
					t.Fatalf("depth at %g Ma off by %g m", age, dd)
				}
				q, qt := m.HeatFlowMWm2(age), tb.HeatFlowMWm2(age)
				if math.IsInf(q, 1) {
					if !math.IsInf(qt, 1) {
						t.Fatalf("heat flow at %g Ma = %g, want +Inf", age, qt)
					}
					continue
				}
				dq := math.Abs(qt - q)
				worstQ = math.Max(worstQ, dq/math.Max(1, 0.01*q))
				if dq > 0.1 && dq > 0.001*q {
					t.Fatalf("heat flow at %g Ma off by %g mW/m² (%.3g %%)", age, dq, 100*dq/q)
				}
				if d := math.Abs(tb.ThermalThicknessKm(age) - m.ThermalThicknessKm(age)); d > 0.01 {
					t.Fatalf("thickness at %g Ma off by %g km", age, d)
				}
				if d := math.Abs(tb.Depth600CKm(age) - m.IsothermDepthKm(600, age)); d > 0.01 {
					t.Fatalf("600 °C depth at %g Ma off by %g km", age, d)
				}
				r := m.SubsidenceRateMPerMyr(age)
				if d := math.Abs(tb.SubsidenceRateMPerMyr(age) - r); d > 0.001*r {
					t.Fatalf("subsidence rate at %g Ma off by %g m/Myr", age, d)
				}
			}
			t.Logf("worst depth error %.2g m; worst heat-flow error %.2g (mW/m² or %%)", worstD, worstQ)
		})
	}
}

// The float32 hot path agrees with the float64 table (float32 rounding of
// a depth near 6000 m is 0.0005 m; tolerance 0.01 m) and handles NaN,
// negative ages, the top of the table and ages beyond it.
func TestDepthsM(t *testing.T) {
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		tb := TableFor(m)
		t.Run(id, func(t *testing.T) {
			ages := []float32{0, 1e-6, 0.5, 3.3, 10, 55.5, 100, 180, 299.99,
				float32(TableMaxAgeMa), math.Nextafter32(float32(TableMaxAgeMa), 0), 450, 1e4}
			out := make([]float32, len(ages))
			tb.DepthsM(ages, out)
			for i, a := range ages {
				near(t, fmt.Sprintf("depth at %g Ma", a), float64(out[i]), m.DepthM(float64(a)), 0.01)
			}
			bad := []float32{float32(math.NaN()), -1, float32(math.Inf(-1))}
			tb.DepthsM(bad, out)
			for i, a := range bad {
				if !math.IsNaN(float64(out[i])) {
					t.Errorf("depth at %g = %g, want NaN", a, out[i])
				}
			}
		})
	}
}

// DepthsM must not allocate (it runs over grids of tens of millions of cells).
func TestDepthsMDoesNotAllocate(t *testing.T) {
	tb := TableFor(mustBuiltin(t, IDGDH1))
	ages := make([]float32, 4096)
	for i := range ages {
		ages[i] = float32(i) * 0.05
	}
	out := make([]float32, len(ages))
	if n := testing.AllocsPerRun(20, func() { tb.DepthsM(ages, out) }); n != 0 {
		t.Errorf("DepthsM allocates %g times per call", n)
	}
}

// TableFor caches per parameter set and builds once under concurrent use.
func TestTableForCachesConcurrently(t *testing.T) {
	p := mustBuiltin(t, IDPSM).Params()
	p.ID, p.PlateThicknessKm = "cache-test", 111
	var wg sync.WaitGroup
	got := make([]*Table, 8)
	for i := range got {
		wg.Add(1)
		go func() {
			defer wg.Done()
			m, err := NewModel(p)
			if err != nil {
				t.Error(err)
				return
			}
			got[i] = TableFor(m)
		}()
	}
	wg.Wait()
	for i := range got {
		if got[i] != got[0] {
			t.Fatalf("TableFor built %d different tables for one parameter set", len(got))
		}
	}
	if TableFor(mustBuiltin(t, IDGDH1)) == got[0] {
		t.Error("different parameter sets share a table")
	}
}

// The batch heat-flow and thickness forms equal the scalar table methods.
func TestBatchForms(t *testing.T) {
	tb := TableFor(mustBuiltin(t, IDGDH1))
	ages := []float32{0.5, 20, 90, float32(math.NaN())}
	q := make([]float32, len(ages))
	th := make([]float32, len(ages))
	tb.HeatFlowsMWm2(ages, q)
	tb.ThermalThicknessesKm(ages, th)
	for i, a := range ages[:3] {
		near(t, "heat flow", float64(q[i]), tb.HeatFlowMWm2(float64(a)), 1e-4*float64(q[i]))
		near(t, "thickness", float64(th[i]), tb.ThermalThicknessKm(float64(a)), 1e-4)
	}
	if !math.IsNaN(float64(q[3])) || !math.IsNaN(float64(th[3])) {
		t.Error("NaN age did not give NaN")
	}
}
