package evaluate

import (
	"context"
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"sync"
	"testing"

	"ridgeflank/demobasin"
	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/ingest"
	"ridgeflank/store"
	"ridgeflank/store/storetest"
	"ridgeflank/survey"
)

// planStore is one SQLite store, kept in the system's temporary directory between runs, holding
// the SYNTHETIC demo basin (noise-free) and a SYNTHETIC global dataset "plan-globe" made here:
// age 16 Ma everywhere, an age-uncertainty grid σ(lon) = 3 + 2·sin(lon) Ma, no depth grid.
type planStore struct {
	once sync.Once
	dir  string
	err  error
}

var planFixture planStore

const planGlobeID = "plan-globe"

// planGlobeSigma is the SYNTHETIC age uncertainty (Ma) of plan-globe.
func planGlobeSigma(lon float64) float64 { return 3 + 2*math.Sin(lon*math.Pi/180) }

func checkService(t testing.TB, limits Limits) *Service {
	t.Helper()
	f := &planFixture
	f.once.Do(func() {
		f.dir = filepath.Join(os.TempDir(), "ridgeflank-plan-fixture")
		if f.err = os.MkdirAll(f.dir, 0o755); f.err != nil {
			return
		}
		st := storetest.OpenStore(t, store.BackendSQLite, filepath.Join(f.dir, "store"))
		ctx := context.Background()
		b, err := demobasin.Generate(demobasin.Options{NoiseStdM: -1})
		if err != nil {
			f.err = err
			return
		}
		if _, f.err = demobasin.Install(ctx, st, b); f.err != nil {
			return
		}
		if _, err := st.GetDataset(ctx, planGlobeID); err == nil {
			return
		}
		files := []string{
			gdalGrid(t, f.dir, "age16", 360, 180, 360, 180, func(lon, lat float64) float64 { return 16 }),
			gdalGrid(t, f.dir, "agesigma", 360, 180, 360, 180, func(lon, lat float64) float64 { return planGlobeSigma(lon) }),
		}
		var ids []string
		for i, k := range []store.GridKind{store.KindAge, store.KindAgeUncertainty} {
			res, err := ingest.Import(ctx, st, ingest.Request{Path: files[i], Kind: k}, nil)
			if err != nil {
				f.err = err
				return
			}
			ids = append(ids, res.Grid.ID)
		}
		_, f.err = st.CreateDataset(ctx, store.Dataset{ID: planGlobeID, Name: "plan test globe (SYNTHETIC)",
			AgeGridID: ids[0], AgeUncertaintyGridID: ids[1]})
	})
	if f.err != nil {
		t.Fatal(f.err)
	}
	st := storetest.OpenStore(t, store.BackendSQLite, filepath.Join(f.dir, "store"))
	return New(Config{Store: st, Limits: limits})
}

func wp(lon, lat float64) geo.Waypoint { return geo.Waypoint{Lon: lon, Lat: lat} }

