package thermal_test

import (
	"errors"
	"fmt"
	"math"

	"ridgeflank/thermal"
)

// Depth, heat flow and thickness of 100 Ma seafloor under GDH1. Stein &
// Stein's (1992) fits give 5651 − 2473·e^(−2.78) = 5498 m and
// 48 + 96·e^(−2.78) = 54.0 mW/m² (the fit's rounding explains the 0.1). The
// thickness and the 600 °C depth have no published value to compare with;
// the series temperatures behind them are checked against an independent
// finite-difference solution in fd_test.go.
func ExampleBuiltin() {
	m, err := thermal.Builtin("gdh1")
	if err != nil {
		panic(err)
	}
	fmt.Printf("depth %.0f m, heat flow %.1f mW/m², thickness %.1f km, 600 °C at %.1f km\n",
		m.DepthM(100), m.HeatFlowMWm2(100), m.ThermalThicknessKm(100), m.IsothermDepthKm(600, 100))
	// Output: depth 5498 m, heat flow 53.9 mW/m², thickness 84.2 km, 600 °C at 35.8 km
}

// Evaluating a block of an age grid with the lookup table; NaN marks cells
// without an age (land) and stays NaN. Hand check against Parsons & Sclater's
// (1977) fits: 2500 + 350·√25 = 4250 m and 6400 − 3200·e^(−100/62.8) = 5749 m,
// within the fits' own scatter.
func ExampleTable_DepthsM() {
	m, _ := thermal.Builtin("psm")
	ages := []float32{0, 25, 100, float32(math.NaN())}
	depths := make([]float32, len(ages))
	thermal.TableFor(m).DepthsM(ages, depths)
	for i, d := range depths {
		fmt.Printf("%g Ma: %.0f m\n", ages[i], d)
	}
	// Output:
	// 0 Ma: 2500 m
	// 25 Ma: 4255 m
	// 100 Ma: 5730 m
	// NaN Ma: NaN m
}

// Residual depth of a SYNTHETIC observation: 60 Ma seafloor seen at 4800 m
// under 300 m of shale. Positive residual: shallower than the model. Hand
// check: the GDH1 fit gives 5651 − 2473·e^(−1.668) = 5185 m; the closed-form
// shale correction is [610·300 + 1690·0.63·(1 − e^(−0.153))/0.00051]/2300
// = 208 m.
func ExampleResidualDepthM() {
	m, _ := thermal.Builtin("gdh1")
	shale, _ := thermal.CompactionByName("shale")
	p := m.Params()
	corrected := 4800 + thermal.SedimentCorrectionM(300, shale, p.MantleDensityKgM3, 1030)
	fmt.Printf("predicted %.0f m, corrected %.0f m, residual %+.0f m\n",
		m.DepthM(60), corrected, thermal.ResidualDepthM(m.DepthM(60), corrected))
	// Output: predicted 5184 m, corrected 5008 m, residual +176 m
}

// Custom parameters are validated; errors name the field and the range. Hand
// check of the depth with the plate formula (Parsons & Sclater 1977): asymptote
// 2600 + 3330·3.1e-5·1400·80000/(2·2300) = 5113 m, less the first series term
// (8/π²)·2513·e^(−100/26.5) ≈ 47 m at 100 Ma (κ = 3.1/(3330·1200) m²/s gives
// a²/(π²κ) = 26.5 Myr).
func ExampleNewModel() {
	p := thermal.Params{
		ID: "thin", Name: "thin plate", Kind: thermal.KindPlate,
		PlateThicknessKm: 80, MantleTemperatureC: 1400, ExpansivityPerK: 3.1e-5,
		ConductivityWmK: 3.1, HeatCapacityJkgK: 1.2, // kJ by mistake
		MantleDensityKgM3: 3330, WaterDensityKgM3: 1030, RidgeDepthM: 2600,
	}
	_, err := thermal.NewModel(p)
	fmt.Println(err, errors.Is(err, thermal.ErrInvalidParams))
	p.HeatCapacityJkgK = 1200
	m, err := thermal.NewModel(p)
	fmt.Printf("%v %.0f m\n", err, m.DepthM(100))
	// Output:
	// heat_capacity_j_kg_k = 1.2 is outside the allowed range 500 to 2000 J/kg/K true
	// <nil> 5067 m
}

// A caller's own loop over the bit-indexed depth nodes, as a fused grid pass
// would use them: the node is picked by the bits of the float32 age, and ages
// outside the table (here 450 Ma, beyond TableMaxAgeMa) take the exact
// fallback (the model itself). Hand check against Parsons & Sclater's (1977)
// fits: 2500 + 350·√25 = 4250 m, 6400 − 3200·e^(−100/62.8) = 5749 m and
// 6400 − 3200·e^(−450/62.8) = 6398 m; near the asymptote the plate series
// and the fit differ by a few tens of metres, within the fits' own scatter.
func ExampleTable_DepthNodes() {
	m, _ := thermal.Builtin("psm")
	tb := thermal.TableFor(m)
	nodes := tb.DepthNodes()
	for _, age := range []float32{25, 100, 450} {
		b := math.Float32bits(age)
		var d float32
		if j := uint(b >> thermal.Float32NodeShift); j < uint(len(nodes)) {
			d = nodes[j].At(b)
		} else {
			d = float32(tb.DepthM(float64(age)))
		}
		fmt.Printf("%g Ma: %.0f m\n", age, d)
	}
	// Output:
	// 25 Ma: 4255 m
	// 100 Ma: 5730 m
	// 450 Ma: 6357 m
}
