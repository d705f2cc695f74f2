package thermal

import (
	"math"
	"sync"
)

// Lookup-table layout. Values are tabulated at nodes uniform in s = √age,
// because every quantity of both model kinds is smooth in √age (the
// half-space depth and thickness are linear in it) while some are singular
// in age itself at age 0. Heat flow and subsidence rate grow like 1/√age, so
// the table holds q·√age and (dd/dt)·√age, which stay finite, and divides
// afterwards. Linear interpolation in s with tableIntervals intervals over
// √TableMaxAgeMa gives errors far below the tested bounds (0.5 m,
// 0.1 mW/m²); see TestTableAgainstSeries.
const (
	// TableMaxAgeMa is the oldest age the table covers. Older ages (none exist
	// in today's oceans, which are younger than about 200 Ma) are evaluated
	// with the series itself.
	TableMaxAgeMa  = 400.0
	tableIntervals = 2048
	// MaxCachedTables bounds the TableFor cache; beyond it tables are built
	// but not kept. A cached table holds 350 KiB to 900 KiB (see Table).
	MaxCachedTables = 256
)

// Table is a lookup table of one model over 0..TableMaxAgeMa. It holds two
// layers. The first tabulates the model at nodes uniform in √age (linear
// interpolation in √age, float64). The second resamples depth, heat flow and
// thermal thickness of the first onto bit-indexed float32 nodes
// (Float32Nodes, 256 per doubling of age, ending exactly at TableMaxAgeMa)
// for the fast paths: DepthM, HeatFlowMWm2, ThermalThicknessKm and their
// batch forms read the second layer and need no square root per age. The
// resampling adds at most 2.7 mm to depths (half-space law, the most curved,
// in the 256–400 Ma octave; the young octaves far less) and 1.4e-6 of the
// value to heat flow, plus float32 rounding (0.5 mm at 6 km); the totals stay
// inside the tested bounds (0.5 m, 0.1 mW/m² or 0.1 %) of
// TestTableAgainstSeries. Heat flow is +Inf at age 0 and, from node 0, at
// ages below 2^−134 ≈ 4.6e-41 Ma; ages below 2^−126 ≈ 1.2e-38 Ma (float32
// subnormals) are interpolated over uniform steps (see Float32Nodes).
//
// It is read-only after construction and safe for concurrent use. Every
// method accepts any age: NaN and negative ages give NaN, ages at or above
// TableMaxAgeMa fall back to the model exactly. Values the float32 nodes
// cannot take go to the √age layer unchanged: ages that reach the top only
// through float32 rounding, and −0 (depth and thickness at age 0; heat flow
// −Inf, the sign of 1/−0). Like the model's, its depths are estimates, not for navigation
// (see Model).
//
// Memory: about 80 KiB for the first layer and 271 KiB per resampled
// quantity; depth is resampled when the table is built, heat flow and
// thickness on first use.
type Table struct {
	model Model
	invH  float64 // intervals per Ma^½
	// Node values, len tableIntervals+1.
	depth, heatS, thick, iso600, rateS []float64
	// depthNodes resamples depth (m) on bit-indexed float32 nodes over
	// [0, TableMaxAgeMa); heatNodes (mW/m²) and thickNodes (km) likewise,
	// built on first use.
	depthNodes            Float32Nodes
	heatNodes, thickNodes lazyNodes
	rateNodes             lazyNodes // subsidence rate (m/Myr), built on first use
}

var tableCache struct {
	sync.Mutex
	m map[Params]*tableEntry
}

type tableEntry struct {
	once sync.Once
	t    *Table
}

// TableFor returns the lookup table of m, building it on first use (a few
// milliseconds) and caching it per parameter set (m.Params() is the key, so
// pass models made by NewModel or Builtin). At most MaxCachedTables tables
// are cached. Safe for concurrent use; concurrent first calls build once.
func TableFor(m Model) *Table {
	key := m.Params()
	tableCache.Lock()
	if tableCache.m == nil {
		tableCache.m = make(map[Params]*tableEntry)
	}
	e, ok := tableCache.m[key]
	if !ok {
		if len(tableCache.m) >= MaxCachedTables {
			tableCache.Unlock()
			return newTable(m)
		}
		e = &tableEntry{}
		tableCache.m[key] = e
	}
	tableCache.Unlock()
	e.once.Do(func() { e.t = newTable(m) })
	return e.t
}

