package survey

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// ShallowHazards are the stretches of a line whose expected depth (m, positive down) is
// shallower than safetyDepthM; none when safetyDepthM is 0 (no safety-depth test). The worst
// sample is the shallowest; Value is its depth.
func ShallowHazards(line int, name string, s *Samples, safetyDepthM float64) []Hazard {
	if !(safetyDepthM > 0) {
		return nil
	}
	d := s.ExpectedDepthM
	return hazardRuns(HazardShallow, line, name, s,
		func(i int) bool { return d[i] < safetyDepthM },
		func(i int) float64 { return -d[i] },
		func(i int) (float64, float64, string) {
			return d[i], safetyDepthM, fmt.Sprintf("expected depth %.0f m (%s) is shallower than the safety depth %.0f m", d[i], s.DepthSource[i], safetyDepthM)
		})
}

// SeamountHazards are the stretches of a line where the observed depth is shallower than the
// predicted depth by more than thresholdM (m): predicted − observed > thresholdM, the mark of
// seamounts and other volcanic edifices the cooling model does not know. The worst sample is the
// highest above the prediction; Value is that height.
func SeamountHazards(line int, name string, s *Samples, thresholdM float64) []Hazard {
	if !(thresholdM > 0) {
		return nil
	}
	obs, pred := s.ObservedDepthM, s.PredictedDepthM
	h := func(i int) float64 { return pred[i] - obs[i] }
	return hazardRuns(HazardSeamount, line, name, s,
		func(i int) bool { return h(i) > thresholdM },
		h,
		func(i int) (float64, float64, string) {
			return h(i), thresholdM, fmt.Sprintf("observed depth %.0f m is %.0f m shallower than the model predicts (%.0f m): a seamount or other edifice", obs[i], h(i), pred[i])
		})
}

// SlopeHazards are the stretches of a line where the seafloor slope (degrees, from the depth
// grid's gradient) is steeper than maxSlopeDeg. The worst sample is the steepest; Value is its
// slope.
func SlopeHazards(line int, name string, s *Samples, maxSlopeDeg float64) []Hazard {
	if !(maxSlopeDeg > 0) {
		return nil
	}
	sl := s.SlopeDeg
	return hazardRuns(HazardSlope, line, name, s,
		func(i int) bool { return sl[i] > maxSlopeDeg },
		func(i int) float64 { return sl[i] },
		func(i int) (float64, float64, string) {
			return sl[i], maxSlopeDeg, fmt.Sprintf("seafloor slope %.1f° is steeper than %.1f°", sl[i], maxSlopeDeg)
		})
}

// NoDataHazards are the stretches of a line with no expected depth at all (neither observed
// nor predicted). The worst sample is the first; Value and Limit are NaN.
func NoDataHazards(line int, name string, s *Samples) []Hazard {
	d := s.ExpectedDepthM
	nan := math.NaN()
	return hazardRuns(HazardNoData, line, name, s,
		func(i int) bool { return math.IsNaN(d[i]) },
		func(i int) float64 { return -float64(i) },
		func(i int) (float64, float64, string) {
			return nan, nan, "no expected depth: the line leaves the dataset's age and depth grids"
		})
}

// LineHazards are all the hazards of one line under settings st (no data, shallower than the
// safety depth, above the prediction, steep slope) in along-track order of their first sample;
// hazards starting at the same sample keep that order of kinds.
func LineHazards(line int, name string, s *Samples, st Settings) []Hazard {
	var out []Hazard
	out = append(out, NoDataHazards(line, name, s)...)
	out = append(out, ShallowHazards(line, name, s, st.SafetyDepthM)...)
	out = append(out, SeamountHazards(line, name, s, st.SeamountM)...)
	out = append(out, SlopeHazards(line, name, s, st.MaxSlopeDeg)...)
	slices.SortStableFunc(out, func(a, b Hazard) int { return cmp.Compare(a.FromSample, b.FromSample) })
	return out
}

// hazardRuns merges consecutive flagged samples of s into one Hazard each: FromSample..ToSample,
// positioned at the sample of greatest badness, with Value, Limit and Reason from describe at
// that sample.
func hazardRuns(kind string, line int, name string, s *Samples, flagged func(int) bool, badness func(int) float64,
	describe func(int) (value, limit float64, reason string)) []Hazard {
	var out []Hazard
	n := len(s.Lon)
	for i := 0; i < n; {
		if !flagged(i) {
			i++
			continue
		}
		j, worst := i, i
		for j+1 < n && flagged(j+1) {
			j++
			if badness(j) > badness(worst) {
				worst = j
			}
		}
		v, lim, why := describe(worst)
		out = append(out, Hazard{Kind: kind, Line: line, LineName: name, FromSample: i, ToSample: j,
			Lon: s.Lon[worst], Lat: s.Lat[worst], DistanceKm: s.DistanceKm[worst],
			LengthKm: s.DistanceKm[j] - s.DistanceKm[i], DepthM: s.ExpectedDepthM[worst],
			Value: v, Limit: lim, Reason: why})
		i = j + 1
	}
	return out
}
