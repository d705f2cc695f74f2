package report

import (
	"fmt"
	"math"
	"time"

	"ridgeflank/geo"
	"ridgeflank/survey"
)

// testCaution is the caution as checks carry it (evaluate.Caution, copied so this package's tests
// do not build the application layer).
const testCaution = "model estimate, not for navigation: predicted depths come from a cooling model, not from soundings; defer to nautical charts, surveys and the local hydrographic authority"

var testGenerated = time.Date(2026, 3, 14, 9, 26, 53, 0, time.UTC)

func testOptions() Options {
	return Options{Provenance: Provenance{
		Software: "ridgeflank test", Dataset: "SYNTHETIC", Model: "psm (SYNTHETIC parameters)",
		Sediment: "none", Grids: []string{"age: SYNTHETIC-age sha256:00ff"}, Generated: testGenerated,
	}}
}

// syntheticCheck builds a SYNTHETIC check by hand: nLines lines of three legs each, running
// east along parallels south of 30°S, with depths that are invented (not a model), a stretch of
// no data on line 2, predicted depths on the middle of each line, and one hazard of each kind.
// The numbers are only for drawing; nothing in them is checked against a source.
func syntheticCheck(nLines, samplesPerLine int) *survey.Check {
	nan := math.NaN()
	c := &survey.Check{Caution: testCaution}
	c.Plan = survey.Plan{
		ID: "SYNTHETIC-1", Name: "SYNTHETIC plan across an invented ridge flank", Version: 3,
		Description: "SYNTHETIC: invented lines and depths for the report tests; not a place, not a survey.",
		Settings: survey.Settings{Dataset: "SYNTHETIC", Model: "psm", SpeedOnLineKn: 8, SpeedTransitKn: 11,
			SwathAngleDeg: 120, OverlapPct: 20, SafetyDepthM: 3050, SeamountM: 500, MaxSlopeDeg: 15},
	}
	for li := range nLines {
		lat := -30 - 0.25*float64(li)
		lon0, lon1 := 10.0, 11.5
		var wps []geo.Waypoint
		for k := range 4 {
			wps = append(wps, geo.Waypoint{Lon: lon0 + (lon1-lon0)*float64(k)/3, Lat: lat, Name: fmt.Sprintf("S%d-%d", li+1, k+1)})
		}
		c.Plan.Lines = append(c.Plan.Lines, survey.Line{Name: fmt.Sprintf("SYN-%d", li+1), Waypoints: wps})

		n := samplesPerLine
		lengthKm := 144.0 // about 1.5° of longitude at 30°S; invented, not measured
		var s survey.Samples
		for i := range n {
			f := float64(i) / float64(n-1)
			x := f * lengthKm
			depth := 3000 + 800*f + 350*math.Sin(6*f+float64(li))
			src := survey.SourceObserved
			unc := 40.0
			if f > 0.35 && f < 0.65 {
				src, unc = survey.SourcePredicted, 150+200*f
			}
			if li == 1 && f > 0.75 && f < 0.82 {
				depth, src, unc = nan, survey.SourceNone, nan
			}
			if f > 0.9 {
				unc = nan // no uncertainty at the end: band stops, depth goes on
			}
			s.Lon = append(s.Lon, lon0+(lon1-lon0)*f)
			s.Lat = append(s.Lat, lat+0.02*math.Sin(3*f))
			s.Leg = append(s.Leg, min(int(f*3), 2))
			s.DistanceKm = append(s.DistanceKm, x)
			s.DistanceNmi = append(s.DistanceNmi, x/1.852)
			s.TimeH = append(s.TimeH, x/1.852/8)
			s.ExpectedDepthM = append(s.ExpectedDepthM, depth)
			s.DepthSource = append(s.DepthSource, src)
			s.UncertaintyM = append(s.UncertaintyM, unc)
		}
		lr := survey.LineResult{Name: fmt.Sprintf("SYN-%d", li+1), LengthKm: lengthKm, LengthNmi: lengthKm / 1.852,
			TimeOnLineH: lengthKm / 1.852 / 8, MinDepthM: 2700, MeanDepthM: 3400, MaxDepthM: 4100,
			MinSwathM: 9350, LineSpacingM: 7480, AreaKm2: 1300, Samples: s}
		for k := range 3 {
			lr.Legs = append(lr.Legs, survey.Leg{From: k, To: k + 1, FromName: wps[k].Name, ToName: wps[k+1].Name,
				FromLon: wps[k].Lon, FromLat: lat, ToLon: wps[k+1].Lon, ToLat: lat, LengthKm: lengthKm / 3,
				LengthNmi: lengthKm / 3 / 1.852, AzimuthDeg: 90, TimeH: lengthKm / 3 / 1.852 / 8,
				MinDepthM: 2700 + 100*float64(k), MeanDepthM: 3400, MaxDepthM: 4100 - 100*float64(k)})
		}
		if li == 1 {
			lr.Legs[2].MinDepthM = nan // a leg all of no data in places
		}
		c.Lines = append(c.Lines, lr)
		if li > 0 {
			c.Transits = append(c.Transits, survey.Transit{FromLine: li - 1, ToLine: li, LengthKm: 28, LengthNmi: 28 / 1.852, TimeH: 28 / 1.852 / 11})
		}
	}
	// hz adds a hazard at fraction f of the line; depth NaN is no data, otherwise the sample's.
	hz := func(kind string, line int, f, depth, value, limit float64, reason string) {
		if line >= nLines {
			return
		}
		s := c.Lines[line].Samples
		i := int(f * float64(samplesPerLine-1))
		if !math.IsNaN(depth) {
			depth = s.ExpectedDepthM[i]
		}
		if kind == survey.HazardShallow {
			value = depth
		}
		c.Hazards = append(c.Hazards, survey.Hazard{Kind: kind, Line: line, LineName: c.Lines[line].Name,
			FromSample: max(i-3, 0), ToSample: min(i+3, samplesPerLine-1), Lon: s.Lon[i], Lat: s.Lat[i],
			DistanceKm: s.DistanceKm[i], LengthKm: s.DistanceKm[min(i+3, samplesPerLine-1)] - s.DistanceKm[max(i-3, 0)],
			DepthM: depth, Value: value, Limit: limit, Reason: reason})
	}
	hz(survey.HazardShallow, 0, 0.01, 0, 0, 3050, "SYNTHETIC: expected depth is shallower than the safety depth of 3050 m.")
	hz(survey.HazardNoData, 1, 0.78, nan, nan, nan, "SYNTHETIC: no observed or predicted depth over this stretch.")
	hz(survey.HazardSeamount, 1, 0.3, 0, 620, 500, "SYNTHETIC: observed depth is 620 m shallower than the prediction.")
	hz(survey.HazardSlope, 2, 0.5, 0, 17.5, 15, "SYNTHETIC: seafloor slope 17.5° is steeper than 15°.")
	if nLines > 1 {
		c.Gaps = append(c.Gaps, survey.Gap{LineA: 0, LineB: 1, Lon: 10.7, Lat: -30.1, DistanceKm: 60, SeparationM: 27800, GapM: 18450})
	}
	c.Totals = survey.Totals{LengthKm: 144 * float64(nLines), LengthNmi: 144 * float64(nLines) / 1.852,
		TimeOnLineH: 144 * float64(nLines) / 1.852 / 8, TransitKm: 28 * float64(max(nLines-1, 0)),
		TransitNmi: 28 * float64(max(nLines-1, 0)) / 1.852, MinDepthM: 2700, MeanDepthM: 3400, MaxDepthM: 4100,
		AreaKm2: 1300 * float64(nLines), Hazards: len(c.Hazards)}
	c.Totals.TimeInTransitH = c.Totals.TransitNmi / 11
	c.Totals.TimeTotalH = c.Totals.TimeOnLineH + c.Totals.TimeInTransitH
	return c
}
