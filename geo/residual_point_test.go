package geo

import (
	"context"
	"math"
	"testing"

	"ridgeflank/thermal"
)

// PointEvaluator at a lattice sample gives Evaluate's value there bit for bit (one per-sample
// arithmetic), and its corrected depth is the closed-form sediment unloading correction
// (Sclater & Christie 1980) plus the Airy crust correction within the table's tolerance.
func TestPointEvaluatorMatchesGrid(t *testing.T) {
	m := resModel(t, "gdh1")
	c := resShale(t)
	const nx, ny, d = 12, 9, 0.25
	age := resFill(nx, ny, -141, -29, d, CellCentre, resAge)
	elev := resFill(nx, ny, -141, -29, d, CellCentre, func(lon, lat float64) float64 { return -3000 - 40*math.Abs(lon+140) - 25*math.Abs(lat+30) })
	sed := resFill(nx, ny, -141, -29, d, CellCentre, func(lon, lat float64) float64 { return 100 + 300*math.Abs(lat+30) })
	// The crust grid on another lattice (sampled bilinearly by both paths).
	crust := resFill(20, 20, -142, -28, 0.2, CellCentre, func(lon, lat float64) float64 { return 6 + 0.5*math.Abs(lon+140) })
	in := Inputs{Age: age, Depth: elev, DepthSense: ElevationPositiveUp, Sediment: sed, Crust: crust, Model: m, Compaction: c}
	want := OutPredictedDepth | OutHeatFlow | OutThermalThickness | OutDepth600C | OutCorrectedDepth | OutResidualDepth
	res, err := Evaluate(context.Background(), in, want)
	if err != nil {
		t.Fatal(err)
	}
	pe, err := NewPointEvaluator(in, want)
	if err != nil {
		t.Fatal(err)
	}
	pr := m.Params()
	for r := 0; r < ny; r++ {
		for col := 0; col < nx; col++ {
			k := r*nx + col
			v := pe.At(age.Lon(col), age.Lat(r))
			for _, q := range []struct {
				name      string
				got, want float64
			}{
				{"predicted", v.PredictedDepthM, float64(res.PredictedDepthM.Data[k])},
				{"corrected", v.CorrectedDepthM, float64(res.CorrectedDepthM.Data[k])},
				{"residual", v.ResidualDepthM, float64(res.ResidualDepthM.Data[k])},
				{"heat flow", float64(float32(v.HeatFlowMWm2)), float64(res.HeatFlowMWm2.Data[k])},
			} {
				if math.Abs(q.got-q.want) > 1e-6*math.Max(1, math.Abs(q.want)) { // float32 rounding at most
					t.Fatalf("cell %d,%d %s: point %v, grid %v", col, r, q.name, q.got, q.want)
				}
			}
			// Independent arithmetic: observed depth + closed-form sediment correction + Airy crust
			// correction; tolerance 1.5 mm (the corrector's node table) + float32 rounding at 6 km.
			s := float64(sed.Data[k])
			wantCorr := -float64(elev.Data[k]) + sedimentClosedFormM(s, c, pr.MantleDensityKgM3, pr.WaterDensityKgM3) +
				thermal.CrustCorrectionM(v.CrustKm, thermal.DefaultCrustDensityKgM3, pr.MantleDensityKgM3, pr.WaterDensityKgM3)
			if math.Abs(v.CorrectedDepthM-wantCorr) > 0.01 {
				t.Fatalf("cell %d,%d corrected %v, closed form %v", col, r, v.CorrectedDepthM, wantCorr)
			}
			if got, w := v.ResidualDepthM, thermal.ResidualDepthM(v.PredictedDepthM, v.CorrectedDepthM); math.Abs(got-w) > 1e-3 {
				t.Fatalf("cell %d,%d residual %v, predicted − corrected %v", col, r, got, w)
			}
		}
	}
}
