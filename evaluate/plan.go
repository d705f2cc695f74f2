package evaluate

import (
	"context"
	"fmt"
	"math"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/survey"
	"ridgeflank/thermal"
)

// ScatterHalfWindowKm is the half-width of the along-track window over which the local
// residual-depth scatter of a plan check is taken: samples within ±5 km of each sample.
const ScatterHalfWindowKm = 5.0

// minScatterSamples is the fewest residual values a standard deviation is taken from.
const minScatterSamples = 3

// CheckPlan checks a survey plan against its dataset (the one every way in calls). The plan
// takes its defaults (survey.Plan.WithDefaults) and is validated (survey.Plan.Validate with
// Limits.MaxPlanLines and Limits.MaxVertices). Each line is sampled as Service.Track samples a
// track: along WGS84 geodesics (geo.Densify with gdal.WGS84()) every Settings.SpacingKm, or
// the age grid's row spacing at 111.32 km per degree when that is 0. More samples than
// Limits.MaxTrackSamples in one line is fault.Over("max_track_samples"), more than
// Limits.MaxPlanSamples over the whole plan fault.Over("max_plan_samples").
//
// At every sample, with the dataset's grids sampled bilinearly in windows as Service.Points
// reads them:
//   - observed depth (the dataset's bathymetry, positive down) and age;
//   - predicted depth: the model's depth for the age (thermal), loaded with the sediment and
//     crust the dataset has there, i.e. the seafloor depth at which the residual depth of the
//     residual machinery (geo, thermal.ResidualDepthM) would be zero: predicted − sediment
//     correction − crust correction. Where the sediment (or crust) grid has no value, no
//     correction is made (the bare prediction, which is deeper);
//   - residual depth as geo.PointEvaluator defines it (predicted − corrected observed);
//   - expected depth: observed where present, else predicted, with its source;
//   - uncertainty (one standard deviation, m): for a predicted depth, the age uncertainty
//     σt (the dataset's age-uncertainty grid) carried through the model, |dD/dt|·σt with the
//     model's SubsidenceRateMPerMyr — or, where σt exceeds half the age or the derivative is not
//     finite (the √t models at the ridge axis), half the depth range over [t−σt, t+σt] (t−σt
//     held at 0) — combined in quadrature with the local residual-depth scatter (the sample
//     standard deviation of the residuals within ±ScatterHalfWindowKm along the line, at least 3
//     values; else that of the whole line). For an observed depth, the scatter alone. NaN where
//     neither is known;
//   - slope: the gradient of the depth grid by central differences at its nodes, in metres
//     with WGS84 metres per degree at the node's latitude (survey.MetresPerDegree), interpolated
//     bilinearly to the sample (slopeSampler);
//   - swath width, mean sound speed (Mackenzie 1981, harmonic mean from the transducer to the
//     seafloor), two-way travel times at nadir and the outer beam, maximum ping rate and
//     along-track sounding spacing (package survey).
//
// Legs, lines, transits (geodesic end → start at the transit speed), hazards
// (survey.LineHazards), coverage gaps between consecutive lines (planGaps) and totals follow.
// progress, if not nil, is called with the fraction of lines done after each line.
func (s *Service) CheckPlan(ctx context.Context, p survey.Plan, progress func(frac float64)) (*survey.Check, error) {
	p = p.WithDefaults()
	if err := p.Validate(s.limits.MaxPlanLines, s.limits.MaxVertices); err != nil {
		return nil, err
	}
	st := p.Settings
	q, err := s.load(ctx, st.Dataset, Options{Model: st.Model, Sediment: st.Sediment})
	if err != nil {
		return nil, planFault(err)
	}
	spacingKm := sampleSpacingKm(q.Dataset, st.SpacingKm)
	g := gdal.WGS84()
	wps := make([][]geo.Waypoint, len(p.Lines))
	legs := make([][]geo.Leg, len(p.Lines))
	total := 0
	for i, l := range p.Lines {
		if wps[i], err = geo.ValidateWaypoints(l.Waypoints, s.limits.MaxVertices); err != nil {
			return nil, lineFault(err, i)
		}
		if legs[i], err = geo.Legs(g, wps[i]); err != nil {
			return nil, lineFault(err, i)
		}
		n := 1
		for _, lg := range legs[i] {
			n += int(min(math.Ceil(lg.LengthKm*1000/(spacingKm*1000)), math.MaxInt32)) // as geo.Densify counts
		}
		if n > s.limits.MaxTrackSamples {
			return nil, fault.Over("max_track_samples", int64(s.limits.MaxTrackSamples), int64(n), "settings.sample_spacing_km",
				"line %d would need %d samples at %g km spacing; the limit is %d a line", i, n, spacingKm, s.limits.MaxTrackSamples)
		}
		total += n
	}
	if total > s.limits.MaxPlanSamples {
		return nil, fault.Over("max_plan_samples", int64(s.limits.MaxPlanSamples), int64(total), "settings.sample_spacing_km",
			"the plan would need %d samples at %g km spacing; the limit is %d", total, spacingKm, s.limits.MaxPlanSamples)
	}

	pe, err := newPlanSampler(q, st)
	if err != nil {
		return nil, err
	}
	chk := &survey.Check{Plan: p, Caution: Caution, Lines: make([]survey.LineResult, len(p.Lines)),
		Model: q.Model.Params().ID, Label: s.Provenance(q).Label}
	for i := range p.Lines {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		ts, err := geo.Densify(g, wps[i], spacingKm*1000, s.limits.MaxTrackSamples)
		if err != nil {
			return nil, lineFault(err, i)
		}
		lr, err := s.checkLine(ctx, pe, p.Lines[i], wps[i], legs[i], ts)
		if err != nil {
			return nil, err
		}
		chk.Lines[i] = *lr
		chk.Hazards = append(chk.Hazards, survey.LineHazards(i, p.Lines[i].Name, &lr.Samples, st)...)
		if progress != nil {
			progress(float64(i+1) / float64(len(p.Lines)))
		}
	}
	for i := 0; i+1 < len(p.Lines); i++ {
		a, b := wps[i][len(wps[i])-1], wps[i+1][0]
		dm, _, _ := g.Inverse(a.Lat, a.Lon, b.Lat, b.Lon)
		km := dm / 1000
		nmi := survey.KmToNmi(km)
		chk.Transits = append(chk.Transits, survey.Transit{FromLine: i, ToLine: i + 1, LengthKm: km, LengthNmi: nmi,
			TimeH: survey.HoursAt(nmi, st.SpeedTransitKn)})
		chk.Gaps = append(chk.Gaps, planGaps(i, &chk.Lines[i].Samples, i+1, &chk.Lines[i+1].Samples)...)
	}
	chk.Totals = planTotals(chk)
	chk.Notes = append(pe.col.Notes(chk.Totals.MaxDepthM), pe.notes...)
	return chk, nil
}

