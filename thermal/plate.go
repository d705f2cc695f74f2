package thermal

import "math"

// plate is the cooling plate of constant thickness a: the base z = a is held
// at Tm, the surface at Ts, and the plate starts at Tm at the ridge (McKenzie
// 1967, J. Geophys. Res. 72, 6261–6273; Parsons & Sclater 1977, J. Geophys.
// Res. 82, 803–827, eqs. for temperature, depth and heat flow; Stein & Stein
// 1992 use the same form for GDH1). With y = π²κt/a²:
//
//	T(z,t) = Ts + (Tm − Ts) [ z/a + (2/π) Σ_{n≥1} (1/n) sin(nπz/a) e^{−n²y} ]
//	q(t)   = k (Tm − Ts)/a · [ 1 + 2 Σ_{n≥1} e^{−n²y} ]
//	d(t)   = dr + ρm α (Tm − Ts) a / (2(ρm − ρw)) · [ 1 − (8/π²) Σ_{n odd} e^{−n²y}/n² ]
//
// Each series is summed until a rigorous bound on its remainder falls below
// seriesTol of the sum (not a fixed number of terms). The bound uses the ratio
// of consecutive terms: after term n the remainder of Σ w_m e^{−m²y} with
// non-increasing weights is at most the next term divided by
// 1 − e^{−(2n+3)y}.
//
// Near age 0 the series converge slowly (about √(30/y) terms) while the
// half-space form is then exact to rounding: by the method of images the
// plate and half-space temperatures differ by at most about
// (Tm − Ts)·erfc(a/(2√(κt))). The plate therefore uses the half-space formulas
// while u = a/(2√(κt)) ≥ switchU = 5.1, where erfc(u) < 7e-13; the difference
// in depth and heat flow is smaller still (heat flow differs by the factor
// 1 + 2Σ e^{−m²a²/(κt)}). At the switch y = π²/(4u²) ≈ 0.095, so the
// series needs at most about 20 terms. At large ages (beyond 200 Ma and up to
// +Inf) the series terms underflow to zero and the plate tends to its steady
// state (linear geotherm, depth dr + ρm α (Tm − Ts) a / (2(ρm − ρw))).
type plate struct {
	p Params
	derived
	aM       float64 // plate thickness (m)
	aKm      float64
	beta     float64 // π²κ/a² (1/Myr)
	subsInf  float64 // ρm α ΔT a / (2(ρm − ρw)) (m)
	qInf     float64 // k ΔT / a (mW/m²)
	tSwitch  float64 // below this age (Ma) the half-space form is used
	thickIso float64 // temperature of the thermal base (°C)
}

// switchU is the value of a/(2√(κt)) above which the plate model is
// evaluated with the half-space formulas (see plate).
const switchU = 5.1

// seriesTol is the relative truncation tolerance of every series.
const seriesTol = 1e-14

// maxSeriesTerms caps every series; the error bound stops it long before for
// any age at or beyond the half-space switch (about 20 terms).
const maxSeriesTerms = 10000

func newPlate(p Params) *plate {
	d := newDerived(p)
	a := p.PlateThicknessKm * 1000
	rm, rw := p.MantleDensityKgM3, p.WaterDensityKgM3
	return &plate{
		p:        p,
		derived:  d,
		aM:       a,
		aKm:      p.PlateThicknessKm,
		beta:     math.Pi * math.Pi * d.kappaMyr / (a * a),
		subsInf:  rm * p.ExpansivityPerK * d.dT * a / (2 * (rm - rw)),
		qInf:     1000 * p.ConductivityWmK * d.dT / a,
		tSwitch:  a * a / (4 * switchU * switchU * d.kappaMyr),
		thickIso: p.SurfaceTemperatureC + ThicknessFraction*d.dT,
	}
}

func (m *plate) Params() Params { return m.p }

