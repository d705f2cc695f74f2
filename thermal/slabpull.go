package thermal

import (
	"math"

	"gonum.org/v1/gonum/integrate/quad"
)

// SlabPullNPerM is the slab-pull force per unit length of trench (N/m): the
// down-dip component of the weight of the thermal density excess of a slab
// slabLengthKm long (measured along dip) dipping at dipDeg, whose thermal
// structure is the cooling model's profile at the arrival age ageMa, frozen
// (no heating during descent, an upper bound):
//
//	F = g sin(dip) L ρm α ∫₀^a (Tm − T(z, t)) dz
//
// (Turcotte & Schubert, Geodynamics, 2nd ed. 2002, chapter 6, slab pull
// section, from memory). For half-space cooling ∫₀^∞ (Tm − T) dz =
// (Tm − Ts) 2√(κt/π), so F = 2 g sin(dip) L ρm α (Tm − Ts) √(κt/π). The
// integral is evaluated numerically (gonum Gauss–Legendre) from the model's
// own TemperatureC, to the plate base for plate models. The total negative
// buoyancy (weight excess per trench length) is F / sin(dip). NaN for a
// negative or NaN age, a negative or non-finite length, or a dip outside
// (0, 90]°; 0 at age 0 or zero length.
func SlabPullNPerM(m Model, ageMa, slabLengthKm, dipDeg float64) float64 {
	if badAge(ageMa) || math.IsInf(ageMa, 1) || !(slabLengthKm >= 0) || math.IsInf(slabLengthKm, 1) || !(dipDeg > 0 && dipDeg <= 90) {
		return math.NaN()
	}
	p := m.Params()
	return GravityMs2 * math.Sin(dipDeg*math.Pi/180) * slabLengthKm * 1000 *
		p.MantleDensityKgM3 * p.ExpansivityPerK * deficitIntegralKM(m, ageMa)
}

// deficitIntegralKM is ∫₀^a (Tm − T(z, t)) dz in K·m over the lithosphere of
// age t (a the plate base, or 12·2√(κt) for the half-space where the deficit
// is erfc(12) ≈ 1e-64 of its surface value).
func deficitIntegralKM(m Model, ageMa float64) float64 {
	if ageMa == 0 {
		return 0
	}
	p := m.Params()
	zMaxKm := slabBaseKm(p, ageMa, 24)
	tm := p.MantleTemperatureC
	f := func(zKm float64) float64 { return tm - m.TemperatureC(zKm, ageMa) }
	const panels = 16
	s := 0.0
	for i := 0; i < panels; i++ {
		a := zMaxKm * float64(i) / panels
		b := zMaxKm * float64(i+1) / panels
		s += quad.Fixed(f, a, b, 16, quad.Legendre{}, 0)
	}
	return s * 1000
}

// slabBaseKm is the thickness taken for the cooled layer of age t: k·√(κt),
// or the plate thickness when that is thinner.
func slabBaseKm(p Params, ageMa, k float64) float64 {
	kappaMyr := p.EffectiveDiffusivityM2s() * SecondsPerMyr
	z := k * math.Sqrt(kappaMyr*ageMa) / 1000
	if p.Kind == KindPlate && z > p.PlateThicknessKm {
		z = p.PlateThicknessKm
	}
	return z
}

// ThermalParameterKm is the slab thermal parameter φ = t · v · sin(dip) in km
// (Kirby, Durham & Stern 1991, Science 252, 216–225; Kirby, Stein, Okal &
// Rubie 1996, Rev. Geophys. 34, 261–306; from memory): the arrival age t in
// Ma times the convergence rate v in mm/yr (1 Ma × 1 mm/yr = 1 km) times the
// sine of the dip, i.e. age × vertical descent rate. NaN for a negative or
// non-finite input or a dip outside (0, 90]°.
func ThermalParameterKm(ageMa, convergenceMmYr, dipDeg float64) float64 {
	if badAge(ageMa) || math.IsInf(ageMa, 1) || !(convergenceMmYr >= 0) || math.IsInf(convergenceMmYr, 1) || !(dipDeg > 0 && dipDeg <= 90) {
		return math.NaN()
	}
	return ageMa * convergenceMmYr * math.Sin(dipDeg*math.Pi/180)
}

// SlabCoreIsothermC is the isotherm the slab-core depth is reported for (°C).
const SlabCoreIsothermC = 600

