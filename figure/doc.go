// Package figure draws an area answer as a map figure (PNG, SVG or PDF) with graticule, scale bar, colour bar and the caution.
package figure
