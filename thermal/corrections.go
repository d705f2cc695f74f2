package thermal

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/integrate/quad"
)

// Compaction is an exponential porosity–depth law φ(z) = φ0·e^{−c·z} for a
// sediment type (Sclater & Christie 1980, J. Geophys. Res. 85, 3711–3739).
type Compaction struct {
	// Name is the sediment type, e.g. "shale".
	Name string `json:"name"`
	// SurfacePorosity is φ0, the porosity at the seafloor (fraction 0..1).
	SurfacePorosity float64 `json:"surface_porosity"`
	// DecayPerKm is c, the porosity decay constant (1/km).
	DecayPerKm float64 `json:"decay_per_km"`
	// GrainDensityKgM3 is the density of the sediment grains (kg/m³).
	GrainDensityKgM3 float64 `json:"grain_density_kg_m3"`
}

// Sclater & Christie (1980), North Sea sediments (values from memory):
// shale φ0 = 0.63, c = 0.51 /km, grains 2720 kg/m³; sand φ0 = 0.49,
// c = 0.27 /km, 2650 kg/m³; shaly sand φ0 = 0.56, c = 0.39 /km, 2680 kg/m³.
var compactions = map[string]Compaction{
	"shale":      {Name: "shale", SurfacePorosity: 0.63, DecayPerKm: 0.51, GrainDensityKgM3: 2720},
	"sand":       {Name: "sand", SurfacePorosity: 0.49, DecayPerKm: 0.27, GrainDensityKgM3: 2650},
	"shaly-sand": {Name: "shaly-sand", SurfacePorosity: 0.56, DecayPerKm: 0.39, GrainDensityKgM3: 2680},
}

// CompactionNames lists the sediment types CompactionByName knows, sorted.
func CompactionNames() []string {
	names := make([]string, 0, len(compactions))
	for n := range compactions {
		names = append(names, n)
	}
	sort.Strings(names)
	return names
}

// compactionKeyReplacer spells a sediment type's name as the table's keys do.
var compactionKeyReplacer = strings.NewReplacer(" ", "-", "_", "-")

// CompactionByName returns the Sclater & Christie (1980) law for "shale",
// "sand" or "shaly-sand" (case-insensitive; "shaly sand" and "shaly_sand"
// are accepted too).
func CompactionByName(name string) (Compaction, error) {
	if c, ok := compactions[name]; ok { // the usual spelling: no copies
		return c, nil
	}
	key := compactionKeyReplacer.Replace(strings.ToLower(strings.TrimSpace(name)))
	if c, ok := compactions[key]; ok {
		return c, nil
	}
	return Compaction{}, fmt.Errorf("unknown sediment type %q: choose one of %s", name, strings.Join(CompactionNames(), ", "))
}

// Validate checks that the law is physical: 0 ≤ φ0 < 1, c in (0, 10] /km and
// grain density between 1500 and 3500 kg/m³.
func (c Compaction) Validate() error {
	switch {
	case !(c.SurfacePorosity >= 0 && c.SurfacePorosity < 1):
		return fmt.Errorf("surface_porosity = %g is outside the allowed range 0 to below 1", c.SurfacePorosity)
	case !(c.DecayPerKm > 0 && c.DecayPerKm <= 10):
		return fmt.Errorf("decay_per_km = %g is outside the allowed range above 0 to 10 /km", c.DecayPerKm)
	case !(c.GrainDensityKgM3 >= 1500 && c.GrainDensityKgM3 <= 3500):
		return fmt.Errorf("grain_density_kg_m3 = %g is outside the allowed range 1500 to 3500 kg/m³", c.GrainDensityKgM3)
	}
	return nil
}

// PorosityAt is φ(z) = φ0·e^{−c·z} at depthM metres below the seafloor.
func (c Compaction) PorosityAt(depthM float64) float64 {
	return c.SurfacePorosity * math.Exp(-c.DecayPerKm*depthM/1000)
}

// bulkDensity is ρb(z) = φ ρw + (1 − φ) ρg of water-saturated sediment.
func (c Compaction) bulkDensity(depthM, waterKgM3 float64) float64 {
	phi := c.PorosityAt(depthM)
	return phi*waterKgM3 + (1-phi)*c.GrainDensityKgM3
}