// planFault names the plan's fields in the faults of resolving its dataset and options.
func planFault(err error) error {
	f, ok := fault.As(err)
	if !ok {
		return err
	}
	g := *f
	switch {
	case f.Kind == fault.NotFound || f.Kind == fault.NoData && f.Field == "":
		g.Field = "settings.dataset"
	case f.Field == "model" || f.Field == "sediment":
		g.Field = "settings." + f.Field
	default:
		return err
	}
	return &g
}

// lineFault names line i's waypoints in a track fault.
func lineFault(err error, i int) error {
	f, ok := fault.As(trackFault(err))
	if !ok {
		return err
	}
	g := *f
	if g.Kind != fault.LimitExceeded {
		g.Field = fmt.Sprintf("lines[%d].waypoints", i)
	}
	return &g
}

// planSampler holds what every sample of one check needs: the query, the model's table, the
// sediment corrector and densities, the sound column and the settings.
type planSampler struct {
	q           *Query
	st          survey.Settings
	tbl         *thermal.Table
	sed         *thermal.SedimentCorrector // nil without a sediment grid
	hasCrust    bool
	crustKgM3   float64
	mantle, wat float64
	col         *survey.SoundColumn
	swath       survey.Swath
	notes       []string
}

func newPlanSampler(q *Query, st survey.Settings) (*planSampler, error) {
	pr := q.Model.Params()
	ps := &planSampler{q: q, st: st, tbl: thermal.TableFor(q.Model), col: survey.NewSoundColumn(st),
		swath:  survey.NewSwath(st.TransducerM, st.SwathAngleDeg, st.SwathWidthM),
		mantle: pr.MantleDensityKgM3, wat: pr.WaterDensityKgM3, crustKgM3: thermal.DefaultCrustDensityKgM3,
		hasCrust: q.Dataset.Files.Crust != nil}
	if q.Dataset.Files.Sediment != nil {
		sc, err := thermal.NewSedimentCorrector(q.Sediment, ps.mantle, ps.wat)
		if err != nil {
			return nil, fault.New(fault.InvalidModel, "settings.sediment", "sediment correction: %v", err)
		}
		ps.sed = sc
	}
	if q.Dataset.Files.AgeUncertainty == nil {
		ps.notes = append(ps.notes, "the dataset has no age-uncertainty grid: the uncertainty of predicted depths is the local residual-depth scatter alone")
	}
	if q.Dataset.Files.Depth == nil {
		ps.notes = append(ps.notes, "the dataset has no observed depth grid: expected depths are predictions, with no slope or seamount test and no residual scatter")
	}
	return ps, nil
}

