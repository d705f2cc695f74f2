package thermal

import (
	"fmt"
	"math"
	"testing"
)

// Half-space: the quadrature reproduces the closed form of Turcotte &
// Schubert (Geodynamics, chapter 6, from memory)
// F = g ρm α ΔT κ t [1 + 2 ρm α ΔT / (π (ρm − ρw))]; tolerance 1e-6 relative.
func TestRidgePushHalfSpaceClosedForm(t *testing.T) {
	m := mustBuiltin(t, IDHalfSpace)
	p := m.Params()
	for _, age := range []float64{0.1, 1, 10, 50, 100, 200} {
		t.Run(fmt.Sprintf("%gMa", age), func(t *testing.T) {
			dT := p.MantleTemperatureC - p.SurfaceTemperatureC
			rm, rw, a := p.MantleDensityKgM3, p.WaterDensityKgM3, p.ExpansivityPerK
			want := 9.81 * rm * a * dT * p.DiffusivityM2s * age * SecondsPerMyr * (1 + 2*rm*a*dT/(math.Pi*(rm-rw)))
			near(t, "ridge push N/m", RidgePushNPerM(m, age), want, 1e-6*want)
		})
	}
}

// Plate: the first moment of the temperature deficit has the closed series
// ∫₀ᵃ z (Tm − T) dz = ΔT a² [1/6 − (2/π²) Σ (−1)^{n+1} e^{−n²y}/n²]
// (integrating the Parsons & Sclater 1977 series term by term); with the
// subsidence term of Parsons & Richter (1980) the quadrature must agree to
// 1e-6 relative.
func TestRidgePushPlateSeries(t *testing.T) {
	for _, id := range []string{IDPSM, IDGDH1} {
		m := mustBuiltin(t, id)
		p := m.Params()
		for _, age := range []float64{0.5, 5, 30, 100, 300} {
			t.Run(fmt.Sprintf("%s/%gMa", id, age), func(t *testing.T) {
				a := p.PlateThicknessKm * 1000
				kMyr := p.EffectiveDiffusivityM2s() * SecondsPerMyr
				y := math.Pi * math.Pi * kMyr * age / (a * a)
				s := 0.0
				for n := 100000; n >= 1; n-- {
					fn := float64(n)
					s += math.Pow(-1, fn+1) * math.Exp(-fn*fn*y) / (fn * fn)
				}
				dT := p.MantleTemperatureC - p.SurfaceTemperatureC
				moment := dT * a * a * (1.0/6 - 2/(math.Pi*math.Pi)*s)
				rm, rw := p.MantleDensityKgM3, p.WaterDensityKgM3
				w := m.DepthM(age) - p.RidgeDepthM
				want := 9.81*(rm-rw)*w*w/2 + 9.81*rm*p.ExpansivityPerK*moment
				near(t, "ridge push N/m", RidgePushNPerM(m, age), want, 1e-6*want)
			})
		}
	}
}

// Common practice, no source: ridge push on old lithosphere is of order
// 10¹² N/m (a few times 10¹² N/m); it grows with age and is 0 at the ridge.
func TestRidgePushMagnitude(t *testing.T) {
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		t.Run(id, func(t *testing.T) {
			if f := RidgePushNPerM(m, 100); f < 1e12 || f > 5e12 {
				t.Errorf("ridge push at 100 Ma = %.3g N/m, want 1e12–5e12", f)
			}
			if f := RidgePushNPerM(m, 0); f != 0 {
				t.Errorf("ridge push at 0 = %g", f)
			}
			prev := 0.0
			for _, age := range []float64{1, 10, 50, 100, 150} {
				f := RidgePushNPerM(m, age)
				if !(f > prev) {
					t.Errorf("ridge push does not grow with age at %g Ma: %g ≤ %g", age, f, prev)
				}
				prev = f
			}
			if f := RidgePushNPerM(m, -1); !math.IsNaN(f) {
				t.Errorf("negative age gave %g", f)
			}
		})
	}
}
