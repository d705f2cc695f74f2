package thermal

import (
	"fmt"
	"testing"
)

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
			for i, s := range g {
				near(t, fmt.Sprintf("sample %d", i), s.TemperatureC, m.TemperatureC(s.DepthKm, tc.age), 0)
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