// allocSamples makes the columns of n samples.
func allocSamples(n int) survey.Samples {
	col := func() []float64 { return make([]float64, n) }
	return survey.Samples{Lon: col(), Lat: col(), Leg: make([]int, n), DistanceKm: col(), DistanceNmi: col(), TimeH: col(),
		ExpectedDepthM: col(), DepthSource: make([]string, n), UncertaintyM: col(), ObservedDepthM: col(),
		PredictedDepthM: col(), ResidualDepthM: col(), AgeMa: col(), SlopeDeg: col(), SwathWidthM: col(),
		SoundSpeedMS: col(), TwoWayTimeS: col(), TwoWayTimeOuterS: col(), MaxPingRateHz: col(), SoundingSpacingM: col()}
}

// checkLine samples one line and sums its legs.
func (s *Service) checkLine(ctx context.Context, ps *planSampler, line survey.Line, wps []geo.Waypoint, legs []geo.Leg, ts []geo.TrackSample) (*survey.LineResult, error) {
	st := ps.st
	n := len(ts)
	sm := allocSamples(n)
	for i, t := range ts {
		sm.Lon[i], sm.Lat[i], sm.Leg[i], sm.DistanceKm[i] = t.Lon, t.Lat, t.Leg, t.DistanceKm
		sm.DistanceNmi[i] = survey.KmToNmi(t.DistanceKm)
		sm.TimeH[i] = survey.HoursAt(sm.DistanceNmi[i], st.SpeedOnLineKn)
	}
	ageUnc := make([]float64, n)
	if err := s.samplePlanGrids(ctx, ps, &sm, ageUnc); err != nil {
		return nil, err
	}
	scatter := residualScatter(sm.DistanceKm, sm.ResidualDepthM, ScatterHalfWindowKm)
	for i := range n {
		obs, pred := sm.ObservedDepthM[i], sm.PredictedDepthM[i]
		var exp float64
		switch {
		case !math.IsNaN(obs):
			exp, sm.DepthSource[i] = obs, survey.SourceObserved
			sm.UncertaintyM[i] = scatter[i]
		case !math.IsNaN(pred):
			exp, sm.DepthSource[i] = pred, survey.SourcePredicted
			sm.UncertaintyM[i] = quadrature(ps.ageDepthSigma(sm.AgeMa[i], ageUnc[i]), scatter[i])
		default:
			exp, sm.DepthSource[i] = math.NaN(), survey.SourceNone
			sm.UncertaintyM[i] = math.NaN()
		}
		sm.ExpectedDepthM[i] = exp
		ps.acoustics(&sm, i)
	}

	lr := &survey.LineResult{Name: line.Name, Samples: sm, Legs: make([]survey.Leg, len(legs))}
	last := legs[len(legs)-1]
	lr.LengthKm = last.StartDistanceKm + last.LengthKm
	lr.LengthNmi = survey.KmToNmi(lr.LengthKm)
	lr.TimeOnLineH = survey.HoursAt(lr.LengthNmi, st.SpeedOnLineKn)
	for k, lg := range legs {
		a, b := wps[lg.From], wps[lg.To]
		nmi := survey.KmToNmi(lg.LengthKm)
		lr.Legs[k] = survey.Leg{From: lg.From, To: lg.To, FromName: a.Name, ToName: b.Name, FromLon: a.Lon, FromLat: a.Lat,
			ToLon: b.Lon, ToLat: b.Lat, LengthKm: lg.LengthKm, LengthNmi: nmi, AzimuthDeg: lg.InitialAzimuthDeg,
			TimeH: survey.HoursAt(nmi, st.SpeedOnLineKn), MinDepthM: math.NaN(), MeanDepthM: math.NaN(), MaxDepthM: math.NaN()}
	}
	var legStats = make([]depthStats, len(legs))
	var all depthStats
	shallow := -1
	for i := range n {
		d := sm.ExpectedDepthM[i]
		legStats[sm.Leg[i]].add(d)
		all.add(d)
		if !math.IsNaN(d) && (shallow < 0 || d < sm.ExpectedDepthM[shallow]) {
			shallow = i
		}
		if i > 0 {
			w := (sm.SwathWidthM[i] + sm.SwathWidthM[i-1]) / 2
			if !math.IsNaN(w) {
				lr.AreaKm2 += w / 1000 * (sm.DistanceKm[i] - sm.DistanceKm[i-1])
			}
		}
	}
	for k := range lr.Legs {
		lr.Legs[k].MinDepthM, lr.Legs[k].MeanDepthM, lr.Legs[k].MaxDepthM = legStats[k].result()
	}
	lr.MinDepthM, lr.MeanDepthM, lr.MaxDepthM = all.result()
	lr.MinSwathM, lr.LineSpacingM = math.NaN(), math.NaN()
	if shallow >= 0 {
		lr.MinSwathM = sm.SwathWidthM[shallow]
		lr.LineSpacingM = survey.LineSpacingM(lr.MinSwathM, st.OverlapPct)
	}
	return lr, nil
}

