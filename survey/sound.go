package survey

import (
	"fmt"
	"math"
)

// The range of temperature, salinity and depth over which Mackenzie (1981) fitted his equation.
// Outside it the equation is extrapolated; a check says so (SoundColumn.Notes).
const (
	MackenzieMinTemperatureC = 2.0
	MackenzieMaxTemperatureC = 30.0
	MackenzieMinSalinity     = 25.0
	MackenzieMaxSalinity     = 40.0
	MackenzieMaxDepthM       = 8000.0
)

// MackenzieSoundSpeedMS is the speed of sound in sea water (m/s) at temperature tC (°C), salinity
// s (‰, taken as practical salinity) and depth dM (m), by the nine-term equation of Mackenzie
// (1981), "Nine-term equation for sound speed in the oceans", J. Acoust. Soc. Am. 70(3),
// 807–812:
//
//	c = 1448.96 + 4.591 T − 5.304×10⁻² T² + 2.374×10⁻⁴ T³ + 1.340 (S − 35) + 1.630×10⁻² D
//	    + 1.675×10⁻⁷ D² − 1.025×10⁻² T (S − 35) − 7.139×10⁻¹³ T D³
//
// fitted for T 2–30 °C, S 25–40 ‰ and D 0–8000 m (standard error 0.070 m/s). The paper's
// check value is 1550.744 m/s at 25 °C, 35 ‰, 1000 m. Values outside the fit are computed
// all the same (extrapolated).
func MackenzieSoundSpeedMS(tC, s, dM float64) float64 {
	t, ds, d := tC, s-35, dM
	return 1448.96 + 4.591*t - 5.304e-2*t*t + 2.374e-4*t*t*t + 1.340*ds + 1.630e-2*d +
		1.675e-7*d*d - 1.025e-2*t*ds - 7.139e-13*t*d*d*d
}

// soundStepM is the depth step of a SoundColumn's table of travel times (m).
const soundStepM = 10.0

// SoundColumn is the water column a check assumes for sound speed: temperature and salinity
// against depth (a profile, interpolated linearly in depth between its levels and held
// constant above the first and below the last; or one temperature and salinity for the whole
// column), with sound speed c(z) from MackenzieSoundSpeedMS at each depth z.
//
// The mean sound speed between two depths is the harmonic (time-averaged) mean
// c̄ = (z₂ − z₁) / ∫ dz/c(z), the speed that gives the true one-way vertical travel time. The
// slowness 1/c is tabulated once every 10 m down to the deepest depth asked for
// (trapezoidal rule; c changes by under 0.2 m/s over 10 m, so the integration error is far
// below the equation's own 0.07 m/s standard error).
type SoundColumn struct {
	steps []ProfileStep
	cum   []float64 // cum[i]: one-way vertical travel time from the surface to i·soundStepM, s
}

// NewSoundColumn builds the column of s: its SoundProfile when it has one, else its single
// WaterTemperatureC and SalinityPSU (DefaultTemperatureC and DefaultSalinityPSU when nil).
func NewSoundColumn(s Settings) *SoundColumn {
	c := &SoundColumn{}
	if len(s.SoundProfile) > 0 {
		c.steps = append(c.steps, s.SoundProfile...)
		return c.tabulate()
	}
	t, sal := DefaultTemperatureC, DefaultSalinityPSU
	if s.WaterTemperatureC != nil {
		t = *s.WaterTemperatureC
	}
	if s.SalinityPSU != nil {
		sal = *s.SalinityPSU
	}
	c.steps = []ProfileStep{{DepthM: 0, TemperatureC: t, SalinityPSU: sal}}
	return c.tabulate()
}

// At is the temperature (°C) and salinity (‰) of the column at depth dM (m).
func (c *SoundColumn) At(dM float64) (tC, s float64) {
	st := c.steps
	if dM <= st[0].DepthM {
		return st[0].TemperatureC, st[0].SalinityPSU
	}
	for i := 1; i < len(st); i++ {
		if dM <= st[i].DepthM {
			a, b := st[i-1], st[i]
			f := (dM - a.DepthM) / (b.DepthM - a.DepthM)
			return a.TemperatureC + f*(b.TemperatureC-a.TemperatureC), a.SalinityPSU + f*(b.SalinityPSU-a.SalinityPSU)
		}
	}
	l := st[len(st)-1]
	return l.TemperatureC, l.SalinityPSU
}

// SpeedAtMS is the sound speed (m/s) at depth dM (m).
func (c *SoundColumn) SpeedAtMS(dM float64) float64 {
	t, s := c.At(dM)
	return MackenzieSoundSpeedMS(t, s, dM)
}

// soundTableM is the depth the travel-time table reaches (m); below it the slowness at its
// bottom is used.
const soundTableM = 12_000.0

// travelTimeS is the one-way vertical travel time (s) from the surface to depth dM ≥ 0.
func (c *SoundColumn) travelTimeS(dM float64) float64 {
	x := dM / soundStepM
	last := len(c.cum) - 1
	if x >= float64(last) {
		return c.cum[last] + (dM-soundTableM)/c.SpeedAtMS(soundTableM)
	}
	i := int(x)
	return c.cum[i] + (x-float64(i))*(c.cum[i+1]-c.cum[i])
}

func (c *SoundColumn) tabulate() *SoundColumn {
	n := int(soundTableM/soundStepM) + 1
	c.cum = make([]float64, n)
	prev := 1 / c.SpeedAtMS(0)
	for i := 1; i < n; i++ {
		next := 1 / c.SpeedAtMS(float64(i)*soundStepM)
		c.cum[i] = c.cum[i-1] + soundStepM*(prev+next)/2
		prev = next
	}
	return c
}

// MeanSpeedMS is the harmonic mean sound speed (m/s) of the water between depths fromM and toM
// (m, 0 ≤ fromM < toM): (toM − fromM) / ∫ dz/c(z). For toM ≤ fromM it is the speed at fromM;
// NaN for a NaN or negative depth. Safe for concurrent use.
func (c *SoundColumn) MeanSpeedMS(fromM, toM float64) float64 {
	if !(fromM >= 0) || !(toM >= 0) {
		return math.NaN()
	}
	if toM <= fromM {
		return c.SpeedAtMS(fromM)
	}
	return (toM - fromM) / (c.travelTimeS(toM) - c.travelTimeS(fromM))
}

// Notes says where the column's settings, or the depths it is used to (deepest, m), lie outside
// the range Mackenzie (1981) fitted (T 2–30 °C, S 25–40 ‰, D 0–8000 m): one sentence each,
// none when everything is inside.
func (c *SoundColumn) Notes(deepestM float64) []string {
	var out []string
	for _, st := range c.steps {
		if st.TemperatureC < MackenzieMinTemperatureC || st.TemperatureC > MackenzieMaxTemperatureC {
			out = append(out, fmt.Sprintf("water temperature %g °C (at %g m) is outside 2–30 °C, the range of Mackenzie (1981): sound speed is extrapolated", st.TemperatureC, st.DepthM))
		}
		if st.SalinityPSU < MackenzieMinSalinity || st.SalinityPSU > MackenzieMaxSalinity {
			out = append(out, fmt.Sprintf("salinity %g (at %g m) is outside 25–40, the range of Mackenzie (1981): sound speed is extrapolated", st.SalinityPSU, st.DepthM))
		}
	}
	if deepestM > MackenzieMaxDepthM {
		out = append(out, fmt.Sprintf("expected depths reach %.0f m, deeper than 8000 m, the range of Mackenzie (1981): sound speed is extrapolated there", deepestM))
	}
	return out
}
