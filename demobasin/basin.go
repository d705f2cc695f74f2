package demobasin

import (
	"crypto/sha256"
	"encoding/binary"
	"encoding/hex"
	"fmt"
	"math"
	"math/rand/v2"
	"runtime"
	"sync"

	"ridgeflank/geo"
	"ridgeflank/thermal"
)

// Label is put in every name, title and attribute of the demo data.
const Label = "SYNTHETIC"

// Title is the basin's full name as shown to users.
const Title = "Quillon Basin (SYNTHETIC)"

// Caution accompanies every file and listing of the demo data.
const Caution = "SYNTHETIC demo data of an invented ocean basin, not real seafloor. " +
	"Not for navigation: use official nautical charts, surveys and the local hydrographic authority."

// Footprint of the basin (outer cell edges, degrees): open ocean of the South Pacific, chosen
// far from any coast; everything inside is invented.
const (
	WestLon  = -150.0
	EastLon  = -120.0
	SouthLat = -45.0
	NorthLat = -20.0
)

// Defaults of Options.
const (
	DefaultCellDeg   = 0.05 // 600 × 500 cells
	DefaultSeed      = 1
	DefaultNoiseStdM = 20.0
)

// The physics the basin is built with: the GDH1 plate model (Stein & Stein 1992) for depth
// versus age, and the Sclater & Christie (1980) shale compaction law for sediment loading, with
// GDH1's mantle and water densities.
const (
	ModelID        = thermal.IDGDH1
	CompactionName = "shale"
)

// Spreading: the half-spreading rate (mm/yr, the same as km/Myr) west and east of the ridge.
const (
	HalfRateWestMmYr = 25.0
	HalfRateEastMmYr = 35.0
)

// The injected swell: a Gaussian dome of height SwellAmplitudeM·exp(−(r/SwellRadiusKm)²), r the
// great-circle distance from (SwellCentreLon, SwellCentreLat).
const (
	SwellCentreLon  = -143.5
	SwellCentreLat  = -29.3
	SwellAmplitudeM = 400.0
	SwellRadiusKm   = 300.0
)

// Fracture-zone troughs along each transform latitude: depth FractureZoneTroughM·exp(−(d/W)²),
// d the north–south distance from the transform, W = FractureZoneWidthKm.
const (
	FractureZoneTroughM = 250.0
	FractureZoneWidthKm = 12.0
)

// Age uncertainty (1σ, Ma), invented for the demo: AgeSigmaBaseMa + AgeSigmaFraction·age, plus
// AgeSigmaFractureZoneMa·exp(−(d/W)²) across each fracture zone (W = FractureZoneWidthKm), where
// the picks of an age model are least certain.
const (
	AgeSigmaBaseMa         = 0.3
	AgeSigmaFraction       = 0.04
	AgeSigmaFractureZoneMa = 4.0
)

// Sediment thickness: pelagic sediment accumulating at PelagicRateMPerMyr with age, plus a wedge
// thinning westwards from the invented Quillon margin along the east edge (lon −120):
// MarginSedimentM·exp(−d/MarginDecayKm), d the distance from the margin.
const (
	PelagicRateMPerMyr = 6.0
	MarginLon          = EastLon
	MarginSedimentM    = 1800.0
	MarginDecayKm      = 300.0
)

// EarthRadiusKm is the mean Earth radius used for distances in the generator (IUGG mean radius
// R1 = 6371.0088 km, rounded; common practice).
const EarthRadiusKm = 6371.0

// RidgeSegment is one north–south spreading segment at longitude Lon between two latitudes;
// neighbouring segments are offset by transform faults at their shared latitude.
type RidgeSegment struct {
	Lon, SouthLat, NorthLat float64
}

// Seamount is a Gaussian cone of height HeightM·exp(−(r/RadiusKm)²) on the seafloor.
type Seamount struct {
	Name     string
	Lon, Lat float64
	HeightM  float64
	RadiusKm float64
}

