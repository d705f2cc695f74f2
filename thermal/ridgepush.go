package thermal

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// RidgePushNPerM is the ridge-push force per unit length of ridge (N/m)
// acting on lithosphere of the given age, from the isostatic integral of the
// pressure difference between the ridge column and the old column down to
// the compensation depth (Parsons & Richter 1980, J. Geophys. Res. 85,
// 5957–5963; Turcotte & Schubert, Geodynamics, 2nd ed. 2002, chapter 6, in
// the half-space case, from memory):
//
//	F = g (ρm − ρw) w²/2 + g ρm α ∫₀^∞ z (Tm − T(z, t)) dz
//
// where w = DepthM(t) − RidgeDepthM is the water-loaded subsidence and z is
// depth below the seafloor. For half-space cooling the integral is
// (Tm − Ts) κ t, which gives the closed form
// F = g ρm α (Tm − Ts) κ t [1 + 2 ρm α (Tm − Ts)/(π (ρm − ρw))].
// The integral is evaluated numerically (gonum Gauss–Legendre) from the
// model's own TemperatureC, so any Model works. 0 at age 0, NaN for negative
// or NaN ages, +Inf at infinite age for the half-space.
func RidgePushNPerM(m Model, ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	if ageMa == 0 {
		return 0
	}
	p := m.Params()
	kappaMyr := p.EffectiveDiffusivityM2s() * SecondsPerMyr
	if math.IsInf(ageMa, 1) && p.Kind != KindPlate {
		return math.Inf(1)
	}
	// Below zMax = 12·(2√(κt)) the half-space temperature deficit is
	// erfc(12) ≈ 1e-64 of its surface value; the plate ends at its base.
	zMaxKm := 24 * math.Sqrt(kappaMyr*ageMa) / 1000
	if p.Kind == KindPlate && (zMaxKm > p.PlateThicknessKm || math.IsInf(ageMa, 1)) {
		zMaxKm = p.PlateThicknessKm
	}
	tm := p.MantleTemperatureC
	f := func(zKm float64) float64 { return zKm * 1000 * (tm - m.TemperatureC(zKm, ageMa)) }
	// Composite rule: 16 panels of 16 Legendre points each.
	const panels = 16
	integral := 0.0 // K·m·km
	for i := 0; i < panels; i++ {
		a := zMaxKm * float64(i) / panels
		b := zMaxKm * float64(i+1) / panels
		integral += quad.Fixed(f, a, b, 16, quad.Legendre{}, 0)
	}
	integral *= 1000 // K·m²
	w := m.DepthM(ageMa) - p.RidgeDepthM
	rm, rw := p.MantleDensityKgM3, p.WaterDensityKgM3
	return GravityMs2*(rm-rw)*w*w/2 + GravityMs2*rm*p.ExpansivityPerK*integral
}
