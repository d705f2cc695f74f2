package thermal

import (
	"fmt"
	"math"
	"testing"
)

// bruteSeries sums the plate series (Parsons & Sclater 1977) with a fixed,
// very large number of terms, independently of the model's truncation and
// half-space switch, for the checks below.
func bruteSeries(p Params, ageMa float64, zKm float64) (depthM, heatMWm2, tempC float64) {
	kMyr := p.EffectiveDiffusivityM2s() * SecondsPerMyr
	a := p.PlateThicknessKm * 1000
	y := math.Pi * math.Pi * kMyr * ageMa / (a * a)
	dT := p.MantleTemperatureC - p.SurfaceTemperatureC
	var sd, sq, st float64
	for n := 200000; n >= 1; n-- { // smallest terms first
		fn := float64(n)
		e := math.Exp(-fn * fn * y)
		if n%2 == 1 {
			sd += e / (fn * fn)
		}
		sq += e
		st += math.Sin(fn*math.Pi*zKm*1000/a) * e / fn
	}
	rm, rw := p.MantleDensityKgM3, p.WaterDensityKgM3
	depthM = p.RidgeDepthM + rm*p.ExpansivityPerK*dT*a/(2*(rm-rw))*(1-8/(math.Pi*math.Pi)*sd)
	heatMWm2 = 1000 * p.ConductivityWmK * dT / a * (1 + 2*sq)
	tempC = p.SurfaceTemperatureC + dT*(zKm*1000/a+2/math.Pi*st)
	return
}

// The switch to the half-space form near age 0 (see plate) must agree with
// the full plate series: here summed with 200,000 terms, which converges at
// these ages. Tolerances: depth 1e-6 m, heat flow 1e-9 relative,
// temperature 1e-6 °C (the switch criterion bounds the difference by
// erfc(5.1)·ΔT ≈ 1e-9 °C; the brute sum itself is good to about 1e-10).
func TestPlateSwitchAgreesWithFullSeries(t *testing.T) {
	for _, id := range []string{IDPSM, IDGDH1} {
		m := mustBuiltin(t, id)
		ts := m.(*plate).tSwitch
		for _, age := range []float64{0.05, 0.5, 0.999 * ts, 1.001 * ts, 2 * ts} {
			t.Run(fmt.Sprintf("%s/%.3gMa", id, age), func(t *testing.T) {
				for _, z := range []float64{1, 5, 20} {
					d, q, tc := bruteSeries(m.Params(), age, z)
					near(t, "depth_m", m.DepthM(age), d, 1e-6)
					near(t, "heat_flow_mw_m2", m.HeatFlowMWm2(age), q, 1e-9*q)
					near(t, fmt.Sprintf("temperature_c at %g km", z), m.TemperatureC(z, age), tc, 1e-6)
				}
			})
		}
	}
}

// Beyond 200 Ma the error-bounded series keeps its accuracy: compare with the
// brute-force sum (same source, Parsons & Sclater 1977). Tolerances as above.
func TestPlateOldAges(t *testing.T) {
	m := mustBuiltin(t, IDPSM)
	for _, age := range []float64{200, 300, 500, 2000} {
		t.Run(fmt.Sprintf("%gMa", age), func(t *testing.T) {
			d, q, tc := bruteSeries(m.Params(), age, 60)
			near(t, "depth_m", m.DepthM(age), d, 1e-6)
			near(t, "heat_flow_mw_m2", m.HeatFlowMWm2(age), q, 1e-9*q)
			near(t, "temperature_c", m.TemperatureC(60, age), tc, 1e-6)
		})
	}
}

// The rates are the derivatives of depth and heat flow: compare with a
// central difference (step 1e-3 t, truncation error ~1e-7 relative).
// Tolerance 1e-5 relative.
func TestRatesAreDerivatives(t *testing.T) {
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		for _, age := range []float64{0.3, 2, 10, 40, 90, 200} {
			t.Run(fmt.Sprintf("%s/%gMa", id, age), func(t *testing.T) {
				h := 1e-3 * age
				dd := (m.DepthM(age+h) - m.DepthM(age-h)) / (2 * h)
				dq := (m.HeatFlowMWm2(age+h) - m.HeatFlowMWm2(age-h)) / (2 * h)
				near(t, "subsidence rate", m.SubsidenceRateMPerMyr(age), dd, 1e-5*math.Abs(dd))
				near(t, "heat-flow rate", m.HeatFlowRateMWm2PerMyr(age), dq, 1e-5*math.Abs(dq))
			})
		}
	}
}