// acoustics fills sample i's swath and sound columns from its expected depth.
func (ps *planSampler) acoustics(sm *survey.Samples, i int) {
	st := ps.st
	d := sm.ExpectedDepthM[i]
	sm.SwathWidthM[i] = ps.swath.WidthM(d)
	h := d - st.TransducerM
	if !(h > 0) {
		sm.SoundSpeedMS[i], sm.TwoWayTimeS[i], sm.TwoWayTimeOuterS[i] = math.NaN(), math.NaN(), math.NaN()
		sm.MaxPingRateHz[i], sm.SoundingSpacingM[i] = math.NaN(), math.NaN()
		return
	}
	c := ps.col.MeanSpeedMS(st.TransducerM, d)
	sm.SoundSpeedMS[i] = c
	sm.TwoWayTimeS[i] = survey.TwoWayTimeS(h, c)
	sm.TwoWayTimeOuterS[i] = survey.TwoWayTimeS(ps.swath.SlantRangeM(d), c)
	sm.MaxPingRateHz[i] = survey.MaxPingRateHz(sm.TwoWayTimeOuterS[i])
	sm.SoundingSpacingM[i] = survey.SoundingSpacingM(st.SpeedOnLineKn, sm.MaxPingRateHz[i])
}

// ageDepthSigma is the standard deviation (m) of the predicted depth at age t (Ma) from an age
// standard deviation sigma (Ma), as CheckPlan documents; NaN when either is unknown.
func (ps *planSampler) ageDepthSigma(t, sigma float64) float64 {
	if math.IsNaN(t) || !(sigma >= 0) {
		return math.NaN()
	}
	rate := ps.tbl.SubsidenceRateMPerMyr(t)
	if sigma <= t/2 && !math.IsNaN(rate) && !math.IsInf(rate, 0) {
		return math.Abs(rate) * sigma
	}
	return math.Abs(ps.tbl.DepthM(t+sigma)-ps.tbl.DepthM(math.Max(0, t-sigma))) / 2
}

