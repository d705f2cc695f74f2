package geo

import (
	"fmt"
	"math"
	"strings"

	"ridgeflank/fault"
)

// VerticalSense declares the sign convention of a bathymetry or topography grid.
type VerticalSense int

const (
	// SenseUnknown means the file did not say and the user did not declare it.
	SenseUnknown VerticalSense = iota
	// DepthPositiveDown: values are depths below sea level in metres, positive downwards
	// (the ocean floor is positive).
	DepthPositiveDown
	// ElevationPositiveUp: values are elevations in metres, positive upwards (the ocean floor is
	// negative), as most bathymetry files store it.
	ElevationPositiveUp
)

// String returns "unknown", "depth" or "elevation".
func (s VerticalSense) String() string {
	switch s {
	case SenseUnknown:
		return "unknown"
	case DepthPositiveDown:
		return "depth"
	case ElevationPositiveUp:
		return "elevation"
	}
	return fmt.Sprintf("VerticalSense(%d)", int(s))
}

// ParseVerticalSense accepts "depth" (also "depth-positive-down", "down") and "elevation"
// (also "elevation-positive-up", "height", "up"), case-insensitively; "" or "auto" give
// SenseUnknown.
func ParseVerticalSense(s string) (VerticalSense, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "", "auto", "unknown":
		return SenseUnknown, nil
	case "depth", "depth-positive-down", "positive-down", "down":
		return DepthPositiveDown, nil
	case "elevation", "elevation-positive-up", "height", "positive-up", "up":
		return ElevationPositiveUp, nil
	}
	return SenseUnknown, fault.New(fault.InvalidParameter, "vertical", "unknown vertical sense %q (want depth or elevation)", s)
}

// ToDepthM converts one value in metres to depth in metres, positive down: elevations are negated
// and depths returned unchanged. It returns NaN for SenseUnknown (the sense must be declared or
// detected first).
func ToDepthM(v float64, s VerticalSense) float64 {
	switch s {
	case DepthPositiveDown:
		return v
	case ElevationPositiveUp:
		return -v
	}
	return math.NaN()
}

// ToDepthM returns a copy of the grid converted to depth in metres, positive down (see the
// function ToDepthM). It fails for SenseUnknown.
func (g *Grid) ToDepthM(s VerticalSense) (*Grid, error) {
	if s != DepthPositiveDown && s != ElevationPositiveUp {
		return nil, fault.New(fault.InvalidGrid, "vertical", "vertical sense of the grid is %s: declare depth or elevation", s)
	}
	out := g.Clone()
	if s == ElevationPositiveUp {
		for i, v := range out.Data {
			out.Data[i] = -v
		}
	}
	return out, nil
}

// Thresholds for DetectVerticalSense (common practice, no source): an ocean grid stored as
// elevation is mostly negative, one stored as depth mostly positive; a grid with between 40% and
// 60% negative values (a coastal mix of land and sea) is ambiguous.
const (
	senseElevationMinNegative = 0.6
	senseDepthMaxNegative     = 0.4
)

// DetectVerticalSense guesses the sign convention of a grid of seafloor values from its data, for
// use ONLY when neither the file nor the user declares it: mostly negative values (≥ 60% of the
// non-zero valid ones) mean elevation positive up; mostly positive (≤ 40% negative) mean depth
// positive down; otherwise, or with no valid non-zero values, SenseUnknown. It also returns the
// fraction of negative values. A land-dominated elevation grid would be misread as depth: the
// guess assumes the grid is mainly ocean.
func DetectVerticalSense(g *Grid) (VerticalSense, float64) {
	var neg, n int
	for _, v := range g.Data {
		if isNaN32(v) || v == 0 || math.IsInf(float64(v), 0) {
			continue
		}
		n++
		if v < 0 {
			neg++
		}
	}
	if n == 0 {
		return SenseUnknown, math.NaN()
	}
	frac := float64(neg) / float64(n)
	switch {
	case frac >= senseElevationMinNegative:
		return ElevationPositiveUp, frac
	case frac <= senseDepthMaxNegative:
		return DepthPositiveDown, frac
	}
	return SenseUnknown, frac
}
