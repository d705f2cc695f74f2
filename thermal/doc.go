// Package thermal holds the published cooling models of oceanic lithosphere
// (half-space cooling and plate models such as PSM and GDH1), their lookup
// tables, and the sediment and crust corrections used for residual depth.
package thermal