// quadrature is √(a² + b²) over the terms that are known (not NaN); NaN when neither is.
func quadrature(a, b float64) float64 {
	switch {
	case math.IsNaN(a):
		return b
	case math.IsNaN(b):
		return a
	}
	return math.Hypot(a, b)
}

// samplePlanGrids fills the age, observed, predicted and residual depth and slope columns of
// sm, and ageUnc (Ma, NaN where unknown), reading the dataset's grids in windows over runs of
// neighbouring samples as Service.points does.
func (s *Service) samplePlanGrids(ctx context.Context, ps *planSampler, sm *survey.Samples, ageUnc []float64) error {
	q := ps.q
	d := q.Dataset
	read := roleAge | roleDepth | roleSed | roleCrust | roleAgeUnc
	spacing, pad := s.pointSpacing(d)
	if f := d.Files.AgeUncertainty; f != nil {
		h := f.Header()
		spacing = math.Max(spacing, math.Max(h.DX, h.DY))
		pad = 2 * spacing
	}
	nan := math.NaN()
	for _, run := range pointRuns(sm.Lon, sm.Lat, 512*spacing, 4096) {
		if err := ctx.Err(); err != nil {
			return err
		}
		b := pointBound(run.lons, sm.Lat[run.from:run.to], pad)
		v, err := s.window(ctx, d, b, 0, read)
		if err != nil && !isEmptyWindow(err) {
			return err
		}
		var pe *geo.PointEvaluator
		var slope *slopeSampler
		if v != nil && v.Depth != nil {
			slope = newSlopeSampler(v.Depth)
		}
		if v != nil {
			in := geo.Inputs{Age: v.Age, Model: q.Model, Compaction: q.Sediment}
			want := geo.OutPredictedDepth
			if v.Depth != nil {
				in.Depth, in.DepthSense, in.Sediment, in.Crust = v.Depth, d.DepthSense, v.Sediment, v.Crust
				want |= geo.OutResidualDepth
			}
			if pe, err = geo.NewPointEvaluator(in, want); err != nil {
				return err
			}
		}
		for j := run.from; j < run.to; j++ {
			lon, lat := sm.Lon[j], sm.Lat[j]
			sm.AgeMa[j], sm.ObservedDepthM[j], sm.PredictedDepthM[j], sm.ResidualDepthM[j], sm.SlopeDeg[j] = nan, nan, nan, nan, nan
			ageUnc[j] = nan
			if v == nil {
				continue
			}
			sv := pe.At(lon, lat)
			sm.AgeMa[j], sm.ObservedDepthM[j], sm.ResidualDepthM[j] = sv.AgeMa, sv.ObservedDepthM, sv.ResidualDepthM
			sed, crust := sv.SedimentM, sv.CrustKm
			if v.Depth == nil {
				if v.Sediment != nil {
					sed = float64(v.Sediment.SampleBilinear(lon, lat))
				}
				if v.Crust != nil {
					crust = float64(v.Crust.SampleBilinear(lon, lat))
				}
			}
			sm.PredictedDepthM[j] = ps.loaded(sv.PredictedDepthM, sed, crust)
			if v.AgeUncertainty != nil {
				ageUnc[j] = float64(v.AgeUncertainty.SampleBilinear(lon, lat))
			}
			if slope != nil {
				sm.SlopeDeg[j] = slope.at(lon, lat)
			}
		}
	}
	return nil
}

