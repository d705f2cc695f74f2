package thermal

import "math"

// halfSpace is half-space cooling: a semi-infinite mantle at Tm whose surface
// is held at Ts from age 0 (Turcotte & Schubert, Geodynamics, 2nd ed. 2002,
// §4.16 "cooling of the oceanic lithosphere" and §4.23 "ocean floor
// topography"; section numbers from memory).
//
//	T(z, t)  = Ts + (Tm − Ts) erf(z / (2√(κt)))
//	q(t)     = k (Tm − Ts) / √(π κ t)
//	w(t)     = 2 ρm α (Tm − Ts) / (ρm − ρw) · √(κ t / π)   (water-loaded subsidence)
//	z_θ(t)   = 2 √(κt) erfinv(θ),  θ = (T − Ts)/(Tm − Ts)   (isotherm depth)
//
// so the 0.9 thermal thickness is 2·erfinv(0.9)·√(κt) ≈ 2.32 √(κt).
type halfSpace struct {
	p Params
	derived
}

// derived holds the constants shared by the half-space and plate forms.
type derived struct {
	dT         float64 // Tm − Ts (K)
	kappaMyr   float64 // κ in m²/Myr
	depthCoef  float64 // half-space subsidence coefficient (m/Myr^½)
	heatCoef   float64 // half-space heat-flow coefficient (mW/m²·Myr^½)
	thickTheta float64 // erfinv(ThicknessFraction)
}

func newDerived(p Params) derived {
	dT := p.MantleTemperatureC - p.SurfaceTemperatureC
	kMyr := p.EffectiveDiffusivityM2s() * SecondsPerMyr
	rm, rw := p.MantleDensityKgM3, p.WaterDensityKgM3
	return derived{
		dT:         dT,
		kappaMyr:   kMyr,
		depthCoef:  2 * rm * p.ExpansivityPerK * dT / (rm - rw) * math.Sqrt(kMyr/math.Pi),
		heatCoef:   1000 * p.ConductivityWmK * dT / math.Sqrt(math.Pi*kMyr),
		thickTheta: math.Erfinv(ThicknessFraction),
	}
}

func newHalfSpace(p Params) *halfSpace { return &halfSpace{p: p, derived: newDerived(p)} }

func (h *halfSpace) Params() Params { return h.p }

// badAge reports ages the models do not accept: NaN and negative ages.
func badAge(t float64) bool { return !(t >= 0) }

// hsTemperatureC is the erf solution; zKm ≥ 0 and t > 0.
func (d *derived) hsTemperatureC(ts, zKm, t float64) float64 {
	return ts + d.dT*math.Erf(1000*zKm/(2*math.Sqrt(d.kappaMyr*t)))
}

// hsIsothermKm is the half-space isotherm depth for 0 < theta < 1, t > 0.
func (d *derived) hsIsothermKm(theta, t float64) float64 {
	return 2 * math.Sqrt(d.kappaMyr*t) * math.Erfinv(theta) / 1000
}

// TemperatureC is the erf solution; NaN for negative depth or age.
func (h *halfSpace) TemperatureC(depthKm, ageMa float64) float64 {
	if badAge(ageMa) || !(depthKm >= 0) {
		return math.NaN()
	}
	if ageMa == 0 {
		if depthKm == 0 {
			return h.p.SurfaceTemperatureC
		}
		return h.p.MantleTemperatureC
	}
	return h.hsTemperatureC(h.p.SurfaceTemperatureC, depthKm, ageMa)
}

// IsothermDepthKm is 2√(κt)·erfinv(θ) in km; 0 for temperatures at or below
// the surface temperature, NaN at or above the mantle temperature.
func (h *halfSpace) IsothermDepthKm(temperatureC, ageMa float64) float64 {
	if badAge(ageMa) || math.IsNaN(temperatureC) || temperatureC >= h.p.MantleTemperatureC {
		return math.NaN()
	}
	if temperatureC <= h.p.SurfaceTemperatureC || ageMa == 0 {
		return 0
	}
	return h.hsIsothermKm((temperatureC-h.p.SurfaceTemperatureC)/h.dT, ageMa)
}

// ThermalThicknessKm is 2·erfinv(0.9)·√(κt) ≈ 2.32√(κt) in km.
func (h *halfSpace) ThermalThicknessKm(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	return 2 * h.thickTheta * math.Sqrt(h.kappaMyr*ageMa) / 1000
}

// HeatFlowMWm2 is k(Tm − Ts)/√(πκt); +Inf at age 0.
func (h *halfSpace) HeatFlowMWm2(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	return h.heatCoef / math.Sqrt(ageMa)
}

// DepthM is the ridge depth plus the water-loaded subsidence.
func (h *halfSpace) DepthM(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	return h.p.RidgeDepthM + h.depthCoef*math.Sqrt(ageMa)
}

// SubsidenceRateMPerMyr is the derivative of DepthM: coef/(2√t); +Inf at 0.
func (h *halfSpace) SubsidenceRateMPerMyr(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	return h.depthCoef / (2 * math.Sqrt(ageMa))
}

// HeatFlowRateMWm2PerMyr is the derivative of HeatFlowMWm2: −q/(2t).
func (h *halfSpace) HeatFlowRateMWm2PerMyr(ageMa float64) float64 {
	if badAge(ageMa) {
		return math.NaN()
	}
	return -h.heatCoef / (2 * ageMa * math.Sqrt(ageMa))
}
