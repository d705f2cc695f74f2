// Package raster reads stored grid files through windows, at the resolution level a question needs, with decoded blocks kept under one memory budget.
package raster