// Leg lengths and azimuths against Karney's GeodTest.dat WGS84 test set (GeographicLib, "Test
// data for geodesics", doi:10.5281/zenodo.32156; the lines geo's tests use): lat1, lon1, azi1,
// lat2, lon2, s12 (m). Tolerance 1 mm and 1e-9°. The second and third lines are the same
// geodesic, so the transit between them runs it backwards: its length is s12 too.
func TestCheckPlanLegsGeodTest(t *testing.T) {
	s := checkService(t, Limits{})
	cases := [][6]float64{
		{35.60777, -139.44815, 111.098748429560326, -11.17491, -69.95921, 8935244.5604818305},
		{-19.79938, -174.47484, 71.167275780171533, -11.99349, -154.35109, 2319004.8601169389},
		{-19.79938, -174.47484, 71.167275780171533, -11.99349, -154.35109, 2319004.8601169389},
		// crosses the antimeridian (106° E to 162.8° W)
		{55.52454, 106.05087, 22.020059880982801, 77.03196, 197.18234 - 360, 4105086.1713924406},
	}
	p := survey.Plan{Name: "GeodTest", Settings: survey.Settings{Dataset: demobasin.DatasetID, SpacingKm: 100, SpeedOnLineKn: 10}}
	for _, c := range cases {
		p.Lines = append(p.Lines, survey.Line{Waypoints: []geo.Waypoint{wp(c[1], c[0]), wp(c[4], c[3])}})
	}
	chk, err := s.CheckPlan(context.Background(), p, nil)
	if err != nil {
		t.Fatal(err)
	}
	for i, c := range cases {
		t.Run("", func(t *testing.T) {
			l := chk.Lines[i]
			lg := l.Legs[0]
			if math.Abs(lg.LengthKm*1000-c[5]) > 1e-3 {
				t.Errorf("leg %d: %.6f m, GeodTest %.6f m", i, lg.LengthKm*1000, c[5])
			}
			if d := math.Abs(math.Remainder(lg.AzimuthDeg-c[2], 360)); d > 1e-9 {
				t.Errorf("leg %d: azimuth %.12f, GeodTest %.12f", i, lg.AzimuthDeg, c[2])
			}
			// 1 nmi = 1852 m exactly (BIPM SI brochure); time at 10 kn = nmi / 10.
			if math.Abs(l.LengthNmi-c[5]/1852) > 1e-6 || math.Abs(l.TimeOnLineH-c[5]/1852/10) > 1e-7 {
				t.Errorf("line %d: %.6f nmi, %.6f h", i, l.LengthNmi, l.TimeOnLineH)
			}
		})
	}
	if tr := chk.Transits[1]; math.Abs(tr.LengthKm*1000-cases[1][5]) > 1e-3 {
		t.Errorf("transit 1→2: %.6f m, GeodTest %.6f m", tr.LengthKm*1000, cases[1][5])
	}
	// Off the demo basin there is no depth at all: every line is one no-data hazard.
	if chk.Totals.Hazards < len(cases) || chk.Hazards[0].Kind != survey.HazardNoData {
		t.Errorf("hazards %+v", chk.Hazards)
	}
}

// A line along the demo basin's SYNTHETIC seamount chain (demobasin.Seamounts: Gaussian cones
// 1400–2600 m high) flags each seamount as observed above the prediction, worst sample within a
// few km of its summit; the demo's crossing line flags Quillon Seamount C. The generator
// builds observed = GDH1 depth − relief − sediment correction, and the check's prediction is the
// same GDH1 depth loaded with the same sediment, so the height above the prediction at a
// summit is the cone's height (fracture-zone troughs aside); tolerance 5 % of the height.
func TestCheckPlanFlagsSeamountChain(t *testing.T) {
	s := checkService(t, Limits{})
	sm := demobasin.Seamounts()
	first, last := sm[0], sm[len(sm)-1]
	var cross []geo.Waypoint
	for _, pt := range demobasin.CrossingTrack() {
		cross = append(cross, wp(pt[0], pt[1]))
	}
	p := survey.Plan{Name: "chain", Lines: []survey.Line{
		{Name: "along", Waypoints: []geo.Waypoint{wp(first.Lon-0.5, first.Lat+0.41), wp(last.Lon+0.5, last.Lat-0.41)}},
		{Name: "crossing", Waypoints: cross},
	}, Settings: survey.Settings{Dataset: demobasin.DatasetID, SpacingKm: 0.5}}
	chk, err := s.CheckPlan(context.Background(), p, nil)
	if err != nil {
		t.Fatal(err)
	}
	byLine := map[int][]survey.Hazard{}
	for _, h := range chk.Hazards {
		if h.Kind == survey.HazardSeamount {
			byLine[h.Line] = append(byLine[h.Line], h)
		}
	}
	check := func(t *testing.T, h survey.Hazard, m demobasin.Seamount) {
		if d := demobasin.DistanceKm(h.Lon, h.Lat, m.Lon, m.Lat); d > 6 {
			t.Errorf("%s: worst sample %.1f km from the summit", m.Name, d)
		}
		if want := demobasin.SeamountsM(h.Lon, h.Lat); math.Abs(h.Value-want) > 0.05*m.HeightM {
			t.Errorf("%s: %.0f m above the prediction, the cone there is %.0f m", m.Name, h.Value, want)
		}
		if h.Limit != survey.DefaultSeamountM || h.LengthKm <= 0 || h.Reason == "" {
			t.Errorf("%s: %+v", m.Name, h)
		}
	}
	t.Run("along the chain", func(t *testing.T) {
		hz := byLine[0]
		if len(hz) != len(sm) {
			t.Fatalf("%d seamount hazards, want %d: %+v", len(hz), len(sm), hz)
		}
		for i, h := range hz {
			check(t, h, sm[i])
		}
	})
	t.Run("crossing line", func(t *testing.T) {
		hz := byLine[1]
		if len(hz) != 1 {
			t.Fatalf("%d seamount hazards, want 1 (Seamount C): %+v", len(hz), hz)
		}
		check(t, hz[0], sm[2])
	})
	t.Run("samples", func(t *testing.T) {
		l := chk.Lines[1].Samples
		for i := range l.Lon {
			if l.DepthSource[i] != survey.SourceObserved || !(l.ExpectedDepthM[i] > 1000) || !(l.UncertaintyM[i] >= 0) ||
				!(l.SoundSpeedMS[i] > 1450 && l.SoundSpeedMS[i] < 1560) || !(l.MaxPingRateHz[i] > 0) || math.IsNaN(l.SlopeDeg[i]) {
				t.Fatalf("sample %d: depth %g (%s) ± %g, c %g, ping %g Hz, slope %g", i, l.ExpectedDepthM[i], l.DepthSource[i],
					l.UncertaintyM[i], l.SoundSpeedMS[i], l.MaxPingRateHz[i], l.SlopeDeg[i])
			}
		}
		// The acoustics follow the expected depth (default 120° swath, transducer at the surface):
		// width 2·d·tan 60°, nadir echo after 2d/c̄, one ping per outer-beam echo.
		for i := range l.Lon {
			d := l.ExpectedDepthM[i]
			if math.Abs(l.SwathWidthM[i]-2*d*math.Sqrt(3)) > 1e-6*d || math.Abs(l.TwoWayTimeS[i]*l.SoundSpeedMS[i]/2-d) > 1e-6*d ||
				math.Abs(l.MaxPingRateHz[i]*l.TwoWayTimeOuterS[i]-1) > 1e-12 || math.Abs(l.TwoWayTimeOuterS[i]-2*l.TwoWayTimeS[i]) > 1e-9 {
				t.Fatalf("sample %d: depth %g, swath %g, c %g, two-way %g / %g s, ping %g Hz", i, d, l.SwathWidthM[i],
					l.SoundSpeedMS[i], l.TwoWayTimeS[i], l.TwoWayTimeOuterS[i], l.MaxPingRateHz[i])
			}
		}
		if chk.Caution != Caution || chk.Totals.Hazards != len(chk.Hazards) {
			t.Errorf("caution %q, totals %+v", chk.Caution, chk.Totals)
		}
	})
}