// sumExp is Σ_{n≥1} e^{−n²y} for y > 0, truncated by its error bound.
func sumExp(y float64) float64 {
	term := math.Exp(-y)
	ratio := math.Exp(-3 * y) // term(n+1)/term(n) = e^{−(2n+1)y}
	e2 := math.Exp(-2 * y)
	sum := 0.0
	for n := 1; n < maxSeriesTerms; n++ {
		sum += term
		next := term * ratio
		if next <= seriesTol*sum*(1-ratio*e2) {
			break
		}
		term = next
		ratio *= e2
	}
	return sum
}

// sumN2Exp is Σ_{n≥1} n² e^{−n²y} for y > 0, truncated by its error bound.
func sumN2Exp(y float64) float64 {
	e := math.Exp(-y)
	ratio := math.Exp(-3 * y)
	e2 := math.Exp(-2 * y)
	sum := 0.0
	for n := 1; n < maxSeriesTerms; n++ {
		fn := float64(n)
		sum += fn * fn * e
		next := e * ratio // e^{−(n+1)²y}
		// For m ≥ n+1 the weighted ratio is at most r.
		r := (fn + 2) * (fn + 2) / ((fn + 1) * (fn + 1)) * ratio * e2
		if r < 1 && (fn+1)*(fn+1)*next <= seriesTol*sum*(1-r) {
			break
		}
		e = next
		ratio *= e2
	}
	return sum
}

// sumOdd is Σ_{n odd} e^{−n²y}/n^(2·pow) for pow 0 or 1, y > 0, truncated by
// its error bound.
func sumOdd(y float64, pow int) float64 {
	term := math.Exp(-y)
	ratio := math.Exp(-8 * y) // e^{−((n+2)² − n²)y} = e^{−(4n+4)y} for n = 1
	e8 := ratio
	sum := 0.0
	for n := 1; n < maxSeriesTerms; n += 2 {
		fn := float64(n)
		w, wn := 1.0, 1.0
		if pow == 1 {
			w, wn = 1/(fn*fn), 1/((fn+2)*(fn+2))
		}
		sum += w * term
		next := term * ratio
		if wn*next <= seriesTol*sum*(1-ratio*e8) {
			break
		}
		term = next
		ratio *= e8
	}
	return sum
}

// thetaSeries returns the normalised plate temperature θ = (T − Ts)/(Tm − Ts)
// at zr = z/a in [0, 1] and its derivative dθ/dzr, for y > 0.
func thetaSeries(zr, y float64) (theta, dtheta float64) {
	theta, dtheta, _ = thetaSeriesTerms(zr, y)
	return theta, dtheta
}

// thetaSeriesTerms is thetaSeries that also reports how many terms the error
// bound let it sum.
func thetaSeriesTerms(zr, y float64) (theta, dtheta float64, terms int) {
	term := math.Exp(-y)
	ratio := math.Exp(-3 * y)
	e2 := math.Exp(-2 * y)
	var s, c float64
	n := 1
	for ; n < maxSeriesTerms; n++ {
		fn := float64(n)
		sn, cn := math.Sincos(fn * math.Pi * zr)
		s += sn * term / fn
		c += cn * term
		next := term * ratio
		// Both remainders are below next/(1 − e^{−(2n+3)y}); θ and dθ are O(1).
		if next <= seriesTol*(1-ratio*e2) {
			break
		}
		term = next
		ratio *= e2
	}
	return zr + 2/math.Pi*s, 1 + 2*c, n
}

// TemperatureC is the plate temperature; Tm below the plate, NaN for negative
// depth or age.
func (m *plate) TemperatureC(depthKm, ageMa float64) float64 {
	if badAge(ageMa) || !(depthKm >= 0) {
		return math.NaN()
	}
	if depthKm >= m.aKm {
		return m.p.MantleTemperatureC
	}
	if ageMa == 0 {
		if depthKm == 0 {
			return m.p.SurfaceTemperatureC
		}
		return m.p.MantleTemperatureC
	}
	if ageMa < m.tSwitch {
		return m.hsTemperatureC(m.p.SurfaceTemperatureC, depthKm, ageMa)
	}
	th, _ := thetaSeries(depthKm/m.aKm, m.beta*ageMa)
	return m.p.SurfaceTemperatureC + m.dT*th
}

