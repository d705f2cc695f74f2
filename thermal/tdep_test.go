package thermal

import (
	"fmt"
	"math"
	"slices"
	"testing"
)

// constTDep is the temperature-dependent solver given the constant
// properties of a series plate model: the same k, the cp that gives the
// model's diffusivity, constant α and density ρm.
func constTDep(p Params, nz int, eps float64) *tdepModel {
	k := p.ConductivityWmK
	cp := k / (p.MantleDensityKgM3 * p.EffectiveDiffusivityM2s())
	pr := &tdepProps{
		k:  func(float64) float64 { return k },
		cp: func(float64) float64 { return cp },
		a0: p.ExpansivityPerK, rho0: p.MantleDensityKgM3, constRho: true,
	}
	return newTDep(p, pr, nz, eps)
}

// With constant properties the numerical plate reproduces the series plate
// model (McKenzie 1967, J. Geophys. Res. 72, 6261–6273; Parsons & Sclater
// 1977, J. Geophys. Res. 82, 803–827) for the PSM and GDH1 parameter sets.
// Tolerances: depth 1 m, heat flow 0.5 %, temperature 1 °C (from 0.5 Ma),
// thermal thickness 50 m, over 0–200 Ma.
func TestTDepConstantLimit(t *testing.T) {
	for _, id := range []string{IDPSM, IDGDH1} {
		series := mustBuiltin(t, id)
		num := constTDep(series.Params(), tdepIntervals, tdepStepFactor)
		for _, age := range []float64{0, 0.05, 0.5, 1, 5, 20, 60, 100, 150, 200} {
			t.Run(fmt.Sprintf("%s/%gMa", id, age), func(t *testing.T) {
				near(t, "depth_m", num.DepthM(age), series.DepthM(age), 1)
				if age == 0 {
					if !math.IsInf(num.HeatFlowMWm2(0), 1) {
						t.Errorf("heat_flow_mw_m2 at 0 Ma = %g, want +Inf", num.HeatFlowMWm2(0))
					}
					return
				}
				q := series.HeatFlowMWm2(age)
				near(t, "heat_flow_mw_m2", num.HeatFlowMWm2(age), q, 0.005*q)
				for _, z := range []float64{2, 10, 30, 60, 90} {
					if age < 0.5 {
						break // linear interpolation in √age between profiles is too coarse this young
					}
					near(t, fmt.Sprintf("temperature_c at %g km", z), num.TemperatureC(z, age), series.TemperatureC(z, age), 1)
				}
				near(t, "thermal_thickness_km", num.ThermalThicknessKm(age), series.ThermalThicknessKm(age), 0.05)
			})
		}
	}
}

// The convergence check of the model: halving the depth spacing and the
// time-step factor together changes depth by less than TDepDepthTolM and
// heat flow by less than TDepHeatFlowTolFrac at every age from 0.5 to 200 Ma.
// A coarse grid (a quarter of the intervals, four times the step) must fail
// it, so the check can tell an unconverged solution.
//
// The order of convergence: the scheme is second order in space (centred
// differences on a smoothly stretched grid) and in time (BDF2), so each
// halving of both should cut the depth error fourfold. The observed order
// log2(|d(h) − d(h/2)| / |d(h/2) − d(h/4)|) from the half, default and fine
// grids must lie within 2 ± 0.3 at 5–200 Ma (the tolerance allows for the
// Picard tolerance and the first backward-Euler step; heat flow, a
// one-sided difference interpolated in √age, is too noisy at these error
// levels for an order check and keeps the tolerance check above).
func TestTDepConvergence(t *testing.T) {
	p := mjp05Params()
	ref := newTDep(p, mjp05Props(), tdepIntervals, tdepStepFactor)
	fine := newTDep(p, mjp05Props(), 2*tdepIntervals, tdepStepFactor/2)
	coarse := newTDep(p, mjp05Props(), tdepIntervals/4, 4*tdepStepFactor)
	half := newTDep(p, mjp05Props(), tdepIntervals/2, 2*tdepStepFactor)
	t.Run("order", func(t *testing.T) {
		for _, age := range []float64{5, 20, 60, 100, 200} {
			e1, e2 := math.Abs(half.DepthM(age)-ref.DepthM(age)), math.Abs(ref.DepthM(age)-fine.DepthM(age))
			order := math.Log2(e1 / e2)
			t.Logf("%g Ma: depth changes %.4f m, %.4f m: order %.2f", age, e1, e2, order)
			near(t, fmt.Sprintf("observed order of depth at %g Ma", age), order, 2, 0.3)
		}
	})
	worst := func(m *tdepModel) (dd, dq float64) {
		for _, age := range []float64{0.5, 1, 2, 5, 10, 20, 40, 60, 80, 100, 150, 200} {
			dd = math.Max(dd, math.Abs(m.DepthM(age)-fine.DepthM(age)))
			dq = math.Max(dq, math.Abs(m.HeatFlowMWm2(age)/fine.HeatFlowMWm2(age)-1))
		}
		return dd, dq
	}
	for _, tc := range []struct {
		name     string
		m        *tdepModel
		converge bool
	}{
		{"default grid", ref, true},
		{"coarse grid", coarse, false},
	} {
		t.Run(tc.name, func(t *testing.T) {
			dd, dq := worst(tc.m)
			t.Logf("largest change: depth %.3f m, heat flow %.4f %%", dd, 100*dq)
			if ok := dd < TDepDepthTolM && dq < TDepHeatFlowTolFrac; ok != tc.converge {
				t.Errorf("converged = %v, want %v (depth %.3f m, heat flow %.4f %%)", ok, tc.converge, dd, 100*dq)
			}
		})
	}
}

