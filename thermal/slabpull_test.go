package thermal

import (
	"fmt"
	"math"
	"testing"
)

// Half-space: ∫₀^∞ (Tm − T) dz = (Tm − Ts) ∫₀^∞ erfc(z/2√(κt)) dz = (Tm − Ts) 2√(κt/π)
// (∫₀^∞ erfc x dx = 1/√π, Abramowitz & Stegun 7.1, worked here), so
// F = 2 g sin(dip) L ρm α (Tm − Ts) √(κt/π) exactly; tolerance 1e-6 relative.
func TestSlabPullHalfSpaceClosedForm(t *testing.T) {
	m := mustBuiltin(t, IDHalfSpace)
	p := m.Params()
	cases := []struct{ age, lengthKm, dip float64 }{
		{1, 600, 45}, {80, 600, 45}, {100, 600, 45}, {100, 300, 30}, {180, 1000, 90},
	}
	for _, c := range cases {
		t.Run(fmt.Sprintf("%gMa_%gkm_%gdeg", c.age, c.lengthKm, c.dip), func(t *testing.T) {
			dT := p.MantleTemperatureC - p.SurfaceTemperatureC
			kt := p.DiffusivityM2s * c.age * SecondsPerMyr
			want := 2 * 9.81 * math.Sin(c.dip*math.Pi/180) * c.lengthKm * 1000 * p.MantleDensityKgM3 * p.ExpansivityPerK * dT * math.Sqrt(kt/math.Pi)
			near(t, "slab pull N/m", SlabPullNPerM(m, c.age, c.lengthKm, c.dip), want, 1e-6*want)
		})
	}
}

// Turcotte & Schubert (Geodynamics, 2nd ed. 2002, chapter 6, from memory) give slab pull of
// order 10¹³ N/m (≈ 3×10¹³ N/m) for old oceanic lithosphere; every model at 80–100 Ma with a
// 600 km slab dipping 45° must fall within the order-of-magnitude band 10¹³–10¹⁴ N/m, and the
// force is 0 at age 0, grows with age and is NaN on bad input.
func TestSlabPullTextbookMagnitude(t *testing.T) {
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		for _, age := range []float64{80, 100} {
			t.Run(fmt.Sprintf("%s/%gMa", id, age), func(t *testing.T) {
				if f := SlabPullNPerM(m, age, 600, 45); f < 1e13 || f > 1e14 {
					t.Errorf("slab pull = %.3g N/m, want 1e13–1e14", f)
				}
			})
		}
		t.Run(id+"/shape", func(t *testing.T) {
			if f := SlabPullNPerM(m, 0, 600, 45); f != 0 {
				t.Errorf("age 0 gave %g", f)
			}
			if !(SlabPullNPerM(m, 100, 600, 45) > SlabPullNPerM(m, 50, 600, 45)) {
				t.Error("slab pull does not grow with age")
			}
			for _, bad := range [][3]float64{{-1, 600, 45}, {math.NaN(), 600, 45}, {100, -1, 45}, {100, 600, 0}, {100, 600, 91}, {math.Inf(1), 600, 45}} {
				if f := SlabPullNPerM(m, bad[0], bad[1], bad[2]); !math.IsNaN(f) {
					t.Errorf("SlabPullNPerM(%v) = %g, want NaN", bad, f)
				}
			}
		})
	}
}

// φ = t · v · sin(dip) (Kirby et al. 1996, from memory), worked by hand: 1 Ma × 1 mm/yr = 1 km.
func TestSlabThermalParameter(t *testing.T) {
	cases := []struct {
		name            string
		age, v, dip     float64
		wantKm, tolerKm float64
	}{
		{"100Ma_50mmyr_45deg", 100, 50, 45, 3535.534, 0.001}, // 5000 × 0.7071068
		{"80Ma_60mmyr_30deg", 80, 60, 30, 2400, 1e-9},
		{"vertical", 140, 90, 90, 12600, 1e-9},
		{"zero rate", 100, 0, 45, 0, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			near(t, "φ km", ThermalParameterKm(c.age, c.v, c.dip), c.wantKm, c.tolerKm)
		})
	}
	for _, bad := range [][3]float64{{-1, 50, 45}, {100, -5, 45}, {100, 50, 0}, {100, math.NaN(), 45}} {
		if v := ThermalParameterKm(bad[0], bad[1], bad[2]); !math.IsNaN(v) {
			t.Errorf("ThermalParameterKm(%v) = %g, want NaN", bad, v)
		}
	}
}