func newTable(m Model) *Table {
	n := tableIntervals
	h := math.Sqrt(TableMaxAgeMa) / float64(n)
	t := &Table{
		model:  m,
		invH:   1 / h,
		depth:  make([]float64, n+1),
		heatS:  make([]float64, n+1),
		thick:  make([]float64, n+1),
		iso600: make([]float64, n+1),
		rateS:  make([]float64, n+1),
	}
	for i := 0; i <= n; i++ {
		s := float64(i) * h
		age := s * s
		if i == n {
			age = TableMaxAgeMa
		}
		if i == 0 {
			// Limits at age 0 of q·√t and (dd/dt)·√t, taken at a tiny age
			// where every model is in its half-space form.
			const tiny = 1e-12
			t.heatS[0] = m.HeatFlowMWm2(tiny) * math.Sqrt(tiny)
			t.rateS[0] = m.SubsidenceRateMPerMyr(tiny) * math.Sqrt(tiny)
		} else {
			t.heatS[i] = m.HeatFlowMWm2(age) * s
			t.rateS[i] = m.SubsidenceRateMPerMyr(age) * s
		}
		t.depth[i] = m.DepthM(age)
		t.thick[i] = m.ThermalThicknessKm(age)
		t.iso600[i] = m.IsothermDepthKm(600, age)
	}
	t.depthNodes = newFloat32Nodes(TableMaxAgeMa, t.depthSqrtAge)
	return t
}

// interp interpolates node values y at ageMa (0 ≤ ageMa ≤ TableMaxAgeMa) and
// returns the value and s = √ageMa.
func (t *Table) interp(y []float64, ageMa float64) (v, s float64) {
	s = math.Sqrt(ageMa)
	x := s * t.invH
	i := int(x)
	if i >= tableIntervals {
		i = tableIntervals - 1
	}
	f := x - float64(i)
	return y[i] + f*(y[i+1]-y[i]), s
}

func inTable(ageMa float64) bool { return ageMa >= 0 && ageMa <= TableMaxAgeMa }

// DepthM is the interpolated water depth (m, positive down).
func (t *Table) DepthM(ageMa float64) float64 {
	b := math.Float32bits(float32(ageMa))
	if j := uint(b >> Float32NodeShift); j < uint(len(t.depthNodes)) {
		return float64(t.depthNodes[j].At(b))
	}
	return t.depthSqrtAge(ageMa)
}

// depthSqrtAge is the depth from the √age layer (the model beyond it).
func (t *Table) depthSqrtAge(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.DepthM(ageMa)
	}
	v, _ := t.interp(t.depth, ageMa)
	return v
}

// HeatFlowMWm2 is the interpolated surface heat flow (mW/m²); +Inf at 0.
func (t *Table) HeatFlowMWm2(ageMa float64) float64 {
	p := t.heatNodes.load()
	if p == nil {
		p = t.buildHeatNodes()
	}
	n := *p
	b := math.Float32bits(float32(ageMa))
	if j := uint(b >> Float32NodeShift); j < uint(len(n)) {
		return float64(n[j].At(b))
	}
	return t.heatSqrtAge(ageMa)
}

func (t *Table) heatSqrtAge(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.HeatFlowMWm2(ageMa)
	}
	v, s := t.interp(t.heatS, ageMa)
	return v / s
}

// ThermalThicknessKm is the interpolated thermal thickness (km).
func (t *Table) ThermalThicknessKm(ageMa float64) float64 {
	p := t.thickNodes.load()
	if p == nil {
		p = t.buildThickNodes()
	}
	n := *p
	b := math.Float32bits(float32(ageMa))
	if j := uint(b >> Float32NodeShift); j < uint(len(n)) {
		return float64(n[j].At(b))
	}
	return t.thickSqrtAge(ageMa)
}

func (t *Table) thickSqrtAge(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.ThermalThicknessKm(ageMa)
	}
	v, _ := t.interp(t.thick, ageMa)
	return v
}

