package survey

import "math"

// MetresPerNauticalMile is the international nautical mile, 1852 m exactly (BIPM, The
// International System of Units, 9th ed. 2019, Table 8: non-SI units accepted for use).
const MetresPerNauticalMile = 1852.0

// KmToNmi converts kilometres to international nautical miles: nmi = km / 1.852.
func KmToNmi(km float64) float64 { return km * 1000 / MetresPerNauticalMile }

// HoursAt is the time (h) to run nmi nautical miles at kn knots: nmi / kn (1 kn = 1 nmi/h).
// NaN when kn is not positive.
func HoursAt(nmi, kn float64) float64 {
	if !(kn > 0) {
		return math.NaN()
	}
	return nmi / kn
}

// KnotsToMS converts knots to metres per second: kn × 1852 m / 3600 s.
func KnotsToMS(kn float64) float64 { return kn * MetresPerNauticalMile / 3600 }

// SwathWidthM is the width (m) a multibeam swath covers on a flat, level seafloor at depth
// depthM (m, positive down) below the sea surface with the transducer at transducerM: with a
// total opening angle angleDeg it is 2·(depthM − transducerM)·tan(angleDeg/2); with a fixed
// width (fixedWidthM > 0, angleDeg 0) it is fixedWidthM. NaN for a NaN depth, 0 when the
// seafloor is not below the transducer. (Plane geometry of the beam fan, straight rays.)
func SwathWidthM(depthM, transducerM, angleDeg, fixedWidthM float64) float64 {
	return NewSwath(transducerM, angleDeg, fixedWidthM).WidthM(depthM)
}

// Swath is a swath geometry (transducer depth m, total opening angle degrees or a fixed width m,
// as SwathWidthM takes them) with its trigonometry done once, for many depths.
type Swath struct {
	transducerM, fixedWidthM float64
	tanHalf, cosHalf         float64
}

// NewSwath prepares the swath of SwathWidthM's arguments.
func NewSwath(transducerM, angleDeg, fixedWidthM float64) Swath {
	half := angleDeg / 2 * math.Pi / 180
	return Swath{transducerM: transducerM, fixedWidthM: fixedWidthM, tanHalf: math.Tan(half), cosHalf: math.Cos(half)}
}

// WidthM is SwathWidthM at depthM.
func (w Swath) WidthM(depthM float64) float64 {
	h := depthM - w.transducerM
	switch {
	case math.IsNaN(h):
		return math.NaN()
	case w.fixedWidthM > 0:
		return w.fixedWidthM
	case h <= 0:
		return 0
	}
	return 2 * h * w.tanHalf
}

// SlantRangeM is SlantRangeM at depthM.
func (w Swath) SlantRangeM(depthM float64) float64 {
	h := depthM - w.transducerM
	if w.fixedWidthM > 0 {
		return math.Hypot(h, w.fixedWidthM/2)
	}
	return h / w.cosHalf
}

// LineSpacingM is the distance (m) between adjacent parallel lines for which swaths of width
// widthM overlap by overlapPct per cent of their width: widthM·(1 − overlapPct/100). A check
// uses the width at the line's shallowest expected depth, where the swath is narrowest (the
// conservative choice).
func LineSpacingM(widthM, overlapPct float64) float64 {
	return widthM * (1 - overlapPct/100)
}

// CoverageGapM is the width (m) of seafloor left uncovered between two lines separationM
// apart whose swaths are widthAM and widthBM wide: separationM − (widthAM + widthBM)/2 when
// positive, else 0 (the swaths meet or overlap). NaN when any input is NaN.
func CoverageGapM(separationM, widthAM, widthBM float64) float64 {
	g := separationM - (widthAM+widthBM)/2
	if math.IsNaN(g) {
		return g
	}
	return math.Max(0, g)
}

// SlantRangeM is the straight-ray distance (m) from the transducer to the seafloor at the
// outer beam: (depthM − transducerM)/cos(angleDeg/2) for a total opening angle, or
// √(h² + (fixedWidthM/2)²) for a fixed swath width, h = depthM − transducerM.
func SlantRangeM(depthM, transducerM, angleDeg, fixedWidthM float64) float64 {
	return NewSwath(transducerM, angleDeg, fixedWidthM).SlantRangeM(depthM)
}

// TwoWayTimeS is the two-way travel time (s) of sound over rangeM metres at mean speed
// speedMS: 2·rangeM/speedMS.
func TwoWayTimeS(rangeM, speedMS float64) float64 { return 2 * rangeM / speedMS }

// MaxPingRateHz is the highest ping rate (Hz) with one ping in the water at a time: the next
// ping leaves when the outer beam's echo is back, 1/outerTwoWayS (common practice, no source;
// systems that keep several pings in the water can go faster). NaN unless outerTwoWayS > 0.
func MaxPingRateHz(outerTwoWayS float64) float64 {
	if !(outerTwoWayS > 0) {
		return math.NaN()
	}
	return 1 / outerTwoWayS
}

// SoundingSpacingM is the along-track distance (m) between successive pings at speedKn knots
// and pingRateHz pings per second: (speedKn·1852/3600) / pingRateHz.
func SoundingSpacingM(speedKn, pingRateHz float64) float64 {
	return KnotsToMS(speedKn) / pingRateHz
}

// WGS84 ellipsoid (NIMA TR8350.2, 3rd ed., 2000, Table 3.1): semi-major axis a (m) and
// flattening f.
const (
	wgs84A = 6378137.0
	wgs84F = 1 / 298.257223563
)

// MetresPerDegree is the length (m) of one degree of latitude and of longitude at geodetic
// latitude latDeg on the WGS84 ellipsoid, from the meridian radius of curvature
// M = a(1−e²)/(1−e² sin²φ)^{3/2} and the prime-vertical radius N = a/(1−e² sin²φ)^{1/2}:
// M·π/180 and N·cos φ·π/180 (the radii of curvature of the ellipsoid, e.g. Torge & Müller 2012,
// Geodesy, 4th ed., §4.1; from memory).
func MetresPerDegree(latDeg float64) (perDegLatM, perDegLonM float64) {
	e2 := wgs84F * (2 - wgs84F)
	phi := latDeg * math.Pi / 180
	s := math.Sin(phi)
	w := 1 - e2*s*s
	n := wgs84A / math.Sqrt(w)
	m := wgs84A * (1 - e2) / (w * math.Sqrt(w))
	return m * math.Pi / 180, n * math.Cos(phi) * math.Pi / 180
}
