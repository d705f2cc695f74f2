package geo

import (
	"math"

	"github.com/paulmach/orb"
)

// SplitAtAntimeridian cuts a line of positions with longitudes in −180..180 where it crosses the
// antimeridian, as RFC 7946 §3.1.9 asks of GeoJSON ("any geometry that crosses the antimeridian
// SHOULD be represented by cutting it in two such that neither part's representation crosses
// the antimeridian"). A step between consecutive positions whose longitudes differ by more than
// 180° is taken to cross it (the short way round, as densely sampled tracks do); the crossing
// latitude is interpolated linearly in longitude, and both pieces end on the meridian (+180 on
// the east side, −180 on the west). A line that does not cross comes back as one piece.
func SplitAtAntimeridian(ls orb.LineString) orb.MultiLineString {
	var out orb.MultiLineString
	cur := orb.LineString{}
	for i, p := range ls {
		if i > 0 {
			a := ls[i-1]
			if d := p[0] - a[0]; math.Abs(d) > 180 {
				east := a[0] > 0 // leaving the eastern hemisphere over +180
				b := p
				if east {
					b[0] += 360
				} else {
					b[0] -= 360
				}
				seam := 180.0
				if !east {
					seam = -180
				}
				c := seamCross(a, b, seam)
				cur = append(cur, c)
				out = append(out, cur)
				c[0] = -seam
				cur = orb.LineString{c}
			}
		}
		cur = append(cur, p)
	}
	return append(out, cur)
}