// Where the age uncertainty is larger the depth uncertainty is larger: on plan-globe (age 16 Ma,
// no depth grid, σt = 3 + 2 sin λ Ma) a predicted depth's uncertainty is |dD/dt|·σt. GDH1 below
// 20 Ma is d = 2600 + 365 √t (Stein & Stein 1992, Nature 359, 123–129), so dD/dt at 16 Ma is
// 365/(2·4) = 45.625 m/Myr and the depth 4060 m; the published coefficient is a rounded fit, so
// the tolerance is 1 %.
func TestCheckPlanUncertaintyFollowsAgeUncertainty(t *testing.T) {
	s := checkService(t, Limits{})
	p := survey.Plan{Name: "equator", Lines: []survey.Line{{Waypoints: []geo.Waypoint{wp(-60, 0), wp(60, 0)}}},
		Settings: survey.Settings{Dataset: planGlobeID, SpacingKm: 50}}
	chk, err := s.CheckPlan(context.Background(), p, nil)
	if err != nil {
		t.Fatal(err)
	}
	sm := chk.Lines[0].Samples
	for i := range sm.Lon {
		want := 45.625 * planGlobeSigma(sm.Lon[i])
		if sm.DepthSource[i] != survey.SourcePredicted || math.Abs(sm.ExpectedDepthM[i]-4060) > 0.01*4060 ||
			math.Abs(sm.UncertaintyM[i]-want) > 0.01*want {
			t.Fatalf("sample %d at %.2f°: %g m (%s) ± %g, want 4060 ± %g", i, sm.Lon[i], sm.ExpectedDepthM[i], sm.DepthSource[i], sm.UncertaintyM[i], want)
		}
	}
	at := func(lon float64) float64 {
		best := 0
		for i := range sm.Lon {
			if math.Abs(sm.Lon[i]-lon) < math.Abs(sm.Lon[best]-lon) {
				best = i
			}
		}
		return sm.UncertaintyM[best]
	}
	if !(at(45) > 2*at(-45)) {
		t.Errorf("uncertainty at 45° E %g m is not wider than at 45° W %g m as σt (4.4 vs 1.6 Ma)", at(45), at(-45))
	}
	if len(chk.Notes) == 0 || !strings.Contains(strings.Join(chk.Notes, " "), "no observed depth") {
		t.Errorf("notes %q", chk.Notes)
	}
}