// The sine-series answer is checked against an independent explicit finite-difference solution
// of ∂θ/∂s = κ ∂²θ/∂z² (θ = 0 on both faces, θ(z, 0) the half-space deficit at the arrival
// age), worked here; tolerance 1 % of the depth. The half-space depth is proportional to φ
// (similarity: a ∝ √(κt), so s ∝ t; Molnar, Freedman & Shih 1979, from memory): depth/φ is the
// same at every age to 1e-6.
func TestSlabCoreDepth(t *testing.T) {
	m := mustBuiltin(t, IDHalfSpace)
	p := m.Params()
	cases := []struct{ age, v, dip float64 }{{100, 60, 45}, {30, 80, 60}}
	for _, c := range cases {
		t.Run(fmt.Sprintf("fd/%gMa_%gmmyr_%gdeg", c.age, c.v, c.dip), func(t *testing.T) {
			aKm := 7 * math.Sqrt(p.DiffusivityM2s*c.age*SecondsPerMyr) / 1000
			const n = 400
			dz := aKm * 1000 / n
			dt := 0.25 * dz * dz / p.DiffusivityM2s
			th := make([]float64, n+1)
			for i := 1; i < n; i++ {
				th[i] = p.MantleTemperatureC - m.TemperatureC(aKm*float64(i)/n, c.age)
			}
			target := p.MantleTemperatureC - SlabCoreIsothermC
			s, prevMax, prevS := 0.0, math.Inf(1), 0.0
			next := make([]float64, n+1)
			for {
				mx := 0.0
				for _, v := range th {
					mx = max(mx, v)
				}
				if mx <= target {
					s = prevS + (s-prevS)*(prevMax-target)/(prevMax-mx)
					break
				}
				prevMax, prevS = mx, s
				for i := 1; i < n; i++ {
					next[i] = th[i] + p.DiffusivityM2s*dt/(dz*dz)*(th[i+1]-2*th[i]+th[i-1])
				}
				th, next = next, th
				s += dt
			}
			want := c.v * s / SecondsPerMyr * math.Sin(c.dip*math.Pi/180)
			near(t, "600 °C depth km", SlabCoreDepthKm(m, c.age, c.v, c.dip, SlabCoreIsothermC), want, 0.01*want)
		})
	}
	t.Run("proportional to φ", func(t *testing.T) {
		r0 := SlabCoreDepthKm(m, 100, 50, 45, 600) / ThermalParameterKm(100, 50, 45)
		for _, c := range [][3]float64{{20, 80, 30}, {150, 30, 70}} {
			r := SlabCoreDepthKm(m, c[0], c[1], c[2], 600) / ThermalParameterKm(c[0], c[1], c[2])
			near(t, "depth/φ", r, r0, 1e-6*r0)
		}
	})
	t.Run("bad input", func(t *testing.T) {
		if d := SlabCoreDepthKm(m, 0, 50, 45, 600); d != 0 {
			t.Errorf("age 0 gave %g", d)
		}
		for _, iso := range []float64{p.SurfaceTemperatureC, p.MantleTemperatureC, 2000, math.NaN()} {
			if d := SlabCoreDepthKm(m, 100, 50, 45, iso); !math.IsNaN(d) {
				t.Errorf("isotherm %g gave %g", iso, d)
			}
		}
	})
}

// One slab-core depth under GDH1 (the cost per sample of a slab answer along a trench).
func BenchmarkSlabCoreDepth(b *testing.B) {
	m := mustBuiltin(b, IDGDH1)
	b.ReportAllocs()
	for i := 0; b.Loop(); i++ {
		SlabCoreDepthKm(m, 100+float64(i%50), 60, 45, SlabCoreIsothermC)
	}
}
