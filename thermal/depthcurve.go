package thermal

import (
	"fmt"
	"math"
)

// SqrtExpCurve is an empirical depth–age curve of three coefficients in the shape of Stein &
// Stein's (1992) GDH1 fit equations (Nature 359, 123–129): d = d0 + b·√t up to the crossover
// age tc, then an exponential approach to the asymptotic depth d∞. Unlike the published pair of
// equations, which fix the decay constant separately, the exponential branch here is the one
// whose value and slope match the √t branch at tc:
//
//	d(t) = d0 + b·√t                        t ≤ tc
//	d(t) = d∞ − (d∞ − dc)·exp(−(t − tc)/τ)  t > tc,  dc = d0 + b·√tc,  τ = 2·√tc·(d∞ − dc)/b
//
// so three numbers (ridge depth, √age slope, asymptote) describe a smooth curve. With GDH1's
// coefficients (2600 m, 365 m/Myr^½, 5651 m, tc = 20 Ma) τ = 34.8 Myr against the paper's
// 1/0.0278 = 36.0 Myr. Depths are in m positive down, ages in Ma.
type SqrtExpCurve struct {
	RidgeDepthM         float64 `json:"ridge_depth_m"`
	SqrtAgeSlopeMPerMyr float64 `json:"sqrt_age_slope_m_per_myr_half"` // b, m per √Myr
	AsymptoticDepthM    float64 `json:"asymptotic_depth_m"`
	CrossoverAgeMa      float64 `json:"crossover_age_ma"`
}

// GDH1CrossoverAgeMa is the age where Stein & Stein's (1992) GDH1 fit equations change from
// the √age branch to the exponential one (20 Ma).
const GDH1CrossoverAgeMa = 20

// GDH1Curve is SqrtExpCurve with the coefficients of Stein & Stein's (1992) GDH1 depth fit
// (d0 = 2600 m, b = 365 m/Myr^½, d∞ = 5651 m, tc = 20 Ma; Nature 359, 123–129, from memory).
var GDH1Curve = SqrtExpCurve{RidgeDepthM: 2600, SqrtAgeSlopeMPerMyr: 365, AsymptoticDepthM: 5651, CrossoverAgeMa: GDH1CrossoverAgeMa}

// Validate checks that the curve is defined: finite coefficients, 0 ≤ d0 ≤ 6000 m, a slope
// 50 to 1000 m/Myr^½, a crossover age 1 to 200 Ma and an asymptote deeper than the curve at the
// crossover age (else the exponential branch would rise) and at most 12 000 m. The ranges
// reject mistyped values, not unusual science (common practice, no source).
func (c SqrtExpCurve) Validate() error {
	for _, v := range []struct {
		name     string
		v        float64
		min, max float64
	}{
		{"ridge_depth_m", c.RidgeDepthM, 0, 6000},
		{"sqrt_age_slope_m_per_myr_half", c.SqrtAgeSlopeMPerMyr, 50, 1000},
		{"crossover_age_ma", c.CrossoverAgeMa, 1, 200},
		{"asymptotic_depth_m", c.AsymptoticDepthM, 0, 12000},
	} {
		if !(v.v >= v.min && v.v <= v.max) {
			return &ParamError{Field: v.name, Value: v.v, Msg: fmt.Sprintf("%s = %g is outside the allowed range %g to %g", v.name, v.v, v.min, v.max)}
		}
	}
	if dc := c.crossoverDepthM(); !(c.AsymptoticDepthM > dc) {
		return &ParamError{Field: "asymptotic_depth_m", Value: c.AsymptoticDepthM, Msg: fmt.Sprintf(
			"asymptotic_depth_m = %g must be deeper than the curve at the crossover age (%.0f m)", c.AsymptoticDepthM, dc)}
	}
	return nil
}

func (c SqrtExpCurve) crossoverDepthM() float64 {
	return c.RidgeDepthM + c.SqrtAgeSlopeMPerMyr*math.Sqrt(c.CrossoverAgeMa)
}

// DecayTimeMyr is τ, the e-folding time of the exponential branch (Myr).
func (c SqrtExpCurve) DecayTimeMyr() float64 {
	return 2 * math.Sqrt(c.CrossoverAgeMa) * (c.AsymptoticDepthM - c.crossoverDepthM()) / c.SqrtAgeSlopeMPerMyr
}

// DepthM is the curve's depth (m, positive down) at ageMa; NaN for a negative or NaN age.
// The curve must be valid (Validate).
func (c SqrtExpCurve) DepthM(ageMa float64) float64 {
	if !(ageMa >= 0) {
		return math.NaN()
	}
	if ageMa <= c.CrossoverAgeMa {
		return c.RidgeDepthM + c.SqrtAgeSlopeMPerMyr*math.Sqrt(ageMa)
	}
	dc := c.crossoverDepthM()
	return c.AsymptoticDepthM - (c.AsymptoticDepthM-dc)*math.Exp(-(ageMa-c.CrossoverAgeMa)/c.DecayTimeMyr())
}