// A line across the antimeridian on plan-globe is sampled continuously: the equator is a
// geodesic for |Δλ| ≤ (1−f)·180° (Karney 2013, from memory), so 170° E → 170° W is
// a·20°·π/180 = 2,226,389.816 m (a = 6378137 m, WGS84; worked by hand), tolerance 1 mm; every
// sample, on both sides of ±180°, has its age and prediction.
func TestCheckPlanAntimeridian(t *testing.T) {
	s := checkService(t, Limits{})
	p := survey.Plan{Name: "dateline", Lines: []survey.Line{{Waypoints: []geo.Waypoint{wp(170, 0), wp(-170, 0)}}},
		Settings: survey.Settings{Dataset: planGlobeID, SpacingKm: 10}}
	chk, err := s.CheckPlan(context.Background(), p, nil)
	if err != nil {
		t.Fatal(err)
	}
	l := chk.Lines[0]
	if math.Abs(l.LengthKm*1000-2226389.816) > 1e-3 {
		t.Errorf("length %.6f m", l.LengthKm*1000)
	}
	east, west := 0, 0
	for i, lon := range l.Samples.Lon {
		if lon > 0 {
			east++
		} else {
			west++
		}
		if l.Samples.AgeMa[i] != 16 || l.Samples.DepthSource[i] != survey.SourcePredicted {
			t.Fatalf("sample %d at %g°: age %g, source %s", i, lon, l.Samples.AgeMa[i], l.Samples.DepthSource[i])
		}
	}
	if east < 100 || west < 100 || len(chk.Hazards) != 0 {
		t.Errorf("%d samples east, %d west of 180°, hazards %+v", east, west, chk.Hazards)
	}
}

// Coverage gaps between two parallel lines along meridians 0.25° apart at 34° S in the demo
// basin, with a fixed 10 km swath: the lines are about 23 km apart, so the gap is the geodesic
// separation (gdal.WGS84, written out here) less 10 km, tolerance 5 m (the separation is taken
// in a local plane). Lines 0.08° apart (about 7.4 km) leave no gap.
func TestCheckPlanCoverageGaps(t *testing.T) {
	s := checkService(t, Limits{})
	plan := func(dLon float64) survey.Plan {
		return survey.Plan{Name: "pair", Lines: []survey.Line{
			{Waypoints: []geo.Waypoint{wp(-135, -35), wp(-135, -33)}},
			{Waypoints: []geo.Waypoint{wp(-135-dLon, -33), wp(-135-dLon, -35)}},
		}, Settings: survey.Settings{Dataset: demobasin.DatasetID, SpacingKm: 1, SwathWidthM: 10000, OverlapPct: 10}}
	}
	chk, err := s.CheckPlan(context.Background(), plan(0.25), nil)
	if err != nil {
		t.Fatal(err)
	}
	if len(chk.Gaps) != 1 {
		t.Fatalf("gaps %+v, want one along the whole line", chk.Gaps)
	}
	g := chk.Gaps[0]
	sep, _, _ := gdal.WGS84().Inverse(g.Lat, g.Lon, g.Lat, -135.25)
	if math.Abs(g.GapM-(sep-10000)) > 5 || g.LengthKm < 200 {
		t.Errorf("gap %+v; separation %.1f m", g, sep)
	}
	l := chk.Lines[0]
	if l.MinSwathM != 10000 || l.LineSpacingM != 9000 {
		t.Errorf("swath %g m, spacing %g m; want 10000 and 10000·0.9", l.MinSwathM, l.LineSpacingM)
	}
	if chk, err = s.CheckPlan(context.Background(), plan(0.08), nil); err != nil || len(chk.Gaps) != 0 {
		t.Errorf("close lines: gaps %+v, %v", chk.Gaps, err)
	}
}