var ridgeSegments = []RidgeSegment{
	{Lon: -134.0, SouthLat: -26.0, NorthLat: NorthLat},
	{Lon: -136.5, SouthLat: -32.5, NorthLat: -26.0},
	{Lon: -134.8, SouthLat: -38.5, NorthLat: -32.5},
	{Lon: -137.2, SouthLat: SouthLat, NorthLat: -38.5},
}

var seamounts = []Seamount{
	{"Quillon Seamount A (SYNTHETIC)", -129.6, -21.2, 2600, 18},
	{"Quillon Seamount B (SYNTHETIC)", -128.5, -22.1, 2300, 16},
	{"Quillon Seamount C (SYNTHETIC)", -127.4, -23.0, 2000, 15},
	{"Quillon Seamount D (SYNTHETIC)", -126.3, -23.9, 1700, 14},
	{"Quillon Seamount E (SYNTHETIC)", -125.2, -24.8, 1400, 13},
}

// Seamounts returns the injected seamount chain, north-west to south-east.
func Seamounts() []Seamount { return append([]Seamount(nil), seamounts...) }

// TransformLats returns the latitudes of the transform faults (and fracture zones).
func TransformLats() []float64 {
	var l []float64
	for _, s := range ridgeSegments[1:] {
		l = append(l, s.NorthLat)
	}
	return l
}

// Options control Generate. The zero value gives the default basin.
type Options struct {
	// Seed of the noise (0 means DefaultSeed). The same seed always gives the same grids.
	Seed uint64
	// CellDeg is the cell size in degrees (0 means DefaultCellDeg); between 0.01 and 0.5 and
	// dividing the 30° × 25° footprint into whole cells.
	CellDeg float64
	// NoiseStdM is the standard deviation of the white noise added to the depth (m); 0 means
	// DefaultNoiseStdM, a negative value means no noise.
	NoiseStdM float64
}

// Basin is a generated demo basin. The grids are cell-centre registered and share one lattice.
type Basin struct {
	Seed      uint64
	CellDeg   float64
	NoiseStdM float64
	// Age is seafloor age, age_ma.
	Age *geo.Grid
	// Elevation is the observed, sediment-loaded seafloor as ELEVATION in metres, positive up
	// (negative in the ocean), as bathymetry files usually store it: ElevationSense.
	Elevation *geo.Grid
	// Sediment is sediment thickness, m.
	Sediment *geo.Grid
	// AgeSigma is the 1σ uncertainty of Age, Ma (see AgeSigmaBaseMa).
	AgeSigma *geo.Grid
}

// ElevationSense is the vertical sense of Basin.Elevation.
const ElevationSense = geo.ElevationPositiveUp

// Model returns the cooling model the basin is built with (GDH1).
func Model() thermal.Model {
	m, err := thermal.Builtin(ModelID)
	if err != nil {
		panic("demobasin: " + err.Error())
	}
	return m
}

// Compaction returns the sediment compaction law the basin is loaded with (shale).
func Compaction() thermal.Compaction {
	c, err := thermal.CompactionByName(CompactionName)
	if err != nil {
		panic("demobasin: " + err.Error())
	}
	return c
}