// SlabCoreDepthKm is the depth (km below the trench) down to which the
// coldest part of the slab interior stays below isothermC, in the frame of
// McKenzie (1969, Geophys. J. R. Astron. Soc. 18, 1–32) as used by Molnar,
// Freedman & Shih (1979, Geophys. J. R. Astron. Soc. 56, 41–54) to relate the
// depth of an isotherm in a slab to its thermal parameter (from memory): the
// slab enters with the model's profile T(z, ageMa) across a thickness a,
// both faces are held at Tm once it is in the mantle, heat flows only across
// the slab (no down-dip conduction, adiabatic, phase or shear heating), and
// the time s spent in the mantle gives depth v·s·sin(dip). The temperature
// deficit is the exact Fourier sine series
//
//	θ(z, s) = Σ bₙ sin(nπz/a) exp(−n²π²κs/a²), bₙ = (2/a) ∫₀^a θ(z, 0) sin(nπz/a) dz
//
// and s is found by bisection on max_z θ(z, s) = Tm − isothermC (which falls
// monotonically with s by the maximum principle). For half-space cooling a is
// 7√(κt) (the deficit there is erfc(3.5) ≈ 7e-7 of its surface value), so
// the depth is proportional to φ; for plate models a is the plate
// thickness when thinner. 0 at age 0 or zero convergence, NaN on bad input
// (as ThermalParameterKm) or an isotherm outside (Ts, Tm).
func SlabCoreDepthKm(m Model, ageMa, convergenceMmYr, dipDeg, isothermC float64) float64 {
	phi := ThermalParameterKm(ageMa, convergenceMmYr, dipDeg)
	p := m.Params()
	if math.IsNaN(phi) || !(isothermC > p.SurfaceTemperatureC && isothermC < p.MantleTemperatureC) {
		return math.NaN()
	}
	if phi == 0 {
		return 0
	}
	const modes, grid = 200, 401
	aKm := slabBaseKm(p, ageMa, 7)
	a := aKm * 1000
	kappa := p.EffectiveDiffusivityM2s()
	tm := p.MantleTemperatureC
	// θ(z, 0) at the nodes of a composite 64-panel, 16-point Gauss–Legendre rule, shared by
	// every coefficient.
	const panels, order = 64, 16
	xs, ws := make([]float64, order), make([]float64, order)
	quad.Legendre{}.FixedLocations(xs, ws, -1, 1)
	zs, wt := make([]float64, 0, panels*order), make([]float64, 0, panels*order)
	for i := 0; i < panels; i++ {
		lo, hi := aKm*float64(i)/panels, aKm*float64(i+1)/panels
		for k := range xs {
			z := lo + (xs[k]+1)/2*(hi-lo)
			zs = append(zs, z)
			wt = append(wt, ws[k]*(hi-lo)/2*(tm-m.TemperatureC(z, ageMa)))
		}
	}
	b := make([]float64, modes)
	for n := range b {
		k := float64(n+1) * math.Pi / aKm
		s := 0.0
		for i, z := range zs {
			s += wt[i] * math.Sin(k*z)
		}
		b[n] = 2 / aKm * s
	}
	sinTable := make([]float64, grid*modes) // sin(n·π·j/(grid−1))
	for j := 0; j < grid; j++ {
		for n := 0; n < modes; n++ {
			sinTable[j*modes+n] = math.Sin(float64(n+1) * math.Pi * float64(j) / float64(grid-1))
		}
	}
	// The coldest point over a grid across the slab at time sSec in the mantle (K).
	maxDeficit := func(sSec float64) float64 {
		c := make([]float64, 0, modes)
		for n := range b {
			fn := float64(n + 1)
			e := math.Exp(-fn * fn * math.Pi * math.Pi * kappa * sSec / (a * a))
			if e < 1e-16 {
				break
			}
			c = append(c, b[n]*e)
		}
		best := 0.0
		for j := 1; j < grid-1; j++ {
			th := 0.0
			for n, cn := range c {
				th += cn * sinTable[j*modes+n]
			}
			best = max(best, th)
		}
		return best
	}
	target := tm - isothermC
	lo, hi := 0.0, a*a/(math.Pi*math.Pi*kappa)
	for maxDeficit(hi) > target {
		lo, hi = hi, 2*hi
	}
	for i := 0; i < 60 && hi-lo > 1e-7*hi; i++ {
		mid := (lo + hi) / 2
		if maxDeficit(mid) > target {
			lo = mid
		} else {
			hi = mid
		}
	}
	sMyr := (lo + hi) / 2 / SecondsPerMyr
	// v in mm/yr × s in Myr = km along dip.
	return convergenceMmYr * sMyr * math.Sin(dipDeg*math.Pi/180)
}