// loaded is the predicted seafloor depth (m) under sedM metres of sediment on crust crustKm
// thick: pred − sediment correction − crust correction (no correction where the thickness is
// unknown or the dataset has no such grid).
func (ps *planSampler) loaded(pred, sedM, crustKm float64) float64 {
	if ps.sed != nil && sedM >= 0 {
		pred -= ps.sed.CorrectionM(sedM)
	}
	if ps.hasCrust && crustKm >= 0 {
		pred -= thermal.CrustCorrectionM(crustKm, ps.crustKgM3, ps.mantle, ps.wat)
	}
	return pred
}

// slopeSampler gives the seafloor slope (degrees) of a depth grid g at any position: the
// gradient at g's nodes by central differences one node either side, in metres with WGS84
// metres per degree at the node's latitude (survey.MetresPerDegree), its magnitude as an angle,
// interpolated bilinearly to the position (no-data nodes dropped and the weights renormalised,
// as Grid.SampleBilinear does). A node without both neighbours in a direction, or next to a
// no-data node, has no slope. The four node slopes of the last cell are kept, since consecutive
// samples of a line mostly fall in the same cell. Not safe for concurrent use.
type slopeSampler struct {
	g                  *geo.Grid
	period             int // columns in 360° when g is global in longitude, else 0
	c0, r0             int // the kept cell's first column and row; −1 when none
	s00, s10, s01, s11 float64
}

func newSlopeSampler(g *geo.Grid) *slopeSampler {
	s := &slopeSampler{g: g, c0: -1, r0: -1}
	if g.IsGlobalLon() {
		s.period = int(math.Round(360 / g.DX))
	}
	return s
}

// at is the slope (degrees) at (lon, lat); NaN off the grid or without data.
func (s *slopeSampler) at(lon, lat float64) float64 {
	g := s.g
	fx := (lon - g.West) / g.DX
	if s.period > 0 {
		fx = math.Mod(fx, float64(s.period))
		if fx < 0 {
			fx += float64(s.period)
		}
	} else if fx < 0 || fx > float64(g.NX-1) {
		fx = math.Mod(lon-g.West, 360)
		if fx < 0 {
			fx += 360
		}
		fx /= g.DX
	}
	fy := (g.North - lat) / g.DY
	if !(fy >= 0 && fy <= float64(g.NY-1)) || s.period == 0 && !(fx >= 0 && fx <= float64(g.NX-1)) {
		return math.NaN()
	}
	c, r := int(fx), int(fy)
	c = min(c, g.NX-2)
	r = min(r, g.NY-2)
	if s.period == 0 {
		c = max(c, 0)
	}
	if c != s.c0 || r != s.r0 {
		s.c0, s.r0 = c, r
		s.s00, s.s10, s.s01, s.s11 = s.node(c, r), s.node(c+1, r), s.node(c, r+1), s.node(c+1, r+1)
	}
	tx, ty := fx-float64(c), fy-float64(r)
	var sum, w float64
	for _, k := range [4]struct{ v, w float64 }{{s.s00, (1 - tx) * (1 - ty)}, {s.s10, tx * (1 - ty)}, {s.s01, (1 - tx) * ty}, {s.s11, tx * ty}} {
		if !math.IsNaN(k.v) && k.w > 0 {
			sum += k.v * k.w
			w += k.w
		}
	}
	if w == 0 {
		return math.NaN()
	}
	return sum / w
}