// Generate builds the basin deterministically:
//
//   - age = great-circle distance to the ridge segment of the cell's latitude band divided by
//     the half-spreading rate of its side (so ages step across each fracture zone);
//   - unloaded depth = GDH1 depth(age) − swell − seamounts + fracture-zone troughs + noise;
//   - sediment = pelagic (rate × age) + the margin wedge;
//   - observed depth = unloaded depth − thermal.SedimentCorrectionM(sediment): the seafloor
//     a sediment load of that thickness leaves (Airy isostasy, Sclater & Christie 1980 shale),
//     so correcting it with the same law recovers the unloaded depth;
//   - Elevation = −observed depth.
//
// It takes well under a second at the default resolution.
func Generate(opt Options) (*Basin, error) {
	if opt.Seed == 0 {
		opt.Seed = DefaultSeed
	}
	if opt.CellDeg == 0 {
		opt.CellDeg = DefaultCellDeg
	}
	switch {
	case opt.NoiseStdM == 0:
		opt.NoiseStdM = DefaultNoiseStdM
	case opt.NoiseStdM < 0:
		opt.NoiseStdM = 0
	case opt.NoiseStdM > 1000 || math.IsNaN(opt.NoiseStdM):
		return nil, fmt.Errorf("noise %g m is outside 0..1000 m", opt.NoiseStdM)
	}
	d := opt.CellDeg
	if !(d >= 0.01 && d <= 0.5) {
		return nil, fmt.Errorf("cell size %g° is outside 0.01..0.5°", d)
	}
	nx := int(math.Round((EastLon - WestLon) / d))
	ny := int(math.Round((NorthLat - SouthLat) / d))
	if math.Abs(float64(nx)*d-(EastLon-WestLon)) > 1e-9 || math.Abs(float64(ny)*d-(NorthLat-SouthLat)) > 1e-9 {
		return nil, fmt.Errorf("cell size %g° does not divide the basin's %g° × %g° into whole cells", d, EastLon-WestLon, NorthLat-SouthLat)
	}
	model := Model()
	tbl := thermal.TableFor(model)
	pr := model.Params()
	sc, err := thermal.NewSedimentCorrector(Compaction(), pr.MantleDensityKgM3, pr.WaterDensityKgM3)
	if err != nil {
		return nil, err
	}
	mk := func() *geo.Grid { return geo.NewGrid(nx, ny, WestLon+d/2, NorthLat-d/2, d, d, geo.CellCentre) }
	b := &Basin{Seed: opt.Seed, CellDeg: d, NoiseStdM: opt.NoiseStdM, Age: mk(), Elevation: mk(), Sediment: mk(), AgeSigma: mk()}

	transforms := TransformLats()
	var next int
	var mu sync.Mutex
	var wg sync.WaitGroup
	for range runtime.GOMAXPROCS(0) {
		wg.Add(1)
		go func() {
			defer wg.Done()
			depth := make([]float32, nx)
			for {
				mu.Lock()
				r := next
				next++
				mu.Unlock()
				if r >= ny {
					return
				}
				// One generator per row, seeded by (seed, row): the result does not depend on
				// which goroutine computes which row.
				rng := rand.New(rand.NewPCG(opt.Seed, uint64(r)))
				lat := b.Age.Lat(r)
				seg := segmentAt(lat)
				ages := b.Age.Data[r*nx : (r+1)*nx]
				for c := range ages {
					ages[c] = float32(ageAt(b.Age.Lon(c), lat, seg))
				}
				tbl.DepthsM(ages, depth)
				var fz, fzSigma float64
				for _, tl := range transforms {
					dk := (lat - tl) * math.Pi / 180 * EarthRadiusKm
					w := math.Exp(-(dk * dk) / (FractureZoneWidthKm * FractureZoneWidthKm))
					fz += FractureZoneTroughM * w
					fzSigma += AgeSigmaFractureZoneMa * w
				}
				for c := 0; c < nx; c++ {
					lon := b.Age.Lon(c)
					i := r*nx + c
					age := float64(ages[c])
					sed := PelagicRateMPerMyr*age + MarginSedimentM*math.Exp(-distToMeridianKm(lon, lat, MarginLon)/MarginDecayKm)
					unloaded := float64(depth[c]) - Relief(lon, lat) + fz + opt.NoiseStdM*rng.NormFloat64()
					observed := unloaded - sc.CorrectionM(sed)
					b.Sediment.Data[i] = float32(sed)
					if math.IsNaN(age) {
						b.AgeSigma.Data[i] = float32(math.NaN())
					} else {
						b.AgeSigma.Data[i] = float32(AgeSigmaBaseMa + AgeSigmaFraction*age + fzSigma)
					}
					b.Elevation.Data[i] = float32(-observed)
				}
			}
		}()
	}
	wg.Wait()
	return b, nil
}