// Energy balance (conservation of heat, the first law): over an age interval
// the heat lost through the surface minus the heat gained through the base
// equals the loss of heat content of the column, ∫ ∫_{T2}^{T1} ρ(T)cp(T) dT dz.
// Fluxes come from the surface and base gradients (trapezoid rule in time
// every 0.1 Ma), content from the profiles (trapezoid in depth, Simpson in
// temperature). Tolerance 0.5 % of the surface loss: common practice, no
// source (the time quadrature alone is good to about 0.1 %).
func TestTDepEnergyBalance(t *testing.T) {
	p := mjp05Params()
	pr := mjp05Props()
	var ages []float64
	for a := 1.0; a <= 300+1e-9; a += 0.1 {
		ages = append(ages, math.Round(a*10)/10)
	}
	sol, err := solveTDep(p, pr, tdepIntervals, tdepStepFactor, ages)
	if err != nil {
		t.Fatal(err)
	}
	idx := func(age float64) int {
		return slices.IndexFunc(ages, func(a float64) bool { return math.Abs(a-age) < 1e-9 })
	}
	content := func(T1, T2 []float64) float64 { // J/m², heat gained from T1 to T2
		sum := 0.0
		for i := range sol.z {
			w := 0.0
			if i > 0 {
				w += (sol.z[i] - sol.z[i-1]) / 2
			}
			if i < len(sol.z)-1 {
				w += (sol.z[i+1] - sol.z[i]) / 2
			}
			const n = 16
			h := (T2[i] - T1[i]) / n
			s := pr.vc(T1[i]) + pr.vc(T2[i])
			for k := 1; k < n; k++ {
				s += float64(2+2*(k%2)) * pr.vc(T1[i]+float64(k)*h)
			}
			sum += w * s * h / 3
		}
		return sum
	}
	for _, iv := range []struct{ from, to float64 }{{1, 20}, {20, 100}, {100, 300}} {
		t.Run(fmt.Sprintf("%g-%gMa", iv.from, iv.to), func(t *testing.T) {
			i0, i1 := idx(iv.from), idx(iv.to)
			var lost, gained float64 // J/m²
			for i := i0; i < i1; i++ {
				dt := (ages[i+1] - ages[i]) * SecondsPerMyr
				q0, q1 := sol.heatS[i]/math.Sqrt(ages[i])/1000, sol.heatS[i+1]/math.Sqrt(ages[i+1])/1000
				lost += dt * (q0 + q1) / 2
				gained += dt * (sol.baseQ[i] + sol.baseQ[i+1]) / 2000
			}
			dH := content(sol.temps[i0], sol.temps[i1])
			t.Logf("surface loss %.4g J/m², base gain %.4g J/m², content change %.4g J/m², imbalance %.3f %% of the loss", lost, gained, dH, 100*(dH+lost-gained)/lost)
			near(t, "content change + surface loss − base gain (J/m²)", dH+lost-gained, 0, 0.005*lost)
		})
	}
}