// node is the slope (degrees) at node (c, r) of the grid.
func (s *slopeSampler) node(c, r int) float64 {
	g := s.g
	col := func(c int) int {
		if s.period > 0 {
			return ((c % s.period) + s.period) % s.period
		}
		return c
	}
	if r < 1 || r > g.NY-2 || s.period == 0 && (c < 1 || c > g.NX-2) {
		return math.NaN()
	}
	at := func(c, r int) float64 { return float64(g.Data[r*g.NX+col(c)]) }
	mLat, mLon := survey.MetresPerDegree(g.Lat(r))
	gx := (at(c+1, r) - at(c-1, r)) / (2 * g.DX * mLon)
	gy := (at(c, r-1) - at(c, r+1)) / (2 * g.DY * mLat)
	return math.Atan(math.Hypot(gx, gy)) * 180 / math.Pi
}

// residualScatter is, at each sample, the sample standard deviation of the residual depths
// (NaN skipped) of the samples within ±halfKm along the line (dist increasing), when there are
// at least minScatterSamples of them; otherwise that of the whole line, or NaN when the line has
// fewer. Running sums over a moving window (about the line's mean, against cancellation).
func residualScatter(dist, res []float64, halfKm float64) []float64 {
	n := len(res)
	out := make([]float64, n)
	var m float64
	var cnt int
	for _, r := range res {
		if !math.IsNaN(r) {
			m += r
			cnt++
		}
	}
	if cnt < minScatterSamples {
		for i := range out {
			out[i] = math.NaN()
		}
		return out
	}
	m /= float64(cnt)
	var ls, lss float64
	for _, r := range res {
		if !math.IsNaN(r) {
			ls += r - m
			lss += (r - m) * (r - m)
		}
	}
	lineStd := math.Sqrt(math.Max(0, (lss-ls*ls/float64(cnt))/float64(cnt-1)))
	var s, ss float64
	k := 0
	lo, hi := 0, 0 // window [lo, hi)
	for i := range n {
		for hi < n && dist[hi] <= dist[i]+halfKm {
			if r := res[hi]; !math.IsNaN(r) {
				s += r - m
				ss += (r - m) * (r - m)
				k++
			}
			hi++
		}
		for dist[lo] < dist[i]-halfKm {
			if r := res[lo]; !math.IsNaN(r) {
				s -= r - m
				ss -= (r - m) * (r - m)
				k--
			}
			lo++
		}
		if k >= minScatterSamples {
			out[i] = math.Sqrt(math.Max(0, (ss-s*s/float64(k))/float64(k-1)))
		} else {
			out[i] = lineStd
		}
	}
	return out
}

// depthStats accumulates the minimum, mean and maximum of depths (NaN skipped).
type depthStats struct {
	min, max, sum float64
	n             int
}

func (d *depthStats) add(v float64) {
	if math.IsNaN(v) {
		return
	}
	if d.n == 0 || v < d.min {
		d.min = v
	}
	if d.n == 0 || v > d.max {
		d.max = v
	}
	d.sum += v
	d.n++
}

func (d *depthStats) result() (lo, mean, hi float64) {
	if d.n == 0 {
		return math.NaN(), math.NaN(), math.NaN()
	}
	return d.min, d.sum / float64(d.n), d.max
}

// planTotals sums a check's lines and transits. Depths are over every sample of every line;
// the area is the swept area of the swaths (overlaps between lines are counted twice).
func planTotals(c *survey.Check) survey.Totals {
	var t survey.Totals
	var all depthStats
	for _, l := range c.Lines {
		t.LengthKm += l.LengthKm
		t.TimeOnLineH += l.TimeOnLineH
		t.AreaKm2 += l.AreaKm2
		for _, d := range l.Samples.ExpectedDepthM {
			all.add(d)
		}
	}
	for _, tr := range c.Transits {
		t.TransitKm += tr.LengthKm
		t.TimeInTransitH += tr.TimeH
	}
	t.LengthNmi = survey.KmToNmi(t.LengthKm)
	t.TransitNmi = survey.KmToNmi(t.TransitKm)
	t.TimeTotalH = t.TimeOnLineH + t.TimeInTransitH
	t.MinDepthM, t.MeanDepthM, t.MaxDepthM = all.result()
	t.Hazards = len(c.Hazards)
	return t
}

