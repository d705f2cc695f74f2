package evaluate

import (
	"context"
	"errors"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// The uncertainty parameters at positions of plan-globe (SYNTHETIC: age 16 Ma everywhere,
// σ(lon) = 3 + 2·sin(lon) Ma on a 1° grid, so σ is 1 Ma at 90° W and 5 Ma at 90° E):
//   - at 90° W (σ/age = 0.0625, first order) the depth uncertainty is |dd/dt|·σ with dd/dt from
//     thermal's own subsidence rate (the model's analytic derivative, not the central difference
//     the kernel uses), within 0.2 %;
//   - at 90° E (σ/age = 0.31, sampled) it is the standard deviation of a brute-force Monte Carlo
//     over the normal truncated at age 0 (200 000 seeded draws), within 1 %;
//   - either side of the antimeridian (179.5° E, 179.5° W) it follows σ of the true position
//     (Monte Carlo as above).
func TestPointsAgeUncertainty(t *testing.T) {
	s := checkService(t, Limits{})
	ctx := context.Background()
	tbl := thermal.TableFor(mustBuiltin(t, DefaultModel))
	lons := []float64{-90, 90, 179.5, -179.5}
	lats := []float64{0, 0, 0, 0}
	o := Options{Parameters: []string{PPredictedDepthUncertainty, PHeatFlowUncertainty, PThermalThicknessUncertainty, PRidgePush}}
	res, err := s.Points(ctx, planGlobeID, o, lons, lats)
	if err != nil {
		t.Fatal(err)
	}
	dep := res.Values[0]
	t.Run("first order at 90W", func(t *testing.T) {
		want := tbl.SubsidenceRateMPerMyr(16) * planGlobeSigma(-90)
		if math.Abs(dep[0]-want) > 2e-3*want {
			t.Errorf("%v m, |dd/dt|·σ %v m", dep[0], want)
		}
	})
	t.Run("sampled at 90E", func(t *testing.T) {
		want := monteCarloSD(tbl.DepthM, 16, planGlobeSigma(90), 200000)
		if math.Abs(dep[1]-want) > 0.01*want {
			t.Errorf("%v m, Monte Carlo %v m", dep[1], want)
		}
	})
	t.Run("antimeridian", func(t *testing.T) {
		for j := 2; j < 4; j++ {
			sig := planGlobeSigma(lons[j]) // about 3 Ma: sampled
			want := monteCarloSD(tbl.DepthM, 16, sig, 200000)
			if math.Abs(dep[j]-want) > 0.01*want {
				t.Errorf("lon %g: %v m, Monte Carlo %v m (σ %g Ma)", lons[j], dep[j], want, sig)
			}
		}
		// σ is 0.035 Ma larger at 179.5° E than at 179.5° W: the answers keep the order
		if !(dep[2] > dep[3]) {
			t.Errorf("179.5E %v m not above 179.5W %v m", dep[2], dep[3])
		}
	})
	t.Run("ridge push", func(t *testing.T) {
		want := thermal.RidgePushNPerM(mustBuiltin(t, DefaultModel), 16)
		if got := res.Values[3][0]; math.Abs(got-want) > 1e-4*want {
			t.Errorf("%v N/m, thermal %v N/m", got, want)
		}
	})
	for i := range 3 {
		for j := range lons {
			if !(res.Values[i][j] > 0) {
				t.Errorf("%s at %g: %v", res.Query.Params[i].ID, lons[j], res.Values[i][j])
			}
		}
	}
}

// A single value given with the question answers as the grid holding that value does: at 0° the
// bilinear σ of plan-globe is 3 + (sin 0.5° − sin 0.5°) = 3 Ma, so age-uncertainty-ma=3 agrees
// within float32 rounding of the grid.
func TestPointsAgeUncertaintySingleValue(t *testing.T) {
	s := checkService(t, Limits{})
	ctx := context.Background()
	o := Options{Parameters: []string{PPredictedDepthUncertainty, PHeatFlowUncertainty, PThermalThicknessUncertainty}}
	g, err := s.Points(ctx, planGlobeID, o, []float64{0}, []float64{10})
	if err != nil {
		t.Fatal(err)
	}
	o.AgeUncertaintyMa = 3
	v, err := s.Points(ctx, planGlobeID, o, []float64{0}, []float64{10})
	if err != nil {
		t.Fatal(err)
	}
	for i := range o.Parameters {
		if a, b := g.Values[i][0], v.Values[i][0]; math.Abs(a-b) > 1e-5*b {
			t.Errorf("%s: grid %v, single value %v", o.Parameters[i], a, b)
		}
	}
}

// The uncertainty parameters need an age uncertainty: for a dataset without a grid, asking
// without age-uncertainty-ma is an unknown-parameter fault naming it, and a bad value an
// invalid-parameter fault; with a value they are answered.
func TestAgeUncertaintyFaults(t *testing.T) {
	s := checkService(t, Limits{})
	ctx := context.Background()
	d := &Dataset{Row: store.Dataset{ID: "no-age-uncertainty"}} // catalogue facts only: Resolve reads no grid
	o := Options{Parameters: []string{PPredictedDepthUncertainty}}
	_, err := s.Resolve(ctx, d, o)
	var fe *fault.Error
	if !errors.As(err, &fe) || fe.Kind != fault.UnknownParameter {
		t.Errorf("without an age uncertainty: %v", err)
	}
	for _, bad := range []float64{-1, math.NaN(), 101} {
		o.AgeUncertaintyMa = bad
		if _, err := s.Resolve(ctx, d, o); !errors.As(err, &fe) || fe.Kind != fault.InvalidParameter || fe.Field != "age-uncertainty-ma" {
			t.Errorf("age-uncertainty-ma=%g: %v", bad, err)
		}
	}
	o.AgeUncertaintyMa = 2
	if _, err := s.Resolve(ctx, d, o); err != nil {
		t.Error(err)
	}
	for _, p := range d.Available() {
		if p.NeedsAgeUncertainty() {
			t.Errorf("%s listed for a dataset without an age-uncertainty grid", p.ID)
		}
	}
}

// The uncertainty of a region's mean. Region 10°–20° E, 1° S–1° N of plan-globe holds 20 cells
// (centres at ±0.5°, equal weights cos 0.5°) with one σ = 1 Ma from the question, so every cell's
// depth uncertainty is σ_d = |dd/dt(16 Ma)|·1 Ma; independent cells give σ_d/√20 (worked: the
// σ/√n rule; optimistic, the cells' age errors are not independent), fully correlated σ_d.
func TestRegionMeanUncertainty(t *testing.T) {
	s := checkService(t, Limits{})
	ctx := context.Background()
	r, err := s.PrepareRegion(orb.MultiPolygon{{{{10, -1}, {20, -1}, {20, 1}, {10, 1}, {10, -1}}}}, "coords")
	if err != nil {
		t.Fatal(err)
	}
	o := Options{Parameters: []string{PPredictedDepth, PRidgePush}, AgeUncertaintyMa: 1}
	res, err := s.Statistics(ctx, planGlobeID, o, r, 0, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Stats) != 2 || res.Stats[0].Count != 20 {
		t.Fatalf("stats %+v", res.Stats)
	}
	tbl := thermal.TableFor(mustBuiltin(t, DefaultModel))
	sd := tbl.SubsidenceRateMPerMyr(16) * 1
	mu := res.MeanUncertainty[0]
	if mu == nil {
		t.Fatal("no mean uncertainty for predicted_depth")
	}
	for _, c := range []struct {
		name      string
		got, want float64
	}{
		{"independent σ/√20", mu.Independent, sd / math.Sqrt(20)},
		{"correlated σ", mu.Correlated, sd},
	} {
		t.Run(c.name, func(t *testing.T) {
			if math.Abs(c.got-c.want) > 2e-3*c.want { // central difference vs the analytic rate
				t.Errorf("%v m, want %v m", c.got, c.want)
			}
		})
	}
	if res.MeanUncertainty[1] != nil {
		t.Error("ridge push given a mean uncertainty")
	}
	if note := s.Provenance(res.Query).Note; !strings.Contains(note, "age uncertainty 1 Ma") {
		t.Errorf("provenance note %q does not give the age uncertainty", note)
	}
	// From the grid: the provenance names it.
	o.AgeUncertaintyMa = 0
	if res, err = s.Statistics(ctx, planGlobeID, o, r, 0, 0, nil); err != nil {
		t.Fatal(err)
	}
	named := false
	for _, g := range s.Provenance(res.Query).Grids {
		named = named || g.Role == RoleAgeUncertainty
	}
	if !named || res.MeanUncertainty[0] == nil {
		t.Error("statistics from the age-uncertainty grid: grid not in the provenance, or no mean uncertainty")
	}
	// A parameter without an uncertainty companion has none.
	o = Options{Parameters: []string{PSeafloorAge}}
	res, err = s.Statistics(ctx, planGlobeID, o, r, 0, 0, nil)
	if err != nil {
		t.Fatal(err)
	}
	if res.MeanUncertainty != nil && res.MeanUncertainty[0] != nil {
		t.Error("seafloor age given a mean uncertainty")
	}
}

// A tile of an uncertainty parameter renders (the page's uncertainty layer): some pixel is
// opaque.
func TestTileAgeUncertainty(t *testing.T) {
	s := checkService(t, Limits{})
	ctx := context.Background()
	for _, p := range []string{PPredictedDepthUncertainty, PRidgePush} {
		plan, err := s.Tile(ctx, planGlobeID, p, 1, 1, 0, Options{})
		if err != nil {
			t.Fatal(p, err)
		}
		img, _, err := plan.Render(ctx)
		if err != nil {
			t.Fatal(p, err)
		}
		opaque := 0
		for i := 3; i < len(img.Pix); i += 4 {
			if img.Pix[i] == 255 {
				opaque++
			}
		}
		if opaque == 0 {
			t.Errorf("%s: empty tile", p)
		}
	}
}

// monteCarloSD is the brute-force standard deviation of f(t), t normal about a with standard
// deviation s truncated at 0 (rejection), from n draws of a fixed-seed source.
func monteCarloSD(f func(float64) float64, a, s float64, n int) float64 {
	r := rand.New(rand.NewPCG(2026, 12))
	var mean, m2 float64
	for i := 1; i <= n; i++ {
		x := -1.0
		for x < 0 {
			x = a + s*r.NormFloat64()
		}
		y := f(x)
		d := y - mean
		mean += d / float64(i)
		m2 += d * (y - mean)
	}
	return math.Sqrt(m2 / float64(n))
}

func mustBuiltin(t testing.TB, id string) thermal.Model {
	t.Helper()
	m, err := thermal.Builtin(id)
	if err != nil {
		t.Fatal(err)
	}
	return m
}