// The MJP05 plate against outside values. Steady state: with k(T) the
// steady geotherm satisfies ∫_{Ts}^{T(z)} k dT = (z/a) ∫_{Ts}^{Tm} k dT and
// the heat flow is (1/a) ∫_{Ts}^{Tm} k dT (Kirchhoff transformation; Carslaw
// & Jaeger, Conduction of Heat in Solids, 2nd ed. 1959, §1.7, section from
// memory). At 400 Ma the plate is within about 1 % of it (the slowest mode
// decays as e^{−π²κt/a²}): tolerance 2 % for heat flow, 10 °C for the
// mid-plate temperature. Plate thickness 106 km and mantle temperature
// 1315 °C are MJP05's (from memory).
func TestTDepMJP05Published(t *testing.T) {
	m := mustBuiltin(t, IDPlateTDepMJP05)
	p := m.Params()
	pr := mjp05Props()
	near(t, "plate_thickness_km (MJP05, from memory)", p.PlateThicknessKm, 106, 0)
	near(t, "mantle_temperature_c (MJP05, from memory)", p.MantleTemperatureC, 1315, 0)
	kint := func(t1, t2 float64) float64 { // ∫ k dT, Simpson
		const n = 200
		h := (t2 - t1) / n
		s := pr.k(t1) + pr.k(t2)
		for i := 1; i < n; i++ {
			s += float64(2+2*(i%2)) * pr.k(t1+float64(i)*h)
		}
		return s * h / 3
	}
	a := p.PlateThicknessKm * 1000
	total := kint(p.SurfaceTemperatureC, p.MantleTemperatureC)
	qSteady := 1000 * total / a
	near(t, "heat_flow_mw_m2 at 400 Ma vs steady state", m.HeatFlowMWm2(400), qSteady, 0.02*qSteady)
	zMid := a / 2
	// Steady temperature at mid-plate: solve ∫_{Ts}^{T} k dT = total/2 by bisection.
	lo, hi := p.SurfaceTemperatureC, p.MantleTemperatureC
	for range 60 {
		mid := (lo + hi) / 2
		if kint(p.SurfaceTemperatureC, mid) < total*zMid/a {
			lo = mid
		} else {
			hi = mid
		}
	}
	near(t, "temperature_c at 53 km, 400 Ma vs steady state", m.TemperatureC(zMid/1000, 400), lo, 10)

	// Steady-state isostatic depth from the same Kirchhoff geotherm, by an
	// independent quadrature: each layer dz of the ridge column keeps its
	// mass, so it shrinks by 1 − ρ(Tm)/ρ(T) = 1 − exp(−f(z) ∫_T^{Tm} α dT), and
	// the water-loaded subsidence is ρm/(ρm − ρw) times the column's
	// shortening (Turcotte & Schubert §4.23 with the exact density ratio).
	// Tolerance 3 m: the model deepens by about 47 m from 200 to 300 Ma and
	// 5 m from 300 to 400 Ma (its slowest mode decays about ninefold per
	// 100 Myr), so at 400 Ma it lies under 1 m from the steady state; the
	// rest allows for the two quadratures.
	steadyT := func(z float64) float64 {
		lo, hi := p.SurfaceTemperatureC, p.MantleTemperatureC
		for range 60 {
			mid := (lo + hi) / 2
			if kint(p.SurfaceTemperatureC, mid) < total*z/a {
				lo = mid
			} else {
				hi = mid
			}
		}
		return (lo + hi) / 2
	}
	shorten := 0.0
	const nz = 400
	for i := 0; i <= nz; i++ {
		z := a * float64(i) / nz
		tc := steadyT(z)
		k1, k2 := tc+273.15, p.MantleTemperatureC+273.15
		ia := pr.a0*(k2-k1) + pr.a1/2*(k2*k2-k1*k1) // ∫ (a0 + a1 T_K) dT
		w := 2.0
		if i == 0 || i == nz {
			w = 1
		}
		shorten += w * -math.Expm1(-alphaPressureFactor(z)*ia) * a / nz / 2
	}
	rm := p.MantleDensityKgM3
	near(t, "depth_m at 400 Ma vs steady isostasy", m.DepthM(400), p.RidgeDepthM+rm/(rm-p.WaterDensityKgM3)*shorten, 3)

	// Property spot values. Forsterite cp at 298.15 K is 118.6 J/mol/K
	// (Robie & Hemingway 1995, USGS Bull. 2131, from memory; tolerance 2 %);
	// olivine lattice conductivity near room temperature is about 5 W/m/K
	// (Hofmeister 1999, Science 283, 1699–1706, from memory; tolerance
	// 0.6 W/m/K); forsterite α near 1000 K is about 3.6e-5 /K (Bouhifd et
	// al. 1996, from memory; tolerance 10 %).
	tk := 298.15
	cpFo := 233.18 - 1801.6/math.Sqrt(tk) - 2.6794e8/(tk*tk*tk)
	near(t, "forsterite cp at 25 °C (J/mol/K)", cpFo, 118.6, 0.02*118.6)
	near(t, "conductivity_w_m_k at 25 °C", pr.k(25), 5, 0.6)
	near(t, "expansivity_per_k at 1000 K", pr.a0+pr.a1*1000, 3.6e-5, 0.36e-5)
}