// IsothermDepthKm solves T(z) = temperatureC for z in [0, a] by safeguarded
// Newton iteration on the series (the geotherm increases with depth), or by
// the half-space formula below the switch age. 0 at or below the surface
// temperature, a at the mantle temperature, NaN above it.
func (m *plate) IsothermDepthKm(temperatureC, ageMa float64) float64 {
	if badAge(ageMa) || math.IsNaN(temperatureC) || temperatureC > m.p.MantleTemperatureC {
		return math.NaN()
	}
	if temperatureC == m.p.MantleTemperatureC {
		return m.aKm
	}
	if temperatureC <= m.p.SurfaceTemperatureC || ageMa == 0 {
		return 0
	}
	target := (temperatureC - m.p.SurfaceTemperatureC) / m.dT
	if ageMa < m.tSwitch {
		return m.hsIsothermKm(target, ageMa)
	}
	if math.IsInf(ageMa, 1) {
		return target * m.aKm
	}
	y := m.beta * ageMa
	lo, hi := 0.0, 1.0 // θ(lo) < target < θ(hi)
	zr := math.Min(m.hsIsothermKm(target, ageMa)/m.aKm, target)
	for i := 0; i < 200; i++ {
		th, dth := thetaSeries(zr, y)
		f := th - target
		if f < 0 {
			lo = zr
		} else {
			hi = zr
		}
		next := zr - f/dth
		if !(next > lo && next < hi) || dth <= 0 {
			next = 0.5 * (lo + hi)
		}
		if math.Abs(next-zr) < 1e-13 || hi-lo < 1e-13 {
			zr = next
			break
		}
		zr = next
	}
	return zr * m.aKm
}

// ThermalThicknessKm is the depth of Ts + 0.9 (Tm − Ts); it tends to 0.9 a.
func (m *plate) ThermalThicknessKm(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	if ageMa < m.tSwitch {
		return 2 * m.thickTheta * math.Sqrt(m.kappaMyr*ageMa) / 1000
	}
	return m.IsothermDepthKm(m.thickIso, ageMa)
}

// HeatFlowMWm2 is the plate heat flow; +Inf at age 0.
func (m *plate) HeatFlowMWm2(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	if ageMa < m.tSwitch {
		return m.heatCoef / math.Sqrt(ageMa)
	}
	return m.qInf * (1 + 2*sumExp(m.beta*ageMa))
}

// DepthM is the plate water depth (m, positive down).
func (m *plate) DepthM(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	if ageMa < m.tSwitch {
		return m.p.RidgeDepthM + m.depthCoef*math.Sqrt(ageMa)
	}
	return m.p.RidgeDepthM + m.subsInf*(1-8/(math.Pi*math.Pi)*sumOdd(m.beta*ageMa, 1))
}

// SubsidenceRateMPerMyr is dd/dt = ρm α ΔT a/(2(ρm − ρw)) · (8β/π²) Σ_{n odd} e^{−n²y},
// β = π²κ/a² (the term-by-term derivative of DepthM).
func (m *plate) SubsidenceRateMPerMyr(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	if ageMa < m.tSwitch {
		return m.depthCoef / (2 * math.Sqrt(ageMa))
	}
	return m.subsInf * 8 * m.beta / (math.Pi * math.Pi) * sumOdd(m.beta*ageMa, 0)
}

// HeatFlowRateMWm2PerMyr is dq/dt = −2β (k ΔT/a) Σ n² e^{−n²y}.
func (m *plate) HeatFlowRateMWm2PerMyr(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	if ageMa < m.tSwitch {
		return -m.heatCoef / (2 * ageMa * math.Sqrt(ageMa))
	}
	return -2 * m.beta * m.qInf * sumN2Exp(m.beta*ageMa)
}