func TestCheckPlanProgressAndTotals(t *testing.T) {
	s := checkService(t, Limits{})
	cold := 1.0 // below the 2 °C of Mackenzie's fit: noted
	p := survey.Plan{Name: "three", Lines: []survey.Line{
		{Waypoints: []geo.Waypoint{wp(-140, -30), wp(-139, -30)}},
		{Waypoints: []geo.Waypoint{wp(-139, -30.1), wp(-140, -30.1)}},
		{Waypoints: []geo.Waypoint{wp(-140, -30.2), wp(-139, -30.2), wp(-139, -30.5)}},
	}, Settings: survey.Settings{Dataset: demobasin.DatasetID, SpeedTransitKn: 12, WaterTemperatureC: &cold}}
	var got []float64
	chk, err := s.CheckPlan(context.Background(), p, func(f float64) { got = append(got, f) })
	if err != nil {
		t.Fatal(err)
	}
	if len(got) != 3 || got[2] != 1 {
		t.Errorf("progress %v", got)
	}
	var km, h, area float64
	for _, l := range chk.Lines {
		km += l.LengthKm
		area += l.AreaKm2
	}
	for _, tr := range chk.Transits {
		h += tr.TimeH
	}
	tt := chk.Totals
	if math.Abs(tt.LengthKm-km) > 1e-9 || math.Abs(tt.TimeInTransitH-h) > 1e-12 || math.Abs(tt.AreaKm2-area) > 1e-9 ||
		math.Abs(tt.TimeTotalH-(tt.TimeOnLineH+tt.TimeInTransitH)) > 1e-12 || len(chk.Lines[2].Legs) != 2 {
		t.Errorf("totals %+v", tt)
	}
	if !strings.Contains(strings.Join(chk.Notes, " "), "1 °C") {
		t.Errorf("notes %q do not say the temperature is outside Mackenzie's range", chk.Notes)
	}
	// Defaults filled in: 8 kn on line (survey.DefaultSpeedOnLineKn).
	if chk.Plan.Settings.SpeedOnLineKn != survey.DefaultSpeedOnLineKn || math.Abs(tt.TimeOnLineH-tt.LengthNmi/8) > 1e-9 {
		t.Errorf("settings %+v", chk.Plan.Settings)
	}
}

// Bad plans are faults naming the field.
func TestCheckPlanFaults(t *testing.T) {
	s := checkService(t, Limits{MaxPlanLines: 2, MaxPlanSamples: 1000})
	line := survey.Line{Waypoints: []geo.Waypoint{wp(-140, -30), wp(-139, -30)}}
	base := func() survey.Plan {
		return survey.Plan{Name: "f", Lines: []survey.Line{line}, Settings: survey.Settings{Dataset: demobasin.DatasetID}}
	}
	cases := []struct {
		name  string
		edit  func(*survey.Plan)
		kind  fault.Kind
		field string
		limit string
	}{
		{"no lines", func(p *survey.Plan) { p.Lines = nil }, fault.InvalidParameter, "lines", ""},
		{"bad latitude", func(p *survey.Plan) {
			p.Lines = []survey.Line{{Waypoints: []geo.Waypoint{wp(0, 95), wp(1, 0)}}}
		}, fault.InvalidParameter, "lines[0].waypoints", ""},
		{"unknown dataset", func(p *survey.Plan) { p.Settings.Dataset = "nowhere" }, fault.NotFound, "settings.dataset", ""},
		{"unknown model", func(p *survey.Plan) { p.Settings.Model = "flat-earth" }, fault.UnknownModel, "settings.model", ""},
		{"unknown sediment", func(p *survey.Plan) { p.Settings.Sediment = "gravel" }, fault.UnknownSediment, "settings.sediment", ""},
		{"overlap", func(p *survey.Plan) { p.Settings.OverlapPct = 120 }, fault.InvalidParameter, "settings.overlap_pct", ""},
		{"too many lines", func(p *survey.Plan) { p.Lines = []survey.Line{line, line, line} }, fault.LimitExceeded, "lines", "max_plan_lines"},
		// 2 × ~96 km at 0.1 km is ~1930 samples, over the 1000 of this service.
		{"too many samples", func(p *survey.Plan) { p.Lines = []survey.Line{line, line}; p.Settings.SpacingKm = 0.1 },
			fault.LimitExceeded, "settings.sample_spacing_km", "max_plan_samples"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			p := base()
			c.edit(&p)
			_, err := s.CheckPlan(context.Background(), p, nil)
			f, ok := fault.As(err)
			if !ok {
				t.Fatalf("want a fault, got %v", err)
			}
			if f.Kind != c.kind || f.Field != c.field || c.limit != "" && (f.Limit == nil || f.Limit.Name != c.limit) {
				t.Errorf("fault %+v, want %s on %s (%s)", f, c.kind, c.field, c.limit)
			}
		})
	}
	ctx, cancel := context.WithCancel(context.Background())
	cancel()
	if _, err := s.CheckPlan(ctx, base(), nil); !errors.Is(err, context.Canceled) {
		t.Errorf("cancelled: %v", err)
	}
}