// sedimentQuadPoints is the Gauss–Legendre order used per integral. The
// integrand is a smooth exponential; 24 points are exact to rounding for
// c·thickness up to about 20 (tested against the closed form).
const sedimentQuadPoints = 24

// SedimentCorrectionM is the isostatic sediment unloading correction (m):
// the amount to ADD to an observed seafloor depth to get the depth the
// basement would have under water alone, with the sediment removed and the
// lithosphere rebounding in Airy isostasy (the backstripping form of
// Sclater & Christie 1980):
//
//	Δ = ∫₀ˢ (ρm − ρb(z)) dz / (ρm − ρw),   ρb = φ ρw + (1 − φ) ρg,  φ = φ0 e^{−cz}
//
// where S is the present (compacted) sediment thickness. The corrected depth
// (observed + Δ) lies between the seafloor and the basement: unloading lets
// the basement rise by S − Δ. The integral is evaluated numerically with
// gonum's Gauss–Legendre quadrature. NaN for negative or NaN thickness or
// an invalid law; mantle density must exceed water density.
func SedimentCorrectionM(thicknessM float64, c Compaction, mantleKgM3, waterKgM3 float64) float64 {
	if !(thicknessM >= 0) || c.Validate() != nil || !(mantleKgM3 > waterKgM3) || !(waterKgM3 > 0) {
		return math.NaN()
	}
	if thicknessM == 0 {
		return 0
	}
	if math.IsInf(thicknessM, 1) {
		return math.Inf(1)
	}
	f := func(z float64) float64 { return mantleKgM3 - c.bulkDensity(z, waterKgM3) }
	return quad.Fixed(f, 0, thicknessM, sedimentQuadPoints, quad.Legendre{}, 0) / (mantleKgM3 - waterKgM3)
}

// SedimentCorrector evaluates SedimentCorrectionM quickly for grids from a
// table uniform in thickness (spacing sedimentStepM, linear interpolation).
// The correction's curvature is at most (ρg − ρw)·φ0·c/(ρm − ρw), below
// 3e-4 /m for the Sclater & Christie laws, so the interpolation error
// h²/8·3e-4 stays below 4 mm. Thicknesses above MaxSedimentTableM are
// integrated directly.
//
// The batch form CorrectionsM reads a second table resampled from the first
// (and from direct integration above MaxSedimentTableM) on bit-indexed
// float32 nodes over [0, SedimentNodesMaxM) m (Float32Nodes, built on first
// use, about 280 KiB). The correction of an exponential porosity law has
// f″ = (ρg − ρw)·φ0·c·e^(−c·s)/(ρm − ρw) and the nodes a spacing
// h ≤ s/256, so they add at most s²·f″/524288, largest at s = 2/c:
// 4·(ρg − ρw)·φ0·e^−2/((ρm − ρw)·c·524288), under 1.5 mm for the built-in
// laws (c ≥ 0.27 /km), plus float32 rounding. Safe for concurrent use.
type SedimentCorrector struct {
	c                 Compaction
	mantleKgM3, water float64
	nodes             []float64
	bits              lazyNodes
}

const (
	// MaxSedimentTableM is the thickest sediment the SedimentCorrector table
	// covers (m); thicker columns are integrated directly.
	MaxSedimentTableM = 20000.0
	sedimentStepM     = 10.0
	// SedimentNodesMaxM (2^15 m) is the end of the SedimentCorrector's
	// bit-indexed float32 table (see Nodes); CorrectionsM integrates thicker
	// columns directly.
	SedimentNodesMaxM = 1 << 15
)

// NewSedimentCorrector tabulates SedimentCorrectionM for one law and pair of
// densities (mantle 2800–3600, water 950–1100 kg/m³). It returns an error
// for an invalid law or densities.
func NewSedimentCorrector(c Compaction, mantleKgM3, waterKgM3 float64) (*SedimentCorrector, error) {
	if err := c.Validate(); err != nil {
		return nil, err
	}
	if err := rangeMantleRho.check(mantleKgM3); err != nil {
		return nil, err
	}
	if err := rangeWaterRho.check(waterKgM3); err != nil {
		return nil, err
	}
	n := int(MaxSedimentTableM / sedimentStepM)
	s := &SedimentCorrector{c: c, mantleKgM3: mantleKgM3, water: waterKgM3,
		nodes: make([]float64, n+1)}
	// Integrate node to node (cumulative), each piece by 4-point quadrature
	// (exact to rounding over 10 m of a smooth exponential).
	f := func(z float64) float64 { return mantleKgM3 - c.bulkDensity(z, waterKgM3) }
	for i := 1; i <= n; i++ {
		z0, z1 := float64(i-1)*sedimentStepM, float64(i)*sedimentStepM
		s.nodes[i] = s.nodes[i-1] + quad.Fixed(f, z0, z1, 4, quad.Legendre{}, 0)/(mantleKgM3-waterKgM3)
	}
	return s, nil
}

