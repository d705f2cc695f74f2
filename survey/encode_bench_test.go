package survey

import (
	"io"
	"testing"
)

// bigCheck is a check of one line of n samples (values are placeholders for the encoders).
func bigCheck(n int) *Check {
	c := encodeFixture()
	l := c.Lines[0]
	col := func(base float64) []float64 {
		v := make([]float64, n)
		for i := range v {
			v[i] = base + float64(i)*1e-3
		}
		return v
	}
	src := make([]string, n)
	for i := range src {
		src[i] = SourcePredicted
	}
	l.Samples = Samples{Lon: col(-140), Lat: col(-30)[:n], Leg: make([]int, n), DistanceKm: col(0), DistanceNmi: col(0), TimeH: col(0),
		ExpectedDepthM: col(4000), DepthSource: src, UncertaintyM: col(50), ObservedDepthM: col(4000), PredictedDepthM: col(4001),
		ResidualDepthM: col(1), AgeMa: col(20), SlopeDeg: col(1), SwathWidthM: col(14000), SoundSpeedMS: col(1500), TwoWayTimeS: col(5),
		TwoWayTimeOuterS: col(10), MaxPingRateHz: col(0.1), SoundingSpacingM: col(40)}
	for i := range l.Samples.Lat {
		l.Samples.Lat[i] = -30 + float64(i)*1e-5
		l.Samples.Lon[i] = -140 + float64(i)*1e-5
	}
	c.Lines = []LineResult{l}
	return c
}

// A 10,000 km plan sampled every 100 m has 100,000 samples.
func BenchmarkWrite100kSamples(b *testing.B) {
	c := bigCheck(100_000)
	for _, f := range []Format{FormatJSON, FormatCSV, FormatGeoJSON} {
		b.Run(string(f), func(b *testing.B) {
			b.ReportAllocs()
			for b.Loop() {
				if err := Write(io.Discard, c, f); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