// DepthNodes is the table's depth (m) on bit-indexed float32 nodes in age
// (Ma) over [0, TableMaxAgeMa), for callers that fuse the lookup into their
// own loops (see Float32Nodes for the indexing and the loop). Ages outside
// it must be given DepthM.
func (t *Table) DepthNodes() Float32Nodes { return t.depthNodes }

// HeatFlowNodes is the table's heat flow (mW/m²) on bit-indexed float32
// nodes in age (Ma) over [0, TableMaxAgeMa), built on first use; ages outside
// it must be given HeatFlowMWm2.
func (t *Table) HeatFlowNodes() Float32Nodes {
	if p := t.heatNodes.load(); p != nil {
		return *p
	}
	return *t.buildHeatNodes()
}

func (t *Table) buildHeatNodes() *Float32Nodes {
	return t.heatNodes.build(TableMaxAgeMa, t.heatSqrtAge)
}

// ThermalThicknessNodes is the table's thermal thickness (km) on bit-indexed
// float32 nodes in age (Ma) over [0, TableMaxAgeMa), built on first use; ages
// outside it must be given ThermalThicknessKm.
func (t *Table) ThermalThicknessNodes() Float32Nodes {
	if p := t.thickNodes.load(); p != nil {
		return *p
	}
	return *t.buildThickNodes()
}

func (t *Table) buildThickNodes() *Float32Nodes {
	return t.thickNodes.build(TableMaxAgeMa, t.thickSqrtAge)
}

// Depth600CKm is the interpolated depth of the 600 °C isotherm below the
// seafloor (km), common practice as the limit of brittle faulting in oceanic
// lithosphere.
func (t *Table) Depth600CKm(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.IsothermDepthKm(600, ageMa)
	}
	v, _ := t.interp(t.iso600, ageMa)
	return v
}

// SubsidenceRateNodes is the table's subsidence rate dd/dt (m/Myr) on bit-indexed float32
// nodes in age (Ma) over [0, TableMaxAgeMa), built on first use, for loops that need the
// derivative of depth per cell (propagation of age uncertainty); ages outside it must be given
// SubsidenceRateMPerMyr. Like heat flow it grows like 1/√age, and the nodes resample
// SubsidenceRateMPerMyr as HeatFlowNodes resample heat flow.
func (t *Table) SubsidenceRateNodes() Float32Nodes {
	if p := t.rateNodes.load(); p != nil {
		return *p
	}
	return *t.rateNodes.build(TableMaxAgeMa, t.SubsidenceRateMPerMyr)
}

// SubsidenceRateMPerMyr is the interpolated dd/dt (m/Myr); +Inf at 0.
func (t *Table) SubsidenceRateMPerMyr(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.SubsidenceRateMPerMyr(ageMa)
	}
	v, s := t.interp(t.rateS, ageMa)
	return v / s
}

// DepthsM writes the predicted depth (m) of every age (Ma) in ages to out,
// which must be at least as long as ages. It equals DepthM of each age:
// NaN or negative ages give NaN, ages at or above TableMaxAgeMa are evaluated
// with the model. It does not allocate and runs on the calling goroutine:
// split large grids into row blocks across goroutines to use several cores.
func (t *Table) DepthsM(ages []float32, out []float32) {
	t.depthNodes.batchWithFallback(ages, out, t.depthSqrtAge)
}

// HeatFlowsMWm2 is the batch form of HeatFlowMWm2 (same contract as DepthsM;
// the first call of this or HeatFlowMWm2 builds the heat-flow nodes).
func (t *Table) HeatFlowsMWm2(ages []float32, out []float32) {
	t.HeatFlowNodes().batchWithFallback(ages, out, t.heatSqrtAge)
}

// ThermalThicknessesKm is the batch form of ThermalThicknessKm (same
// contract as DepthsM; the first call of this or ThermalThicknessKm builds
// the thickness nodes).
func (t *Table) ThermalThicknessesKm(ages []float32, out []float32) {
	t.ThermalThicknessNodes().batchWithFallback(ages, out, t.thickSqrtAge)
}
