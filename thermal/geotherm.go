package thermal

import (
	"fmt"
	"math"
)

// GeothermSample is one point of a geotherm.
type GeothermSample struct {
	DepthKm      float64 `json:"depth_km"`
	TemperatureC float64 `json:"temperature_c"`
}

// MaxGeothermSamples is the most samples Geotherm returns.
const MaxGeothermSamples = 10001

// Geotherm samples the model temperature T(z) at ageMa on the depth grid
// 0, stepKm, 2·stepKm, … up to and including maxKm (the last sample is maxKm
// itself when maxKm is not a multiple of stepKm). It errors for a negative
// or non-finite age, a non-positive step, a non-positive maximum, or more
// than MaxGeothermSamples samples.
func Geotherm(m Model, ageMa, stepKm, maxKm float64) ([]GeothermSample, error) {
	switch {
	case !(ageMa >= 0) || math.IsInf(ageMa, 0):
		return nil, fmt.Errorf("age %g Ma must be a finite number of at least 0", ageMa)
	case !(stepKm > 0) || math.IsInf(stepKm, 0):
		return nil, fmt.Errorf("depth step %g km must be a finite number above 0", stepKm)
	case !(maxKm > 0) || math.IsInf(maxKm, 0):
		return nil, fmt.Errorf("maximum depth %g km must be a finite number above 0", maxKm)
	}
	n := int(math.Floor(maxKm/stepKm + 1e-9))
	if n+2 > MaxGeothermSamples {
		return nil, fmt.Errorf("a step of %g km to %g km gives more than %d samples; use a larger step", stepKm, maxKm, MaxGeothermSamples)
	}
	out := make([]GeothermSample, 0, n+2)
	for i := 0; i <= n; i++ {
		z := float64(i) * stepKm
		if z > maxKm {
			z = maxKm
		}
		out = append(out, GeothermSample{DepthKm: z, TemperatureC: m.TemperatureC(z, ageMa)})
	}
	if last := out[len(out)-1].DepthKm; maxKm-last > 1e-9*maxKm {
		out = append(out, GeothermSample{DepthKm: maxKm, TemperatureC: m.TemperatureC(maxKm, ageMa)})
	}
	return out, nil
}