// CorrectionM is SedimentCorrectionM for this corrector's law and densities.
func (s *SedimentCorrector) CorrectionM(thicknessM float64) float64 {
	if !(thicknessM >= 0) {
		return math.NaN()
	}
	if thicknessM >= MaxSedimentTableM {
		return SedimentCorrectionM(thicknessM, s.c, s.mantleKgM3, s.water)
	}
	x := thicknessM / sedimentStepM
	i := int(x)
	f := x - float64(i)
	return s.nodes[i] + f*(s.nodes[i+1]-s.nodes[i])
}

// CorrectionsM writes the correction (m) of every thickness (m) to out,
// which must be at least as long: CorrectionM within the float32 node table
// described at SedimentCorrector (within 1.5 mm plus float32 rounding) and
// exactly CorrectionM beyond it. NaN or negative thickness gives NaN. It does
// not allocate (after the first call builds the node table) and runs on the
// calling goroutine.
func (s *SedimentCorrector) CorrectionsM(thicknessM []float32, out []float32) {
	s.Nodes().batchWithFallback(thicknessM, out, s.CorrectionM)
}

// Nodes is the correction (m) on bit-indexed float32 nodes in thickness (m)
// over [0, SedimentNodesMaxM), built on first use, for callers that fuse the
// lookup into their own loops (see Float32Nodes). Thicknesses outside it must
// be given CorrectionM.
func (s *SedimentCorrector) Nodes() Float32Nodes {
	if p := s.bits.load(); p != nil {
		return *p
	}
	return *s.buildNodes()
}

func (s *SedimentCorrector) buildNodes() *Float32Nodes {
	return s.bits.build(SedimentNodesMaxM, s.CorrectionM)
}

// Crust correction constants (common practice, no source): normal oceanic
// crust is about 7 km thick with a mean density near 2900 kg/m³.
const (
	// ReferenceCrustKm is the crustal thickness the models assume (km).
	ReferenceCrustKm = 7.0
	// DefaultCrustDensityKgM3 is the mean oceanic crust density (kg/m³).
	DefaultCrustDensityKgM3 = 2900.0
)

// CrustCorrectionM is the Airy-isostatic depth correction (m) for crust of
// thickness crustKm that differs from the ReferenceCrustKm the models assume:
//
//	Δ = (h_c − 7 km) · (ρm − ρc) / (ρm − ρw)
//
// ADD it to an observed (sediment-corrected) depth to reduce it to the
// reference crust: thicker, lighter crust stands shallower, so the correction
// is positive (deeper) for crust thicker than 7 km. With ρc = 2900,
// ρm = 3330, ρw = 1000 kg/m³ each extra kilometre of crust is worth about
// 185 m. NaN for negative or NaN thickness or ρm ≤ ρw.
func CrustCorrectionM(crustKm, crustKgM3, mantleKgM3, waterKgM3 float64) float64 {
	if !(crustKm >= 0) || !(mantleKgM3 > waterKgM3) || math.IsNaN(crustKgM3) {
		return math.NaN()
	}
	return (crustKm - ReferenceCrustKm) * 1000 * (mantleKgM3 - crustKgM3) / (mantleKgM3 - waterKgM3)
}

// ResidualDepthM is the residual depth (m): predictedM − correctedObservedM,
// both water depths positive down. POSITIVE MEANS THE SEAFLOOR IS SHALLOWER
// THAN THE MODEL PREDICTS (e.g. over a swell); negative means deeper. This is
// the one place the sign convention is defined.
func ResidualDepthM(predictedM, correctedObservedM float64) float64 {
	return predictedM - correctedObservedM
}
