// Package survey holds the arithmetic of planning a multibeam survey over the seafloor: plans,
// their settings, sound speed, swath, line spacing, timing and the hazards a check reports.
package survey
