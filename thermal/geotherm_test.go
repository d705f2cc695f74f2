package thermal

import (
	"fmt"
	"testing"
)

// Geotherm samples the plate temperature on the requested depth grid. Each
// sample is checked against the Parsons & Sclater (1977) series summed by
// brute force (bruteSeries, 200,000 terms; tolerance 1e-6 °C), against the
// mantle temperature at and below the plate base, and at age 0 against the
// initial condition (surface at Ts, everything below at Tm; McKenzie 1967).
func TestGeotherm(t *testing.T) {
	m := mustBuiltin(t, IDPSM)
	for _, tc := range []struct {
		name           string
		age, step, max float64
		wantN          int
		wantLast       float64
	}{
		{"even grid", 50, 5, 125, 26, 125},
		{"last sample at max", 50, 10, 125, 14, 125},
		{"single step", 10, 200, 100, 2, 100},
		{"ridge", 0, 5, 20, 5, 20},
	} {
		t.Run(tc.name, func(t *testing.T) {
			g, err := Geotherm(m, tc.age, tc.step, tc.max)
			if err != nil {
				t.Fatal(err)
			}
			if len(g) != tc.wantN || g[len(g)-1].DepthKm != tc.wantLast || g[0].DepthKm != 0 {
				t.Fatalf("got %d samples from %g to %g km, want %d to %g", len(g), g[0].DepthKm, g[len(g)-1].DepthKm, tc.wantN, tc.wantLast)
			}
			p := m.Params()
			for i, s := range g {
				var want float64
				switch {
				case tc.age == 0 && s.DepthKm == 0:
					want = p.SurfaceTemperatureC
				case tc.age == 0 || s.DepthKm >= p.PlateThicknessKm:
					want = p.MantleTemperatureC
				default:
					_, _, want = bruteSeries(p, tc.age, s.DepthKm)
				}
				near(t, fmt.Sprintf("temperature_c of sample %d at %g km", i, s.DepthKm), s.TemperatureC, want, 1e-6)
				if i > 0 && s.TemperatureC < g[i-1].TemperatureC {
					t.Errorf("temperature decreases with depth at %g km", s.DepthKm)
				}
			}
		})
	}
	for _, bad := range []struct{ age, step, max float64 }{
		{-1, 5, 100}, {nan(), 5, 100}, {50, 0, 100}, {50, -5, 100}, {50, 5, 0}, {50, 0.001, 100},
	} {
		if _, err := Geotherm(m, bad.age, bad.step, bad.max); err == nil {
			t.Errorf("Geotherm(%v) accepted", bad)
		}
	}
}
