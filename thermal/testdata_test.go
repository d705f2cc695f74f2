package thermal_test

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"

	"ridgeflank/thermal"
)

// TestCustomModelFileReproducesGDH1 loads the GDH1 parameter set written as a custom model file
// (the format of `predict --params` and POST /api/models) and checks the model built from it
// against the published GDH1 fit equations of Stein & Stein (1992), Nature 359, 123-129:
// depth d = 2600 + 365·√t (t < 20 Ma), 5651 − 2473·e^(−0.0278 t) otherwise;
// heat flow q = 510/√t (t ≤ 55 Ma), 48 + 96·e^(−0.0278 t) otherwise.
// Tolerances: 10 m and 2 % (the fits summarise the model to about that; common practice, no source).
func TestCustomModelFileReproducesGDH1(t *testing.T) {
	raw, err := os.ReadFile(filepath.Join("..", "testdata", "models", "gdh1-published.json"))
	if err != nil {
		t.Fatal(err)
	}
	var p thermal.Params
	if err := json.Unmarshal(raw, &p); err != nil {
		t.Fatal(err)
	}
	m, err := thermal.NewModel(p)
	if err != nil {
		t.Fatal(err)
	}
	fitDepth := func(a float64) float64 {
		if a < 20 {
			return 2600 + 365*math.Sqrt(a)
		}
		return 5651 - 2473*math.Exp(-0.0278*a)
	}
	fitHeat := func(a float64) float64 {
		if a <= 55 {
			return 510 / math.Sqrt(a)
		}
		return 48 + 96*math.Exp(-0.0278*a)
	}
	for _, age := range []float64{1, 5, 10, 19, 25, 40, 55, 80, 120, 160} {
		t.Run(fmtAge(age), func(t *testing.T) {
			if d, want := m.DepthM(age), fitDepth(age); math.Abs(d-want) > 10 {
				t.Errorf("depth %.1f m, GDH1 fit %.1f m", d, want)
			}
			if q, want := m.HeatFlowMWm2(age), fitHeat(age); math.Abs(q-want) > 0.02*want {
				t.Errorf("heat flow %.2f mW/m², GDH1 fit %.2f mW/m²", q, want)
			}
		})
	}
}

func fmtAge(a float64) string {
	b, _ := json.Marshal(a)
	return string(b) + "Ma"
}