// Relief is the injected uplift (m, positive up) at a point: the swell plus the seamounts.
func Relief(lon, lat float64) float64 {
	return SwellM(lon, lat) + SeamountsM(lon, lat)
}

// SwellM is the injected swell height (m) at a point.
func SwellM(lon, lat float64) float64 {
	r := DistanceKm(lon, lat, SwellCentreLon, SwellCentreLat)
	return SwellAmplitudeM * math.Exp(-(r*r)/(SwellRadiusKm*SwellRadiusKm))
}

// SeamountsM is the summed height (m) of the injected seamounts at a point.
func SeamountsM(lon, lat float64) float64 {
	var h float64
	for _, s := range seamounts {
		r := DistanceKm(lon, lat, s.Lon, s.Lat)
		if r < 6*s.RadiusKm {
			h += s.HeightM * math.Exp(-(r*r)/(s.RadiusKm*s.RadiusKm))
		}
	}
	return h
}

// DistanceKm is the great-circle distance on a sphere of EarthRadiusKm (haversine formula,
// Sinnott 1984, "Virtues of the Haversine", Sky & Telescope 68, 159).
func DistanceKm(lon1, lat1, lon2, lat2 float64) float64 {
	const rad = math.Pi / 180
	dlat := (lat2 - lat1) * rad
	dlon := (lon2 - lon1) * rad
	a := math.Sin(dlat/2)*math.Sin(dlat/2) + math.Cos(lat1*rad)*math.Cos(lat2*rad)*math.Sin(dlon/2)*math.Sin(dlon/2)
	return 2 * EarthRadiusKm * math.Asin(math.Min(1, math.Sqrt(a)))
}

// distToMeridianKm is the great-circle distance from a point to the meridian at lonM (spherical
// trigonometry: sin(d/R) = cos φ · sin Δλ for |Δλ| ≤ 90°).
func distToMeridianKm(lon, lat, lonM float64) float64 {
	const rad = math.Pi / 180
	return EarthRadiusKm * math.Asin(math.Cos(lat*rad)*math.Abs(math.Sin((lon-lonM)*rad)))
}

func segmentAt(lat float64) RidgeSegment {
	for _, s := range ridgeSegments {
		if lat >= s.SouthLat {
			return s
		}
	}
	return ridgeSegments[len(ridgeSegments)-1]
}

// AgeMa is the basin's seafloor age at a point (Ma): distance to the ridge segment of the
// point's latitude band over the half-spreading rate of its side.
func AgeMa(lon, lat float64) float64 { return ageAt(lon, lat, segmentAt(lat)) }

func ageAt(lon, lat float64, s RidgeSegment) float64 {
	rate := HalfRateEastMmYr
	if lon < s.Lon {
		rate = HalfRateWestMmYr
	}
	return distToMeridianKm(lon, lat, s.Lon) / rate // km / (km/Myr) = Myr
}

// Hash returns the SHA-256 (hex) of the four grids' lattices and values: equal for equal
// seeds and options.
func (b *Basin) Hash() string {
	h := sha256.New()
	var buf [8]byte
	for _, g := range []*geo.Grid{b.Age, b.Elevation, b.Sediment, b.AgeSigma} {
		for _, v := range []float64{float64(g.NX), float64(g.NY), g.West, g.North, g.DX, g.DY, float64(g.Registration)} {
			binary.LittleEndian.PutUint64(buf[:], math.Float64bits(v))
			h.Write(buf[:])
		}
		row := make([]byte, 4*g.NX)
		for r := 0; r < g.NY; r++ {
			for c, v := range g.Data[r*g.NX : (r+1)*g.NX] {
				binary.LittleEndian.PutUint32(row[4*c:], math.Float32bits(v))
			}
			h.Write(row)
		}
	}
	return hex.EncodeToString(h.Sum(nil))
}