func TestResidualScatter(t *testing.T) {
	nan := math.NaN()
	dist := []float64{0, 2, 4, 6, 8, 10, 30, 32}
	res := []float64{1, 3, 5, nan, 7, 9, 100, 200}
	got := residualScatter(dist, res, 5)
	// At 0 km the window ±5 km holds 1, 3, 5: sample std = 2 (worked by hand).
	// At 6 km it holds 3, 5, 7, 9: mean 6, squares 9+1+1+9 = 20, /3 → √(20/3) = 2.5820.
	// At 30 km it holds 100, 200 only: fewer than 3, so the whole line's std.
	var all []float64
	for _, r := range res {
		if !math.IsNaN(r) {
			all = append(all, r)
		}
	}
	var m, ss float64
	for _, r := range all {
		m += r
	}
	m /= float64(len(all))
	for _, r := range all {
		ss += (r - m) * (r - m)
	}
	lineStd := math.Sqrt(ss / float64(len(all)-1))
	for _, c := range []struct {
		i    int
		want float64
	}{{0, 2}, {3, math.Sqrt(20.0 / 3)}, {6, lineStd}} {
		if math.Abs(got[c.i]-c.want) > 1e-9 {
			t.Errorf("scatter at %g km: %g, want %g", dist[c.i], got[c.i], c.want)
		}
	}
}

// The slope of a plane is its angle: z = 4000 + k·x + k·y (x, y metres east and north, k = 0.1)
// rises at atan(k·√2) = 8.0495° (worked by hand). Built on a 0.1° node grid around the equator
// with metres per degree at the equator, so the plane is exact on the equator row; off it the
// degree of longitude shortens by cos φ (under 2e-6 at 0.1°), so the tolerance is 1e-3°.
// A global grid with a north–south plane gives atan(k) = 5.7106° across the antimeridian.
func TestSlopeSampler(t *testing.T) {
	const k = 0.1
	mLat, mLon := survey.MetresPerDegree(0)
	plane := geo.NewGrid(21, 21, -1, 1, 0.1, 0.1, geo.Node)
	for r := range plane.NY {
		for c := range plane.NX {
			plane.Set(c, r, float32(4000+k*plane.Lon(c)*mLon+k*plane.Lat(r)*mLat))
		}
	}
	global := geo.NewGrid(360, 21, -180, 1, 1, 0.1, geo.Node)
	for r := range global.NY {
		for c := range global.NX {
			global.Set(c, r, float32(4000+k*global.Lat(r)*mLat))
		}
	}
	holed := plane.Clone()
	for _, cr := range [][2]int{{10, 10}, {11, 10}, {10, 11}, {11, 11}} {
		holed.Set(cr[0], cr[1], float32(math.NaN()))
	}
	want2 := math.Atan(k*math.Sqrt2) * 180 / math.Pi
	want1 := math.Atan(k) * 180 / math.Pi
	cases := []struct {
		name     string
		g        *geo.Grid
		lon, lat float64
		want     float64 // NaN: no slope
	}{
		{"plane at a node", plane, 0, 0, want2},
		{"plane inside a cell", plane, 0.537, -0.21, want2},
		{"plane at the edge: no neighbours", plane, -1, 0, math.NaN()},
		{"off the grid", plane, 3, 0, math.NaN()},
		{"no data around", holed, 0.05, 0.05, math.NaN()},
		{"global, across the antimeridian", global, 179.5, 0, want1},
		{"global, west of it", global, -179.6, 0.03, want1},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := newSlopeSampler(c.g)
			got := s.at(c.lon, c.lat)
			if math.IsNaN(c.want) != math.IsNaN(got) || math.Abs(got-c.want) > 1e-3 {
				t.Errorf("slope %g°, want %g°", got, c.want)
			}
		})
	}
}
