// Package geo holds longitude/latitude grids, regions and tracks, and the pure-Go geometry
// (sampling, windows, resampling, masks, densification, statistics) that works on them.
package geo
