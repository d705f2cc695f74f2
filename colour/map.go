package colour

import (
	"fmt"
	"image/color"
	"math"
)

// MapBackground is the colour the page (and any figure drawn from these scales) paints where
// there is no grid at all: a mid slate grey, dark enough that the pale centre of the diverging
// ramp ("no anomaly") stands apart from it (TestZeroColourContrast), light enough that the dark
// end of the depth ramp does too.
const MapBackground = "#66717d"

// NoData is how a cell inside a grid that has no value (no age, land, a refused correction)
// is drawn: diagonal hatch lines of NoDataColour, NoDataLineWidthPx wide every
// NoDataSpacingPx pixels, transparent between them, so it reads as neither the background nor
// any colour of a ramp.
const (
	NoDataColour      = "#22262c"
	NoDataSpacingPx   = 6
	NoDataLineWidthPx = 2
)

// NoDataAt reports whether pixel (x, y) of a map, in whole-map pixel coordinates (so the
// pattern runs on across tiles), lies on a no-data hatch line.
func NoDataAt(x, y int) bool {
	m := (x + y) % NoDataSpacingPx
	if m < 0 {
		m += NoDataSpacingPx
	}
	return m < NoDataLineWidthPx
}

// MaxRangeMagnitude bounds the ends of a user-chosen range: no parameter of the service comes
// near it (depths ≤ 11 000 m, heat flow ≤ a few W/m²), so larger ends are typing errors.
const MaxRangeMagnitude = 1e7

// WithRange returns b with its value range set to [lo, hi] (a user's choice; units of b). The
// ends must be finite, at most MaxRangeMagnitude in size and lo < hi. For a diverging ramp the
// centre stays where it is and Linear spans the centre ± the larger half-range, so a range
// given lopsided is drawn symmetric.
func (b Binding) WithRange(lo, hi float64) (Binding, error) {
	switch {
	case math.IsNaN(lo) || math.IsNaN(hi) || math.IsInf(lo, 0) || math.IsInf(hi, 0):
		return b, fmt.Errorf("range ends must be finite numbers, got %g and %g", lo, hi)
	case math.Abs(lo) > MaxRangeMagnitude || math.Abs(hi) > MaxRangeMagnitude:
		return b, fmt.Errorf("range ends must lie within ±%g %s, got %g and %g", MaxRangeMagnitude, b.Units, lo, hi)
	case !(lo < hi):
		return b, fmt.Errorf("range start %g must be less than its end %g", lo, hi)
	}
	b.Min, b.Max = lo, hi
	return b, nil
}

// RelativeLuminance is the relative luminance of an sRGB colour as WCAG 2.1 defines it
// (W3C, Web Content Accessibility Guidelines 2.1, "relative luminance": linearised sRGB
// weighted 0.2126 R + 0.7152 G + 0.0722 B).
func RelativeLuminance(c color.NRGBA) float64 {
	return 0.2126*srgbToLinear(float64(c.R)/255) + 0.7152*srgbToLinear(float64(c.G)/255) + 0.0722*srgbToLinear(float64(c.B)/255)
}

// ContrastRatio is the WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05) of two colours, L1
// the lighter's relative luminance: 1 for equal colours up to 21 for black on white.
func ContrastRatio(a, b color.NRGBA) float64 {
	la, lb := RelativeLuminance(a), RelativeLuminance(b)
	if la < lb {
		la, lb = lb, la
	}
	return (la + 0.05) / (lb + 0.05)
}