// planGaps are the coverage gaps between line a and the next line b. At each sample of a, the
// separation to b is the distance to the nearest of b's sampled segments, in a local plane
// with WGS84 metres per degree at the sample (survey.MetresPerDegree; b's samples are at most
// the sample spacing apart, so the plane is exact enough). The lines count as neighbours there
// only where the nearest point of b lies inside b (not off its ends) and the separation is under
// twice the sum of the two swath widths (a gap of up to three mean swath widths is reported;
// farther apart, the lines are separate blocks, not neighbours: our rule, no source). A gap is survey.CoverageGapM > 0;
// consecutive gap samples are merged into one Gap positioned at its widest sample.
func planGaps(ai int, a *survey.Samples, bi int, b *survey.Samples) []survey.Gap {
	nb := len(b.Lon)
	if nb < 2 || len(a.Lon) == 0 {
		return nil
	}
	var out []survey.Gap
	open, start := false, 0.0
	j := -1
	mLat, mLon, mAt := 0.0, 0.0, math.NaN()
	for i := range a.Lon {
		lon, lat := a.Lon[i], a.Lat[i]
		if lat != mAt {
			mLat, mLon = survey.MetresPerDegree(lat)
			mAt = lat
		}
		xy := func(k int) (float64, float64) {
			dl := b.Lon[k] - lon
			if dl > 180 || dl < -180 {
				dl = geo.LonTo180(dl)
			}
			return dl * mLon, (b.Lat[k] - lat) * mLat
		}
		d2 := func(k int) float64 { x, y := xy(k); return x*x + y*y }
		if j < 0 {
			j = 0
			for k := 1; k < nb; k++ {
				if d2(k) < d2(j) {
					j = k
				}
			}
		} else {
			dj := d2(j)
			for j+1 < nb {
				dn := d2(j + 1)
				if !(dn < dj) {
					break
				}
				j, dj = j+1, dn
			}
			for j > 0 {
				dp := d2(j - 1)
				if !(dp < dj) {
					break
				}
				j, dj = j-1, dp
			}
		}
		sep, inside := math.Inf(1), false
		for _, k := range [2]int{j - 1, j} {
			if k < 0 || k+1 >= nb {
				continue
			}
			x0, y0 := xy(k)
			x1, y1 := xy(k + 1)
			dx, dy := x1-x0, y1-y0
			l2 := dx*dx + dy*dy
			t := 0.0
			if l2 > 0 {
				t = -(x0*dx + y0*dy) / l2
			}
			if (k == 0 && t < 0) || (k+1 == nb-1 && t > 1) {
				continue // off b's ends
			}
			t = math.Max(0, math.Min(1, t))
			if dd := math.Hypot(x0+t*dx, y0+t*dy); dd < sep {
				sep, inside = dd, true
			}
		}
		wa, wb := a.SwathWidthM[i], b.SwathWidthM[j]
		gap := survey.CoverageGapM(sep, wa, wb)
		if !inside || !(sep < 2*(wa+wb)) || !(gap > 0) {
			open = false
			continue
		}
		if !open {
			out = append(out, survey.Gap{LineA: ai, LineB: bi})
			open, start = true, a.DistanceKm[i]
		}
		gp := &out[len(out)-1]
		if gap > gp.GapM {
			gp.Lon, gp.Lat, gp.DistanceKm, gp.SeparationM, gp.GapM = lon, lat, a.DistanceKm[i], sep, gap
		}
		gp.LengthKm = a.DistanceKm[i] - start
	}
	return out
}