// The built-in is registered, listed, evaluates every method, gives NaN for
// bad ages, and its lookup table agrees with it; rates agree with centred
// differences of the model over ±1 % of the age (tolerance 1 %).
func TestTDepBuiltin(t *testing.T) {
	if !slices.Contains(BuiltinIDs(), IDPlateTDepMJP05) {
		t.Fatalf("BuiltinIDs %v lacks %s", BuiltinIDs(), IDPlateTDepMJP05)
	}
	m := mustBuiltin(t, " Plate-TDep-MJP05 ")
	if m2 := mustBuiltin(t, IDPlateTDepMJP05); m2 != m {
		t.Error("Builtin returns a new model each call; its solution would be rebuilt")
	}
	tb := TableFor(m)
	for _, age := range []float64{1, 10, 50, 100, 180} {
		t.Run(fmt.Sprintf("%gMa", age), func(t *testing.T) {
			near(t, "table depth_m", tb.DepthM(age), m.DepthM(age), 0.5)
			q := m.HeatFlowMWm2(age)
			near(t, "table heat_flow_mw_m2", tb.HeatFlowMWm2(age), q, 0.001*q)
			h := 0.01 * age
			r := (m.DepthM(age+h) - m.DepthM(age-h)) / (2 * h)
			near(t, "subsidence_rate_m_per_myr", m.SubsidenceRateMPerMyr(age), r, 0.01*math.Abs(r))
			rq := (m.HeatFlowMWm2(age+h) - m.HeatFlowMWm2(age-h)) / (2 * h)
			near(t, "heat_flow_rate", m.HeatFlowRateMWm2PerMyr(age), rq, 0.01*math.Abs(rq))
			if z := m.IsothermDepthKm(600, age); !(m.TemperatureC(z, age) > 599 && m.TemperatureC(z, age) < 601) {
				t.Errorf("600 °C isotherm at %g km has %g °C", z, m.TemperatureC(z, age))
			}
		})
	}
	for _, bad := range []float64{-1, math.NaN()} {
		if v := []float64{m.DepthM(bad), m.HeatFlowMWm2(bad), m.TemperatureC(10, bad), m.ThermalThicknessKm(bad), m.SubsidenceRateMPerMyr(bad)}; !slices.ContainsFunc(v, math.IsNaN) || slices.ContainsFunc(v, func(x float64) bool { return !math.IsNaN(x) }) {
			t.Errorf("age %g: got %v, want all NaN", bad, v)
		}
	}
	if got := m.IsothermDepthKm(2000, 50); !math.IsNaN(got) {
		t.Errorf("isotherm above the mantle temperature = %g, want NaN", got)
	}
}

// BenchmarkTDepBuild is the one-time cost of the temperature-dependent plate:
// its solution on a fresh model.
func BenchmarkTDepBuild(b *testing.B) {
	p, pr := mjp05Params(), mjp05Props()
	b.ReportAllocs()
	for b.Loop() {
		newTDep(p, pr, tdepIntervals, tdepStepFactor).solution()
	}
}

// BenchmarkTdepTable is building the lookup table of the temperature-dependent
// plate from its (already computed) solution, as TableFor does on first use.
func BenchmarkTdepTable(b *testing.B) {
	m := newTDep(mjp05Params(), mjp05Props(), tdepIntervals, tdepStepFactor)
	m.solution()
	b.ReportAllocs()
	for b.Loop() {
		_ = newTable(m)
	}
}

// The fall of expansivity with pressure against the linearised
// Anderson–Grüneisen relation α(P)/α(0) ≈ exp(−δT P/K0) (Anderson, Isaak &
// Oda 1992, from memory), which the Murnaghan form matches to second order
// in P/K0: within 1.5 % down to 110 km (3.6 GPa, (δT P/K0)²/2 ≈ 1 %);
// exactly 1 at the seafloor; and falling with depth. The plate base of MJP05
// (106 km) lies 10–15 % below zero pressure (δT ΔV/V with ΔV/V ≈ 2.6 % at
// 3.5 GPa; from memory, tolerance the spread of δT 5–6).
func TestTDepAlphaPressure(t *testing.T) {
	near(t, "factor at the seafloor", alphaPressureFactor(0), 1, 0)
	prev := 1.0
	for z := 5e3; z <= 110e3; z += 5e3 {
		f := alphaPressureFactor(z)
		lin := math.Exp(-olivineAndersonGruneisen * olivineDensity0KgM3 * GravityMs2 * z / olivineBulkModulusPa)
		near(t, fmt.Sprintf("factor at %g km vs exp(−δT P/K0)", z/1000), f, lin, 0.015)
		if !(f < prev) {
			t.Errorf("factor at %g km = %g, not below %g above it", z/1000, f, prev)
		}
		prev = f
	}
	near(t, "factor at 106 km", alphaPressureFactor(106e3), 0.875, 0.025)
}
