package ingest

import (
	"strings"

	"ridgeflank/store"
)

// kindUnit is the unit a grid kind is stored in and the unit spellings accepted for it, each
// with the factor that converts a value in that unit to the stored unit.
type kindUnit struct {
	unit    string
	accepts map[string]float64
}

// Unit spellings and factors (common practice, no source; the factors are the SI prefixes:
// kilo = 10³, BIPM SI Brochure 9th ed., Table 7).
var (
	ageUnits = map[string]float64{"ma": 1, "myr": 1, "my": 1, "m.y.": 1, "million years": 1, "million_years": 1}
	mUnits   = map[string]float64{"m": 1, "meter": 1, "meters": 1, "metre": 1, "metres": 1,
		"km": 1000, "kilometre": 1000, "kilometres": 1000, "kilometer": 1000, "kilometers": 1000}
	kmUnits = map[string]float64{"km": 1, "kilometre": 1, "kilometres": 1, "kilometer": 1, "kilometers": 1,
		"m": 0.001, "meter": 0.001, "meters": 0.001, "metre": 0.001, "metres": 0.001}
)

// kindUnits is THE table of stored units: age and age uncertainty in Ma, depth, elevation and
// sediment thickness in m, crustal thickness in km. KindOther has no entry: its values are
// stored in the units given, unconverted.
var kindUnits = map[store.GridKind]kindUnit{
	store.KindAge:               {"Ma", ageUnits},
	store.KindAgeUncertainty:    {"Ma", ageUnits},
	store.KindDepth:             {"m", mUnits},
	store.KindElevation:         {"m", mUnits},
	store.KindSedimentThickness: {"m", mUnits},
	store.KindCrustalThickness:  {"km", kmUnits},
}

// StoredUnit returns the unit grids of kind k are stored in ("" for KindOther).
func StoredUnit(k store.GridKind) string { return kindUnits[k].unit }

// unitFactor returns the factor that converts values in units u to the unit kind k is stored in,
// and that unit. ok is false when u is not an accepted spelling for k. For kinds without a
// stored unit (KindOther) every u is accepted with factor 1 and kept as given.
func unitFactor(k store.GridKind, u string) (factor float64, stored string, ok bool) {
	ku, known := kindUnits[k]
	if !known {
		return 1, strings.TrimSpace(u), true
	}
	f, ok := ku.accepts[strings.ToLower(strings.TrimSpace(u))]
	return f, ku.unit, ok
}