// IsothermDepthKm inverts TemperatureC (tolerance 1e-6 °C), and the isotherms
// are ordered 600 < 1100 < 1200 °C < thermal base.
func TestIsothermsInvertTemperature(t *testing.T) {
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		for _, age := range []float64{0.2, 3, 4, 12, 60, 150, 400} {
			t.Run(fmt.Sprintf("%s/%gMa", id, age), func(t *testing.T) {
				prev := 0.0
				for _, temp := range []float64{600, 1100, 1200} {
					z := m.IsothermDepthKm(temp, age)
					near(t, fmt.Sprintf("T at the %g °C isotherm", temp), m.TemperatureC(z, age), temp, 1e-6)
					if !(z > prev) {
						t.Errorf("%g °C isotherm at %g km is not below the previous one at %g km", temp, z, prev)
					}
					prev = z
				}
				base := m.ThermalThicknessKm(age)
				p := m.Params()
				near(t, "T at the thermal base", m.TemperatureC(base, age),
					p.SurfaceTemperatureC+ThicknessFraction*(p.MantleTemperatureC-p.SurfaceTemperatureC), 1e-6)
			})
		}
	}
}

// Edge cases are part of the contract: negative and NaN ages or depths give
// NaN, age 0 gives the ridge, infinite heat flow, zero thickness.
func TestEdgeCases(t *testing.T) {
	for _, id := range BuiltinIDs() {
		m := mustBuiltin(t, id)
		p := m.Params()
		t.Run(id, func(t *testing.T) {
			for _, bad := range []float64{-1, math.NaN(), math.Inf(-1)} {
				for name, v := range map[string]float64{
					"DepthM": m.DepthM(bad), "HeatFlowMWm2": m.HeatFlowMWm2(bad),
					"TemperatureC(age)": m.TemperatureC(10, bad), "TemperatureC(depth)": m.TemperatureC(bad, 10),
					"IsothermDepthKm": m.IsothermDepthKm(600, bad), "ThermalThicknessKm": m.ThermalThicknessKm(bad),
					"SubsidenceRateMPerMyr": m.SubsidenceRateMPerMyr(bad), "HeatFlowRateMWm2PerMyr": m.HeatFlowRateMWm2PerMyr(bad),
				} {
					if !math.IsNaN(v) {
						t.Errorf("%s(%g) = %g, want NaN", name, bad, v)
					}
				}
			}
			near(t, "depth at 0", m.DepthM(0), p.RidgeDepthM, 0)
			if q := m.HeatFlowMWm2(0); !math.IsInf(q, 1) {
				t.Errorf("heat flow at 0 = %g, want +Inf", q)
			}
			near(t, "thickness at 0", m.ThermalThicknessKm(0), 0, 0)
			near(t, "surface temperature", m.TemperatureC(0, 50), p.SurfaceTemperatureC, 1e-9)
			if z := m.IsothermDepthKm(p.MantleTemperatureC+1, 50); !math.IsNaN(z) {
				t.Errorf("isotherm above the mantle temperature = %g, want NaN", z)
			}
		})
	}
}

// The temperature series' truncation adapts to the age: far fewer terms at old
// ages than near the switch, never a fixed count. The counts are those the
// model's own summation (thetaSeriesTerms) reports. Bounds from the remainder
// estimate (derived in the plate doc comment, no outside source): the series
// stops once e^{−n²y} < 1e-14, i.e. after about √(ln(1e14)/y) terms, ≈ 18 at
// the switch y = π²/(4·5.1²) ≈ 0.095 and 3 at y = 3. Tolerance: 10–25 and ≤ 4.
func TestSeriesTermsAdapt(t *testing.T) {
	ySwitch := math.Pi * math.Pi / (4 * switchU * switchU)
	for _, tc := range []struct {
		name     string
		y        float64
		min, max int
	}{
		{"at the half-space switch", ySwitch, 10, 25},
		{"old plate, y = 3", 3, 1, 4},
	} {
		t.Run(tc.name, func(t *testing.T) {
			for _, zr := range []float64{0.01, 0.3, 0.9} {
				if _, _, n := thetaSeriesTerms(zr, tc.y); n < tc.min || n > tc.max {
					t.Errorf("terms at z/a = %g: %d, want %d–%d", zr, n, tc.min, tc.max)
				}
			}
		})
	}
	// Σ e^{−n²y} at y = 50 is e^{−50} to far below rounding (the next term is
	// e^{−200}); tolerance 1e-30.
	near(t, "sumExp(50)", sumExp(50), math.Exp(-50), 1e-30)
}

func nan() float64 { return math.NaN() }
