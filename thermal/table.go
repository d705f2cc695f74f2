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
	// but not kept.
	MaxCachedTables = 256
)

// Table is a lookup table of one model over 0..TableMaxAgeMa with linear
// interpolation in √age. It is read-only after construction and safe for
// concurrent use. Every method accepts any age: NaN and negative ages give
// NaN, ages above TableMaxAgeMa fall back to the model. Like the model's, its
// depths are estimates, not for navigation (see Model).
type Table struct {
	model Model
	invH  float64 // intervals per Ma^½
	// Node values, len tableIntervals+1.
	depth, heatS, thick, iso600, rateS []float64
	// depth32 interleaves (value, slope) per interval for the float32 hot
	// path, padded with constant intervals so rounding at the top never
	// indexes past the end.
	depth32 []float32
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
	const pad = 4
	t.depth32 = make([]float32, 2*(n+pad))
	for i := 0; i < n+pad; i++ {
		if i < n {
			t.depth32[2*i] = float32(t.depth[i])
			t.depth32[2*i+1] = float32(t.depth[i+1] - t.depth[i])
		} else {
			t.depth32[2*i] = float32(t.depth[n])
		}
	}
	return t
}

// Model returns the model the table was built from.
func (t *Table) Model() Model { return t.model }

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

var nan32 = float32(math.NaN())

func inTable(ageMa float64) bool { return ageMa >= 0 && ageMa <= TableMaxAgeMa }

// DepthM is the interpolated water depth (m, positive down).
func (t *Table) DepthM(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.DepthM(ageMa)
	}
	v, _ := t.interp(t.depth, ageMa)
	return v
}

// HeatFlowMWm2 is the interpolated surface heat flow (mW/m²); +Inf at 0.
func (t *Table) HeatFlowMWm2(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.HeatFlowMWm2(ageMa)
	}
	v, s := t.interp(t.heatS, ageMa)
	return v / s
}

// ThermalThicknessKm is the interpolated thermal thickness (km).
func (t *Table) ThermalThicknessKm(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.ThermalThicknessKm(ageMa)
	}
	v, _ := t.interp(t.thick, ageMa)
	return v
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

// SubsidenceRateMPerMyr is the interpolated dd/dt (m/Myr); +Inf at 0.
func (t *Table) SubsidenceRateMPerMyr(ageMa float64) float64 {
	if !inTable(ageMa) {
		return t.model.SubsidenceRateMPerMyr(ageMa)
	}
	v, s := t.interp(t.rateS, ageMa)
	return v / s
}

// DepthsM writes the predicted depth (m) of every age (Ma) in ages to out,
// which must be at least as long as ages. NaN or negative ages give NaN;
// ages above TableMaxAgeMa are evaluated with the model. It does not allocate
// and runs on the calling goroutine: split large grids into row blocks across
// goroutines to use several cores.
func (t *Table) DepthsM(ages []float32, out []float32) {
	if len(out) < len(ages) {
		panic("thermal: DepthsM output slice shorter than the ages")
	}
	out = out[:len(ages)]
	tab := t.depth32
	inv := float32(t.invH)
	const maxAge = float32(TableMaxAgeMa)
	for i, a := range ages {
		if a >= 0 && a <= maxAge {
			x := float32(math.Sqrt(float64(a))) * inv
			j := int(x)
			f := x - float32(j)
			p := tab[2*j : 2*j+2 : 2*j+2]
			out[i] = p[0] + f*p[1]
		} else if !(a > maxAge) {
			out[i] = nan32 // NaN or negative
		} else {
			out[i] = float32(t.model.DepthM(float64(a)))
		}
	}
}

// HeatFlowsMWm2 is the batch form of HeatFlowMWm2 (same contract as DepthsM).
func (t *Table) HeatFlowsMWm2(ages []float32, out []float32) {
	t.batch(ages, out, t.HeatFlowMWm2)
}

// ThermalThicknessesKm is the batch form of ThermalThicknessKm (same
// contract as DepthsM).
func (t *Table) ThermalThicknessesKm(ages []float32, out []float32) {
	t.batch(ages, out, t.ThermalThicknessKm)
}

func (t *Table) batch(ages, out []float32, f func(float64) float64) {
	if len(out) < len(ages) {
		panic("thermal: batch output slice shorter than the ages")
	}
	out = out[:len(ages)]
	for i, a := range ages {
		out[i] = float32(f(float64(a)))
	}
}
