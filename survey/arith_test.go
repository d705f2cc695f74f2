package survey

import (
	"math"
	"strings"
	"testing"
)

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if !(math.Abs(got-want) <= tol) {
		t.Errorf("%s = %.6f, want %.6f ± %g", what, got, want, tol)
	}
}

func TestMackenzieSoundSpeed(t *testing.T) {
	cases := []struct {
		name       string
		tC, s, dM  float64
		want, tol  float64
		sourceNote string
	}{
		// Mackenzie (1981), J. Acoust. Soc. Am. 70(3), 807–812: the paper's check value.
		{"published check value", 25, 35, 1000, 1550.744, 0.001, "Mackenzie (1981)"},
		// Worked by hand from the equation as printed: at S = 35, D = 0 only the T terms remain.
		// 1448.96 + 4.591·10 − 5.304e-2·100 + 2.374e-4·1000 = 1489.8034.
		{"10 °C at the surface", 10, 35, 0, 1489.8034, 1e-9, "worked by hand"},
		// T = 0, S = 35, D = 0: the constant term alone.
		{"0 °C at the surface", 0, 35, 0, 1448.96, 1e-9, "worked by hand"},
		// T = 0, S = 30, D = 2000: 1448.96 + 1.340·(−5) + 1.630e-2·2000 + 1.675e-7·4e6
		// = 1448.96 − 6.70 + 32.60 + 0.67 = 1475.53.
		{"salinity and pressure terms", 0, 30, 2000, 1475.53, 1e-9, "worked by hand"},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			near(t, c.sourceNote, MackenzieSoundSpeedMS(c.tC, c.s, c.dM), c.want, c.tol)
		})
	}
}

// The harmonic mean speed of a column is checked against a direct integration of the slowness
// written in the test (Simpson's rule, 0.5 m steps): an independent quadrature of the same
// definition c̄ = D / ∫ dz/c.
func TestMeanSoundSpeed(t *testing.T) {
	warm, sal := 20.0, 35.0
	profile := []ProfileStep{{0, 25, 36}, {200, 15, 35.5}, {1000, 5, 34.6}, {4000, 1.5, 34.7}}
	cases := []struct {
		name     string
		s        Settings
		from, to float64
	}{
		{"single values, 4000 m", Settings{WaterTemperatureC: &warm, SalinityPSU: &sal}, 0, 4000},
		{"defaults, 5500 m below a 6 m transducer", Settings{}, 6, 5500},
		{"profile, 3000 m", Settings{SoundProfile: profile}, 0, 3000},
		{"profile, below its last level", Settings{SoundProfile: profile}, 0, 6000},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			col := NewSoundColumn(c.s)
			const h = 0.5
			n := int((c.to - c.from) / h)
			if n%2 == 1 {
				n++
			}
			step := (c.to - c.from) / float64(n)
			sum := 1/col.SpeedAtMS(c.from) + 1/col.SpeedAtMS(c.to)
			for i := 1; i < n; i++ {
				w := 4.0
				if i%2 == 0 {
					w = 2
				}
				sum += w / col.SpeedAtMS(c.from+float64(i)*step)
			}
			want := (c.to - c.from) / (sum * step / 3)
			// Tolerance 0.01 m/s: well inside the equation's own 0.07 m/s standard error.
			near(t, "harmonic mean", col.MeanSpeedMS(c.from, c.to), want, 0.01)
		})
	}
	t.Run("profile interpolates linearly", func(t *testing.T) {
		tc, s := NewSoundColumn(Settings{SoundProfile: profile}).At(600)
		near(t, "T at 600 m", tc, 10, 1e-12) // halfway between 15 °C at 200 m and 5 °C at 1000 m
		near(t, "S at 600 m", s, 35.05, 1e-12)
	})
}

func TestSoundColumnNotes(t *testing.T) {
	cold, fresh := 0.5, 20.0
	cases := []struct {
		name    string
		s       Settings
		deepest float64
		want    []string
	}{
		{"inside the fit", Settings{}, 6000, nil},
		{"cold water", Settings{WaterTemperatureC: &cold}, 4000, []string{"0.5 °C"}},
		{"brackish", Settings{SalinityPSU: &fresh}, 4000, []string{"salinity 20"}},
		{"trench", Settings{}, 9500, []string{"9500 m"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			got := NewSoundColumn(c.s).Notes(c.deepest)
			if len(got) != len(c.want) {
				t.Fatalf("notes %q, want %d", got, len(c.want))
			}
			for i, w := range c.want {
				if !strings.Contains(got[i], w) {
					t.Errorf("note %q does not say %q", got[i], w)
				}
			}
		})
	}
}

