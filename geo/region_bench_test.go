package geo

import (
	"math"
	"testing"

	"github.com/paulmach/orb"
)

// spikyRing is a closed ring of n vertices round (cx, cy), radius alternating between r and
// r·0.8 so that it is not convex, counter-clockwise.
func spikyRing(cx, cy, r float64, n int) orb.Ring {
	ring := make(orb.Ring, 0, n+1)
	for i := range n {
		a := 2 * math.Pi * float64(i) / float64(n)
		rr := r
		if i%2 == 1 {
			rr *= 0.8
		}
		ring = append(ring, orb.Point{cx + rr*math.Cos(a), cy + rr*math.Sin(a)})
	}
	return append(ring, ring[0])
}

// BenchmarkPrepareRegion measures validation and normalisation of large regions: one ring of
// 90,000 vertices across the antimeridian; a shell with 2,000 small holes; 2,000 small parts.
func BenchmarkPrepareRegion(b *testing.B) {
	bigRing := orb.MultiPolygon{{spikyRing(180, -30, 20, 90_000)}}
	holes := orb.Polygon{spikyRing(0, 0, 40, 20_000)}
	for i := range 2000 {
		x, y := -20+float64(i%50)*0.8, -20+float64(i/50)*1.0
		holes = append(holes, spikyRing(x, y, 0.3, 16))
	}
	var parts orb.MultiPolygon
	for i := range 2000 {
		x, y := -100+float64(i%50)*4, -60+float64(i/50)*3
		parts = append(parts, orb.Polygon{spikyRing(x, y, 1, 40)})
	}
	for _, c := range []struct {
		name string
		mp   orb.MultiPolygon
	}{
		{"one ring of 90k vertices", bigRing},
		{"2000 holes", orb.MultiPolygon{holes}},
		{"2000 parts", parts},
	} {
		b.Run(c.name, func(b *testing.B) {
			for b.Loop() {
				if _, err := PrepareRegion(c.mp, 200_000); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
