// Package csvfacts holds the one rule for what a CSV answer says about itself: dataset, model,
// data label, caution and provenance as columns after the data, never as comment lines.
package csvfacts