// Worked examples, written out by hand.
func TestSwathSpacingTiming(t *testing.T) {
	tan60 := math.Sqrt(3)
	cases := []struct {
		name      string
		got, want float64
		tol       float64
	}{
		// 2·4000·tan 60° = 8000·1.7320508 = 13,856.406 m.
		{"swath 4000 m, 120°", SwathWidthM(4000, 0, 120, 0), 8000 * tan60, 1e-6},
		{"swath 4000 m, 120°, value", SwathWidthM(4000, 0, 120, 0), 13856.406, 0.001},
		// Transducer 6 m down: 2·3994·tan 60° = 13,835.621 m.
		{"swath below a 6 m transducer", SwathWidthM(4000, 6, 120, 0), 13835.621, 0.001},
		// 2·1000·tan 45° = 2000 m.
		{"swath 1000 m, 90°", SwathWidthM(1000, 0, 90, 0), 2000, 1e-9},
		{"fixed width", SwathWidthM(4000, 0, 0, 5000), 5000, 0},
		// 13,856.406 · (1 − 0.20) = 11,085.125 m.
		{"spacing for 20 % overlap", LineSpacingM(SwathWidthM(4000, 0, 120, 0), 20), 11085.125, 0.001},
		{"spacing for no overlap", LineSpacingM(2000, 0), 2000, 0},
		// Lines 12 km apart, swaths 10 km and 11 km: 12 − 10.5 = 1.5 km uncovered.
		{"gap", CoverageGapM(12000, 10000, 11000), 1500, 1e-9},
		{"no gap where swaths overlap", CoverageGapM(9000, 10000, 11000), 0, 0},
		// 185.2 km = 100 nmi (1 nmi = 1852 m exactly, BIPM SI brochure).
		{"185.2 km in nmi", KmToNmi(185.2), 100, 1e-12},
		// 100 nmi at 10 kn = 10 h.
		{"100 nmi at 10 kn", HoursAt(100, 10), 10, 0},
		// 10 kn = 18,520 m / 3600 s = 5.14444 m/s.
		{"10 kn in m/s", KnotsToMS(10), 5.144444, 1e-6},
		// Outer beam at 4000 m, 120°: 4000/cos 60° = 8000 m; at 1500 m/s the echo is back after
		// 2·8000/1500 = 10.6667 s, so one ping in the water allows 0.09375 Hz, and at 10 kn the
		// pings fall 5.14444/0.09375 = 54.874 m apart.
		{"outer slant range", SlantRangeM(4000, 0, 120, 0), 8000, 1e-9},
		{"outer two-way time", TwoWayTimeS(SlantRangeM(4000, 0, 120, 0), 1500), 10.666667, 1e-6},
		{"nadir two-way time", TwoWayTimeS(4000, 1500), 5.333333, 1e-6},
		{"max ping rate", MaxPingRateHz(TwoWayTimeS(8000, 1500)), 0.09375, 1e-12},
		{"sounding spacing", SoundingSpacingM(10, 0.09375), 54.874, 0.001},
		// Fixed 8 km swath at 3000 m: √(3000² + 4000²) = 5000 m.
		{"slant range of a fixed width", SlantRangeM(3000, 0, 0, 8000), 5000, 1e-9},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) { near(t, c.name, c.got, c.want, c.tol) })
	}
	if !math.IsNaN(MaxPingRateHz(math.NaN())) || !math.IsNaN(SwathWidthM(math.NaN(), 0, 120, 0)) {
		t.Error("no depth must give no ping rate and no swath")
	}
}

