package thermal

import (
	"fmt"
	"math"
	"testing"
)

// fdCooling solves the 1-D heat equation ∂T/∂t = κ ∂²T/∂z² on [0, depthM]
// with T(0) = ts, T(depthM) = tm and T = tm at t = 0, by the fully implicit
// (backward Euler) finite-difference scheme, independently of the series.
// Time steps grow geometrically (dt = eps·t) so the relative time error stays
// about eps/2 from the first step on; each output age is hit exactly.
// It returns the temperature profiles (nodes every depthM/nz) at the ages.
func fdCooling(kappaMyr, depthM, ts, tm float64, nz int, ages []float64, eps float64) [][]float64 {
	dz := depthM / float64(nz)
	T := make([]float64, nz+1)
	for i := range T {
		T[i] = tm
	}
	T[0] = ts
	// Thomas algorithm work arrays.
	cp := make([]float64, nz+1)
	dp := make([]float64, nz+1)
	step := func(dt float64) {
		r := kappaMyr * dt / (dz * dz)
		// Interior unknowns 1..nz-1: −r T[i−1] + (1+2r) T[i] − r T[i+1] = T_old[i].
		b := 1 + 2*r
		cp[1] = -r / b
		dp[1] = (T[1] + r*T[0]) / b
		for i := 2; i < nz; i++ {
			rhs := T[i]
			if i == nz-1 {
				rhs += r * T[nz]
			}
			den := b + r*cp[i-1]
			cp[i] = -r / den
			dp[i] = (rhs + r*dp[i-1]) / den
		}
		T[nz-1] = dp[nz-1]
		for i := nz - 2; i >= 1; i-- {
			T[i] = dp[i] - cp[i]*T[i+1]
		}
	}
	var out [][]float64
	t := 0.0
	for _, target := range ages {
		for t < target {
			dt := math.Max(eps*t, 1e-6)
			if t+dt > target {
				dt = target - t
			}
			step(dt)
			t += dt
		}
		out = append(out, append([]float64(nil), T...))
	}
	return out
}

// An implicit finite-difference solution of the plate problem (base held at
// Tm, McKenzie 1967) agrees with the series temperatures, heat flow and
// isostatic depth. Discretisation: 400 intervals in depth, dt = 1e-3·t
// (time error ~5e-4 relative, space error ~(dz/√(κt))²/12 ≤ 2e-4 at 1 Ma).
// Tolerances: temperature 0.5 °C (0.04 % of ΔT), heat flow 0.5 % (one-sided
// second-order gradient at the surface), depth 1 m.
func TestPlateAgainstFiniteDifference(t *testing.T) {
	ages := []float64{1, 5, 20, 60, 150, 250}
	for _, id := range []string{IDPSM, IDGDH1} {
		m := mustBuiltin(t, id)
		p := m.Params()
		a := p.PlateThicknessKm * 1000
		kMyr := p.EffectiveDiffusivityM2s() * SecondsPerMyr
		const nz = 400
		dz := a / nz
		prof := fdCooling(kMyr, a, p.SurfaceTemperatureC, p.MantleTemperatureC, nz, ages, 1e-3)
		for k, age := range ages {
			T := prof[k]
			t.Run(fmt.Sprintf("%s/%gMa", id, age), func(t *testing.T) {
				for _, i := range []int{4, 20, 60, 120, 200, 300, 380} {
					z := float64(i) * dz / 1000
					near(t, fmt.Sprintf("temperature_c at %.1f km", z), m.TemperatureC(z, age), T[i], 0.5)
				}
				grad := (-3*T[0] + 4*T[1] - T[2]) / (2 * dz)
				qFD := 1000 * p.ConductivityWmK * grad
				near(t, "heat_flow_mw_m2", m.HeatFlowMWm2(age), qFD, 0.005*qFD)
				// Isostasy: w = ρm α ∫ (Tm − T) dz / (ρm − ρw), trapezoid rule.
				integral := 0.0
				for i := 0; i < nz; i++ {
					integral += (2*p.MantleTemperatureC - T[i] - T[i+1]) / 2 * dz
				}
				w := p.MantleDensityKgM3 * p.ExpansivityPerK * integral / (p.MantleDensityKgM3 - p.WaterDensityKgM3)
				near(t, "depth_m", m.DepthM(age), p.RidgeDepthM+w, 1)
			})
		}
	}
}

// The same scheme on a deep box (600 km, so the base never feels the
// cooling before 60 Ma) reproduces the half-space erf solution.
func TestHalfSpaceAgainstFiniteDifference(t *testing.T) {
	m := mustBuiltin(t, IDHalfSpace)
	p := m.Params()
	const depth, nz = 600e3, 2400
	ages := []float64{1, 10, 60}
	prof := fdCooling(p.DiffusivityM2s*SecondsPerMyr, depth, p.SurfaceTemperatureC, p.MantleTemperatureC, nz, ages, 1e-3)
	for k, age := range ages {
		t.Run(fmt.Sprintf("%gMa", age), func(t *testing.T) {
			for _, i := range []int{4, 20, 60, 200, 400} {
				z := float64(i) * depth / nz / 1000
				near(t, fmt.Sprintf("temperature_c at %.1f km", z), m.TemperatureC(z, age), prof[k][i], 0.5)
			}
		})
	}
}