// Lengths of a degree on WGS84 against the series 111132.954 − 559.822 cos 2φ + 1.175 cos 4φ
// (latitude) and 111412.84 cos φ − 93.5 cos 3φ + 0.118 cos 5φ (longitude), from memory; the
// series are truncated, so the tolerance is 0.5 m. The equator's degree of longitude is
// 2π·6378137/360 = 111,319.4908 m (worked by hand).
func TestMetresPerDegree(t *testing.T) {
	series := func(lat float64) (float64, float64) {
		p := lat * math.Pi / 180
		return 111132.954 - 559.822*math.Cos(2*p) + 1.175*math.Cos(4*p),
			111412.84*math.Cos(p) - 93.5*math.Cos(3*p) + 0.118*math.Cos(5*p)
	}
	for _, lat := range []float64{0, 20, 45, 60, 80, -33} {
		t.Run("", func(t *testing.T) {
			la, lo := MetresPerDegree(lat)
			wa, wo := series(lat)
			near(t, "per degree of latitude", la, wa, 0.5)
			near(t, "per degree of longitude", lo, wo, 0.5)
		})
	}
	_, eq := MetresPerDegree(0)
	near(t, "equator", eq, 111319.4908, 1e-4)
}

func TestHazardRuns(t *testing.T) {
	nan := math.NaN()
	s := &Samples{
		Lon:             []float64{0, 1, 2, 3, 4, 5, 6, 7},
		Lat:             []float64{0, 0, 0, 0, 0, 0, 0, 0},
		DistanceKm:      []float64{0, 1, 2, 3, 4, 5, 6, 7},
		ExpectedDepthM:  []float64{300, 150, 120, 180, 400, nan, nan, 90},
		DepthSource:     []string{"observed", "observed", "observed", "observed", "observed", "none", "none", "predicted"},
		ObservedDepthM:  []float64{300, 150, 120, 180, 400, nan, nan, nan},
		PredictedDepthM: []float64{900, 900, 900, 900, 900, nan, nan, 90},
		SlopeDeg:        []float64{1, 20, 30, 2, 1, nan, nan, 16},
	}
	st := Settings{SafetyDepthM: 200, SeamountM: 650, MaxSlopeDeg: 15}
	cases := []struct {
		name     string
		got      []Hazard
		from, to []int
		worst    []int
		values   []float64
	}{
		// 150, 120, 180 < 200 form one stretch, shallowest 120 m at sample 2; sample 7 (90 m) another.
		{"shallow", ShallowHazards(3, "L", s, st.SafetyDepthM), []int{1, 7}, []int{3, 7}, []int{2, 7}, []float64{120, 90}},
		// 900 − 150 = 750, 780, 720 > 650; 900 − 300 = 600 and 900 − 400 = 500 are not.
		{"seamount", SeamountHazards(3, "L", s, st.SeamountM), []int{1}, []int{3}, []int{2}, []float64{780}},
		{"slope", SlopeHazards(3, "L", s, st.MaxSlopeDeg), []int{1, 7}, []int{2, 7}, []int{2, 7}, []float64{30, 16}},
		{"no data", NoDataHazards(3, "L", s), []int{5}, []int{6}, []int{5}, []float64{nan}},
		{"no safety depth, no test", ShallowHazards(3, "L", s, 0), nil, nil, nil, nil},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			if len(c.got) != len(c.from) {
				t.Fatalf("%d hazards, want %d: %+v", len(c.got), len(c.from), c.got)
			}
			for i, h := range c.got {
				if h.FromSample != c.from[i] || h.ToSample != c.to[i] || h.Lon != s.Lon[c.worst[i]] || h.Line != 3 || h.LineName != "L" {
					t.Errorf("hazard %d: %+v, want samples %d..%d worst %d", i, h, c.from[i], c.to[i], c.worst[i])
				}
				if !(h.Value == c.values[i] || math.IsNaN(h.Value) && math.IsNaN(c.values[i])) {
					t.Errorf("hazard %d value %g, want %g", i, h.Value, c.values[i])
				}
				near(t, "length", h.LengthKm, float64(c.to[i]-c.from[i]), 1e-12)
				if h.Reason == "" {
					t.Error("no reason")
				}
			}
		})
	}
	// 1 no data + 2 shallow + 1 seamount + 2 slope, in order of their first sample; the three
	// starting at sample 1 in the order shallow, seamount, slope.
	all := LineHazards(3, "L", s, st)
	var kinds []string
	for _, h := range all {
		kinds = append(kinds, h.Kind)
	}
	want := []string{HazardShallow, HazardSeamount, HazardSlope, HazardNoData, HazardShallow, HazardSlope}
	if strings.Join(kinds, ",") != strings.Join(want, ",") {
		t.Errorf("LineHazards kinds %v, want %v", kinds, want)
	}
}
