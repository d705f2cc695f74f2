package geo

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"github.com/paulmach/orb"

	"ridgeflank/fault"
)

// Registration says what position a grid value stands for.
type Registration int

const (
	// CellCentre (pixel-is-area): each value represents a DX×DY cell; the sample position is the
	// cell centre and the grid's outer edges lie half a cell outside the first and last centres.
	CellCentre Registration = iota
	// Node (gridline, pixel-is-point): each value is a point sample at a grid node; the grid's
	// extent is the outermost nodes themselves.
	Node
)

// String returns "cell-centre" or "node".
func (r Registration) String() string {
	switch r {
	case CellCentre:
		return "cell-centre"
	case Node:
		return "node"
	}
	return fmt.Sprintf("Registration(%d)", int(r))
}

// ParseRegistration accepts "cell-centre" (also "cell", "cell-center", "area", "pixel") and
// "node" (also "point", "gridline"), case-insensitively.
func ParseRegistration(s string) (Registration, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "cell-centre", "cell-center", "cell", "centre", "center", "area", "pixel", "pixel-is-area":
		return CellCentre, nil
	case "node", "point", "gridline", "pixel-is-point":
		return Node, nil
	}
	return 0, fault.New(fault.InvalidParameter, "registration", "unknown grid registration %q (want cell-centre or node)", s)
}

// Grid is a regular longitude/latitude grid of float32 values (NaN = no data).
//
// Row 0 is the NORTHERNMOST row; column 0 the westernmost. West and North are the longitude and
// latitude in degrees of the first sample position (cell centre or node, per Registration), so
// the sample at (col, row) lies at (West + col·DX, North − row·DY). DX and DY are positive
// spacings in degrees. Data is row-major with len NX·NY.
//
// Longitudes may be stored in any convention (−180..180, 0..360, or a window running past 180):
// sampling and windows accept query longitudes in either convention and shift them by multiples
// of 360°. Lon returns the grid's own (monotonic) longitude; use LonTo180 for answers.
//
// A grid is "global in longitude" when round(360/DX)·DX = 360 and it has at least that many
// columns; such grids wrap at their seam for sampling and windows. A node-registered global grid
// may repeat its first column at the end (NX = 360/DX + 1) or not (NX = 360/DX).
type Grid struct {
	NX, NY       int     // columns, rows
	West, North  float64 // lon/lat (degrees) of the first node or cell centre; row 0 is northernmost
	DX, DY       float64 // spacing in degrees, both positive
	Registration Registration
	Data         []float32 // row-major, len NX*NY, NaN = no data
}

// Errors returned by grid operations (wrapped with detail).
var (
	ErrInvalidGrid = errors.New("invalid grid")
	ErrEmptyWindow = errors.New("window does not overlap the grid")
)

// gridEps is the tolerance, in units of one cell, used when mapping coordinates to indices, so
// that positions computed with rounding error still land on the intended sample.
const gridEps = 1e-9

// NewGrid allocates an nx×ny grid filled with NaN (no data). It panics if nx or ny is not
// positive or if dx or dy is not a positive finite number (programming errors); use
// Grid.Validate for grids built from untrusted input.
func NewGrid(nx, ny int, west, north, dx, dy float64, reg Registration) *Grid {
	g := &Grid{NX: nx, NY: ny, West: west, North: north, DX: dx, DY: dy, Registration: reg}
	if err := g.validateShape(); err != nil {
		panic(err)
	}
	g.Data = make([]float32, nx*ny)
	nan := float32(math.NaN())
	for i := range g.Data {
		g.Data[i] = nan
	}
	return g
}

func (g *Grid) validateShape() error {
	switch {
	case g.NX <= 0 || g.NY <= 0:
		return gridErr("size %d×%d must be positive", g.NX, g.NY)
	case !(g.DX > 0) || !(g.DY > 0) || math.IsInf(g.DX, 0) || math.IsInf(g.DY, 0):
		return gridErr("spacing dx=%g dy=%g degrees must be positive", g.DX, g.DY)
	case math.IsNaN(g.West) || math.IsInf(g.West, 0) || math.IsNaN(g.North) || math.IsInf(g.North, 0):
		return gridErr("origin west=%g north=%g is not finite", g.West, g.North)
	case g.Registration != CellCentre && g.Registration != Node:
		return gridErr("unknown registration %d", int(g.Registration))
	}
	return nil
}

// Validate checks the shape, spacing, registration, latitude extent (sample positions within
// ±90°, allowing one part in 10⁹ of a cell) and the data length.
func (g *Grid) Validate() error {
	if g == nil {
		return gridErr("nil grid")
	}
	if err := g.validateShape(); err != nil {
		return err
	}
	if len(g.Data) != g.NX*g.NY {
		return gridErr("data length %d, want %d×%d=%d", len(g.Data), g.NX, g.NY, g.NX*g.NY)
	}
	tol := gridEps * g.DY
	if g.North > 90+tol || g.Lat(g.NY-1) < -90-tol {
		return gridErr("latitudes %g..%g outside −90..90", g.Lat(g.NY-1), g.North)
	}
	return nil
}

// Index returns the offset of (col, row) in Data.
func (g *Grid) Index(col, row int) int { return row*g.NX + col }

// At returns the value at column col and row row (row 0 northernmost). It panics when out of range.
func (g *Grid) At(col, row int) float32 {
	if col < 0 || col >= g.NX || row < 0 || row >= g.NY {
		panic(fmt.Sprintf("geo: grid index (%d,%d) out of range %d×%d", col, row, g.NX, g.NY))
	}
	return g.Data[row*g.NX+col]
}

// Set stores v at (col, row). It panics when out of range.
func (g *Grid) Set(col, row int, v float32) {
	if col < 0 || col >= g.NX || row < 0 || row >= g.NY {
		panic(fmt.Sprintf("geo: grid index (%d,%d) out of range %d×%d", col, row, g.NX, g.NY))
	}
	g.Data[row*g.NX+col] = v
}

// Lon returns the longitude in degrees of column col's cell centre or node, in the grid's own
// convention (West + col·DX; monotonic, may exceed 180). Use LonTo180 to report it.
func (g *Grid) Lon(col int) float64 { return g.West + float64(col)*g.DX }

// Lat returns the latitude in degrees of row row's cell centre or node (North − row·DY).
func (g *Grid) Lat(row int) float64 { return g.North - float64(row)*g.DY }

// East returns the longitude of the last column's centre or node.
func (g *Grid) East() float64 { return g.Lon(g.NX - 1) }

// South returns the latitude of the last row's centre or node.
func (g *Grid) South() float64 { return g.Lat(g.NY - 1) }

// Bounds returns the grid's footprint in degrees: the outer cell edges for CellCentre grids (half
// a cell beyond the first and last centres, latitudes clipped to ±90) and the node extent for
// Node grids. Longitudes are in the grid's own convention (Min.X < Max.X; Max.X may exceed 180).
func (g *Grid) Bounds() orb.Bound {
	w, e := g.West, g.East()
	n, s := g.North, g.South()
	if g.Registration == CellCentre {
		w -= g.DX / 2
		e += g.DX / 2
		n = math.Min(90, n+g.DY/2)
		s = math.Max(-90, s-g.DY/2)
	}
	return orb.Bound{Min: orb.Point{w, s}, Max: orb.Point{e, n}}
}

// Clone returns a deep copy.
func (g *Grid) Clone() *Grid {
	c := *g
	c.Data = append([]float32(nil), g.Data...)
	return &c
}

// LonTo180 wraps a longitude in degrees into [−180, 180).
func LonTo180(lon float64) float64 {
	l := math.Mod(lon+180, 360)
	if l < 0 {
		l += 360
	}
	return l - 180
}

// LonTo360 wraps a longitude in degrees into [0, 360).
func LonTo360(lon float64) float64 {
	l := math.Mod(lon, 360)
	if l < 0 {
		l += 360
	}
	if l >= 360 {
		l = 0
	}
	return l
}

// periodCols returns the number of columns spanning 360° when the grid is global in longitude
// (round(360/DX)·DX = 360 within 10⁻⁴ of a cell and NX ≥ that count), else 0.
func (g *Grid) periodCols() int {
	p := math.Round(360 / g.DX)
	if p < 1 || math.Abs(p*g.DX-360) > 1e-4*g.DX || g.NX < int(p) {
		return 0
	}
	return int(p)
}

// IsGlobalLon reports whether the grid covers all longitudes and wraps at its seam.
func (g *Grid) IsGlobalLon() bool { return g.periodCols() > 0 }

// sampleRange returns the continuous index range covered by the grid along an axis of n samples:
// −0.5..n−0.5 for cell-centre grids (their outer edges) and 0..n−1 for node grids.
func (g *Grid) sampleRange(n int) (lo, hi float64) {
	if g.Registration == CellCentre {
		return -0.5, float64(n) - 0.5
	}
	return 0, float64(n - 1)
}

// colPos maps lon to a continuous column position, shifting by multiples of 360° so that it
// falls in the grid. p is periodCols(). For global grids the result is in [lo, lo+p). ok is
// false when outside.
func (g *Grid) colPos(lon float64, p int) (fx float64, ok bool) {
	if math.IsNaN(lon) || math.IsInf(lon, 0) {
		return 0, false
	}
	lo, hi := g.sampleRange(g.NX)
	fx = (lon - g.West) / g.DX
	if p > 0 {
		period := float64(p)
		fx = math.Mod(fx-lo, period)
		if fx < 0 {
			fx += period
		}
		return fx + lo, true
	}
	period := 360 / g.DX
	if fx < lo-gridEps {
		fx += math.Ceil((lo-gridEps-fx)/period) * period
	} else if fx > hi+gridEps {
		fx -= math.Ceil((fx-hi-gridEps)/period) * period
	}
	if fx < lo-gridEps || fx > hi+gridEps {
		return 0, false
	}
	return math.Min(math.Max(fx, lo), hi), true
}

// samplePos is (lon, lat) as a continuous column and row position (colPos, rowPos) with the
// grid's longitude period p (periodCols); ok is false when the point is outside the grid.
func (g *Grid) samplePos(lon, lat float64) (fx, fy float64, p int, ok bool) {
	p = g.periodCols()
	if fx, ok = g.colPos(lon, p); !ok {
		return 0, 0, p, false
	}
	fy, ok = g.rowPos(lat)
	return fx, fy, p, ok
}

// wrapCol maps column c of a grid global in longitude into 0..p−1 (p = periodCols() > 0).
func wrapCol(c, p int) int { return ((c % p) + p) % p }

// rowPos maps lat to a continuous row position. Latitudes beyond ±90 (by more than rounding
// error) or outside the grid's extent give ok=false; a query at a pole the grid reaches is kept.
func (g *Grid) rowPos(lat float64) (fy float64, ok bool) {
	if math.IsNaN(lat) || lat > 90+1e-9 || lat < -90-1e-9 {
		return 0, false
	}
	lat = math.Min(90, math.Max(-90, lat))
	lo, hi := g.sampleRange(g.NY)
	fy = (g.North - lat) / g.DY
	if fy < lo-gridEps || fy > hi+gridEps {
		return 0, false
	}
	return math.Min(math.Max(fy, lo), hi), true
}

// SampleNearest returns the value of the cell or node nearest to (lon, lat) in degrees, or NaN
// when the point is outside the grid or that sample has no data. Longitudes in −180..180 and
// 0..360 both work; global grids wrap at their seam.
func (g *Grid) SampleNearest(lon, lat float64) float32 {
	fx, fy, p, ok := g.samplePos(lon, lat)
	if !ok {
		return float32(math.NaN())
	}
	c := int(math.Floor(fx + 0.5))
	if p > 0 {
		c = wrapCol(c, p)
	} else {
		c = min(max(c, 0), g.NX-1)
	}
	r := min(max(int(math.Floor(fy+0.5)), 0), g.NY-1)
	return g.Data[r*g.NX+c]
}

// SampleBilinear interpolates bilinearly between the four samples around (lon, lat) in degrees.
//
// No-data neighbours are dropped and the remaining weights renormalised; the result is NaN when
// the point is outside the grid or every neighbour with non-zero weight has no data. Global grids
// wrap across their seam (antimeridian or 0°/360°). Between the outermost cell centres and a
// cell-centre grid's outer edge (including the band between the last row and a pole) the value
// is held constant along that axis (clamped), so a pole gives a value, never NaN; at a pole the
// answer depends on the longitude asked because a lon/lat raster has no single polar sample.
func (g *Grid) SampleBilinear(lon, lat float64) float32 {
	fx, fy, p, ok := g.samplePos(lon, lat)
	if !ok {
		return float32(math.NaN())
	}
	var c0, c1 int
	var tx float64
	if p > 0 {
		f := math.Floor(fx)
		tx = fx - f
		i := int(f)
		c0 = wrapCol(i, p)
		c1 = (c0 + 1) % p
	} else {
		c0, c1, tx = gridAxisPair(fx, g.NX)
	}
	r0, r1, ty := gridAxisPair(fy, g.NY)
	d := g.Data
	return bilinear4(d[r0*g.NX+c0], d[r0*g.NX+c1], d[r1*g.NX+c0], d[r1*g.NX+c1], tx, ty)
}

// bilinear4 interpolates between v00 (first column, first row), v10, v01 and v11 with
// fractional weights tx, ty of the second column and row. No-data (NaN) values are dropped and
// the remaining weights renormalised; NaN when none with non-zero weight is left.
func bilinear4(v00, v10, v01, v11 float32, tx, ty float64) float32 {
	w00 := (1 - tx) * (1 - ty)
	w10 := tx * (1 - ty)
	w01 := (1 - tx) * ty
	w11 := tx * ty
	var sum, wsum float64
	if !isNaN32(v00) {
		sum += w00 * float64(v00)
		wsum += w00
	}
	if !isNaN32(v10) {
		sum += w10 * float64(v10)
		wsum += w10
	}
	if !isNaN32(v01) {
		sum += w01 * float64(v01)
		wsum += w01
	}
	if !isNaN32(v11) {
		sum += w11 * float64(v11)
		wsum += w11
	}
	if wsum <= 0 {
		return float32(math.NaN())
	}
	return float32(sum / wsum)
}

// gridAxisPair clamps a continuous index to [0, n−1] and returns the bracketing indices and the
// fractional weight of the second.
func gridAxisPair(f float64, n int) (i0, i1 int, t float64) {
	if n == 1 || f <= 0 {
		return 0, 0, 0
	}
	if f >= float64(n-1) {
		return n - 1, n - 1, 0
	}
	fl := math.Floor(f)
	i0 = int(fl)
	return i0, i0 + 1, f - fl
}

func isNaN32(v float32) bool { return v != v }

// gridSpan returns the index range of samples selected between continuous positions lo ≤ hi
// (in sample units from the first sample). Node grids select samples inside [lo, hi]; cell-centre
// grids select cells overlapping (lo, hi) with positive width. A zero-width span selects the
// nearest sample.
func gridSpan(lo, hi float64, reg Registration) (i0, i1 int) {
	if hi-lo < gridEps {
		i := int(math.Floor((lo+hi)/2 + 0.5))
		return i, i
	}
	if reg == Node {
		return int(math.Ceil(lo - gridEps)), int(math.Floor(hi + gridEps))
	}
	return int(math.Floor(lo-0.5+gridEps)) + 1, int(math.Ceil(hi+0.5-gridEps)) - 1
}

// Window returns a copy of the part of the grid inside bound b (degrees).
//
// Node grids keep the nodes inside the closed bound; cell-centre grids keep the cells that
// overlap it. A bound with Min.X > Max.X crosses the antimeridian (e.g. 170..−170), as does one
// with Max.X beyond 180 (170..190); longitudes in either convention are accepted, so the bound
// RegionBound returns for a region (Min.X in [−180, 180), Max.X = Min.X + width) is read as is,
// and its −180..180 for polar caps and belts keeps every column. For a grid
// global in longitude the window is always contiguous, wrapping across the grid's seam, and its
// West is reported in −180..180 (so Lon may run past 180 across the antimeridian). A bound 360°
// or wider keeps every column. Non-global grids are clipped to their extent. ErrEmptyWindow is
// returned when nothing is selected. WindowSpec says which samples are kept without copying.
func (g *Grid) Window(b orb.Bound) (*Grid, error) {
	if err := g.Validate(); err != nil {
		return nil, err
	}
	sp, err := g.WindowSpec(b)
	if err != nil {
		return nil, err
	}
	out := sp.Out
	out.Data = make([]float32, out.NX*out.NY)
	for r := 0; r < out.NY; r++ {
		src := g.Data[(sp.Row0+r)*g.NX : (sp.Row0+r+1)*g.NX]
		dst := out.Data[r*out.NX : (r+1)*out.NX]
		for _, run := range sp.Runs {
			dst = dst[copy(dst, src[run.Src0:run.Src0+run.N]):]
		}
	}
	return &out, nil
}

// WindowSpec says which samples Window keeps for bound b: the window's shape (Out, with no
// Data), its first row in the grid (Row0; rows are contiguous) and its columns as runs of
// contiguous grid columns in output order (two runs when a global grid's window wraps across
// its seam). It needs only the grid's shape, not its data, so a windowed reader can use it
// for grids held in files.
type WindowSpec struct {
	Out  Grid
	Row0 int
	Runs []ColumnRun
}

// ColumnRun is N contiguous grid columns starting at Src0.
type ColumnRun struct{ Src0, N int }

// WindowSpec computes the samples Window(b) keeps (see Window for the rules); g's Data may be
// nil.
func (g *Grid) WindowSpec(b orb.Bound) (WindowSpec, error) {
	if g == nil {
		return WindowSpec{}, gridErr("nil grid")
	}
	if err := g.validateShape(); err != nil {
		return WindowSpec{}, err
	}
	minX, maxX, minY, maxY := b.Min.X(), b.Max.X(), b.Min.Y(), b.Max.Y()
	for _, v := range []float64{minX, maxX, minY, maxY} {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return WindowSpec{}, fault.New(fault.InvalidCoords, "", "window bound %v is not finite", b)
		}
	}
	if minY > maxY {
		return WindowSpec{}, fault.New(fault.InvalidCoords, "", "window bound south %g is north of its north %g", minY, maxY)
	}
	if minY < -90-1e-9 || maxY > 90+1e-9 {
		return WindowSpec{}, fault.New(fault.InvalidCoords, "", "window latitudes %g..%g outside −90..90", minY, maxY)
	}
	width := maxX - minX
	if width < 0 {
		width += 360
	}
	// rows
	r0, r1 := gridSpan((g.North-maxY)/g.DY, (g.North-minY)/g.DY, g.Registration)
	r0, r1 = max(r0, 0), min(r1, g.NY-1)
	if r0 > r1 {
		return WindowSpec{}, emptyWindow("latitudes %g..%g vs grid %g..%g", minY, maxY, g.South(), g.North)
	}
	// columns, as runs of source columns in order
	var runs []ColumnRun
	west := 0.0
	p := g.periodCols()
	switch {
	case width >= 360-1e-9:
		runs = []ColumnRun{{0, g.NX}}
		west = g.West
	case p > 0:
		c0, c1 := gridSpan((minX-g.West)/g.DX, (minX+width-g.West)/g.DX, g.Registration)
		n := min(c1-c0+1, p)
		if n <= 0 {
			return WindowSpec{}, emptyWindow("longitudes %g..%g", minX, maxX)
		}
		c0 = wrapCol(c0, p)
		if c0+n <= p {
			runs = []ColumnRun{{c0, n}}
		} else {
			runs = []ColumnRun{{c0, p - c0}, {0, n - (p - c0)}}
		}
		west = LonTo180(g.West + float64(c0)*g.DX)
		// keep an exact representation when no shift happened
		if math.Abs(west-(g.West+float64(c0)*g.DX)) < 1e-12 {
			west = g.West + float64(c0)*g.DX
		}
	default:
		best0, best1 := 0, -1
		for k := -2; k <= 2; k++ {
			a := minX + float64(k)*360
			c0, c1 := gridSpan((a-g.West)/g.DX, (a+width-g.West)/g.DX, g.Registration)
			c0, c1 = max(c0, 0), min(c1, g.NX-1)
			if c1-c0 > best1-best0 {
				best0, best1 = c0, c1
			}
		}
		if best1 < best0 {
			return WindowSpec{}, emptyWindow("longitudes %g..%g vs grid %g..%g", minX, maxX, g.West, g.East())
		}
		runs = []ColumnRun{{best0, best1 - best0 + 1}}
		west = g.Lon(best0)
	}
	nx := 0
	for _, r := range runs {
		nx += r.N
	}
	return WindowSpec{
		Out: Grid{NX: nx, NY: r1 - r0 + 1, West: west, North: g.Lat(r0), DX: g.DX, DY: g.DY,
			Registration: g.Registration},
		Row0: r0,
		Runs: runs,
	}, nil
}

// AreaWeight returns cos(latitude) of row row's sample position: the usual weight for averaging
// a lon/lat grid, proportional to cell area on a sphere (common practice). It is 0 at a pole
// node; CellAreaM2 gives the exact (non-zero) polar cell area.
func (g *Grid) AreaWeight(row int) float64 {
	return math.Cos(g.Lat(row) * math.Pi / 180)
}

// WGS84 ellipsoid constants (NIMA TR8350.2, 3rd ed., 2000, Table 3.1).
const (
	wgs84A = 6378137.0
	wgs84F = 1 / 298.257223563
)

// CellAreaM2 returns the exact area in m² on the WGS84 ellipsoid of one cell of row row: the
// cell spans DX in longitude and DY in latitude centred on the sample position (for node grids
// the cell around the node), with its latitude edges clipped to ±90°. Formula: the area between
// the equator and latitude φ per radian of longitude is a²·q(φ)/2, with
// q(φ) = (1−e²)[sinφ/(1−e²sin²φ) − 1/(2e)·ln((1−e·sinφ)/(1+e·sinφ))]
// (Snyder 1987, "Map Projections — A Working Manual", USGS PP 1395, eq. 3-12).
func (g *Grid) CellAreaM2(row int) float64 {
	lat := g.Lat(row)
	n := math.Min(90, lat+g.DY/2)
	s := math.Max(-90, lat-g.DY/2)
	if n <= s {
		return 0
	}
	dl := g.DX * math.Pi / 180
	return wgs84A * wgs84A / 2 * dl * (authalicQ(n) - authalicQ(s))
}

// authalicQ is Snyder's (1987) q function for WGS84 (eq. 3-12).
func authalicQ(latDeg float64) float64 {
	e2 := wgs84F * (2 - wgs84F)
	e := math.Sqrt(e2)
	s := math.Sin(latDeg * math.Pi / 180)
	return (1 - e2) * (s/(1-e2*s*s) - 1/(2*e)*math.Log((1-e*s)/(1+e*s)))
}

// reachesPole reports whether the grid's outer edge or end node is at the north (sign>0) or
// south pole, within a thousandth of a cell.
func (g *Grid) reachesPole(sign int) bool {
	half := 0.0
	if g.Registration == CellCentre {
		half = g.DY / 2
	}
	tol := 1e-3 * g.DY
	if sign > 0 {
		return math.Abs(g.North+half-90) < tol
	}
	return math.Abs(g.South()-half+90) < tol
}

// ToNode converts a cell-centre grid to node registration over the SAME footprint: the sample
// positions move by half a cell to the cell corners, NX and NY grow by one (a grid global in
// longitude gets NX = 360/DX + 1, its last column repeating the first), West/North become the
// outer edges of the old grid, and each node takes the mean of the valid cells touching it (NaN
// if none). This is bilinear interpolation at the corners, so it smooths by half a cell and
// ToCellCentre does not undo it exactly. For a global grid reaching a pole, the polar node row is
// the mean of the whole polar cell row, since all its nodes are the same point. A node grid is
// returned as a copy.
func (g *Grid) ToNode() (*Grid, error) {
	if err := g.Validate(); err != nil {
		return nil, err
	}
	if g.Registration == Node {
		return g.Clone(), nil
	}
	p := g.periodCols()
	out := NewGrid(g.NX+1, g.NY+1, g.West-g.DX/2, g.North+g.DY/2, g.DX, g.DY, Node)
	if p > 0 {
		out.NX = p + 1
		out.Data = out.Data[:out.NX*out.NY]
	}
	for j := 0; j < out.NY; j++ {
		for i := 0; i < out.NX; i++ {
			var sum float64
			var n int
			for _, r := range [2]int{j - 1, j} {
				if r < 0 || r >= g.NY {
					continue
				}
				for _, c := range [2]int{i - 1, i} {
					if p > 0 {
						c = wrapCol(c, p)
					} else if c < 0 || c >= g.NX {
						continue
					}
					if v := g.Data[r*g.NX+c]; !isNaN32(v) {
						sum += float64(v)
						n++
					}
				}
			}
			if n > 0 {
				out.Data[j*out.NX+i] = float32(sum / float64(n))
			}
		}
	}
	if p > 0 {
		for _, pole := range []struct{ sign, srcRow, dstRow int }{{1, 0, 0}, {-1, g.NY - 1, out.NY - 1}} {
			if !g.reachesPole(pole.sign) {
				continue
			}
			m := gridRowMean(g.Data[pole.srcRow*g.NX : pole.srcRow*g.NX+p])
			row := out.Data[pole.dstRow*out.NX : (pole.dstRow+1)*out.NX]
			for i := range row {
				row[i] = m
			}
		}
	}
	return out, nil
}

func gridRowMean(v []float32) float32 {
	var sum float64
	var n int
	for _, x := range v {
		if !isNaN32(x) {
			sum += float64(x)
			n++
		}
	}
	if n == 0 {
		return float32(math.NaN())
	}
	return float32(sum / float64(n))
}

// ToCellCentre converts a node grid to cell-centre registration over the SAME footprint: the
// sample positions move by half a cell to the centres of the squares between nodes, NX and NY
// shrink by one (a grid global in longitude gets NX = 360/DX, wrapping at its seam), West/North
// move half a cell east/south, and each cell takes the mean of its valid corner nodes (NaN if
// none). It smooths by half a cell; ToNode does not undo it exactly. A grid with a single row or
// column (not global) cannot be converted. A cell-centre grid is returned as a copy.
func (g *Grid) ToCellCentre() (*Grid, error) {
	if err := g.Validate(); err != nil {
		return nil, err
	}
	if g.Registration == CellCentre {
		return g.Clone(), nil
	}
	p := g.periodCols()
	nx := g.NX - 1
	if p > 0 {
		nx = p
	}
	if nx < 1 || g.NY < 2 {
		return nil, gridErr("a %d×%d node grid has no cells", g.NX, g.NY)
	}
	out := NewGrid(nx, g.NY-1, g.West+g.DX/2, g.North-g.DY/2, g.DX, g.DY, CellCentre)
	for j := 0; j < out.NY; j++ {
		for i := 0; i < out.NX; i++ {
			var sum float64
			var n int
			for _, r := range [2]int{j, j + 1} {
				for _, c := range [2]int{i, i + 1} {
					if p > 0 {
						c %= p
					}
					if v := g.Data[r*g.NX+c]; !isNaN32(v) {
						sum += float64(v)
						n++
					}
				}
			}
			if n > 0 {
				out.Data[j*out.NX+i] = float32(sum / float64(n))
			}
		}
	}
	return out, nil
}

// gridTap is one input sample and its weight in a resampled output sample.
type gridTap struct {
	i int
	w float64
}

// gridBlockTaps returns for each output index the input indices and weights of its block.
// Cell-centre: block k is inputs k·f .. k·f+f−1 (a partial block at the end is dropped).
// Node: output k sits on input k·f and averages inputs within ±f/2 (weight ½ on the two end
// inputs when f is even), so each block spans exactly f input spacings; period>0 wraps.
func gridBlockTaps(n, f int, reg Registration, period int) [][]gridTap {
	if reg == CellCentre {
		m := n / f
		taps := make([][]gridTap, m)
		for k := range taps {
			for i := k * f; i < k*f+f; i++ {
				taps[k] = append(taps[k], gridTap{i, 1})
			}
		}
		return taps
	}
	m := (n-1)/f + 1
	if period > 0 && n-1 < period { // global node grid without a repeated seam column
		m = (n + f - 1) / f
	}
	h := f / 2
	taps := make([][]gridTap, m)
	for k := range taps {
		centre := k * f
		for d := -h; d <= h; d++ {
			w := 1.0
			if f%2 == 0 && (d == -h || d == h) {
				w = 0.5
			}
			i := centre + d
			if period > 0 {
				i = ((i % period) + period) % period
			} else if i < 0 || i >= n {
				continue
			}
			taps[k] = append(taps[k], gridTap{i, w})
		}
	}
	return taps
}

// Resample returns a coarser grid with spacing dx, dy degrees, each value the area-weighted
// mean of the valid input samples in its block (no-data samples ignored; NaN if the whole block
// has no data). The spacing must be a whole multiple (within 10⁻⁶) of the grid's spacing.
//
// Cell-centre grids: each output cell is the mean of a block of f×f input cells, aligned on the
// north-west corner; a partial block at the east or south edge is dropped (document the lost
// strip to users), so the footprint may shrink. Node grids: output nodes are every f-th input
// node and average the inputs within half an output spacing (wrapping in longitude for global
// grids, clipped at the edges). Rows are weighted by their exact cell area on the sphere, i.e.
// proportional to sin(north edge) − sin(south edge) (≈ cos latitude, and non-zero at a pole).
func (g *Grid) Resample(dx, dy float64) (*Grid, error) {
	if err := g.Validate(); err != nil {
		return nil, err
	}
	fxF, fyF := dx/g.DX, dy/g.DY
	fx, fy := int(math.Round(fxF)), int(math.Round(fyF))
	if fx < 1 || fy < 1 || math.Abs(fxF-float64(fx)) > 1e-6*fxF || math.Abs(fyF-float64(fy)) > 1e-6*fyF {
		return nil, fault.New(fault.InvalidParameter, "resolution", "resample spacing %g×%g degrees must be a whole multiple (≥1) of the grid spacing %g×%g", dx, dy, g.DX, g.DY)
	}
	if fx == 1 && fy == 1 {
		return g.Clone(), nil
	}
	if g.Registration == CellCentre {
		m, err := NewBlockMean(g, fx, fy)
		if err != nil {
			return nil, err
		}
		m.AddRows(0, g.Data)
		return m.Result(), nil
	}
	period := g.periodCols()
	if period > 0 && period%fx != 0 {
		period = 0 // cannot wrap evenly: treat as regional
	}
	colTaps := gridBlockTaps(g.NX, fx, g.Registration, period)
	rowTaps := gridBlockTaps(g.NY, fy, g.Registration, 0)
	if len(colTaps) == 0 || len(rowTaps) == 0 {
		return nil, fault.New(fault.InvalidParameter, "resolution", "resample spacing %g×%g degrees is coarser than the whole %d×%d grid", dx, dy, g.NX, g.NY)
	}
	out := &Grid{NX: len(colTaps), NY: len(rowTaps), West: g.West, North: g.North,
		DX: float64(fx) * g.DX, DY: float64(fy) * g.DY, Registration: g.Registration}
	out.Data = make([]float32, out.NX*out.NY)
	rowW := make([]float64, g.NY)
	for r := range rowW {
		rowW[r] = zoneWeight(g.Lat(r), g.DY)
	}
	accV := make([]float64, out.NX)
	accW := make([]float64, out.NX)
	for R, rt := range rowTaps {
		clear(accV)
		clear(accW)
		for _, rtap := range rt {
			wr := rtap.w * rowW[rtap.i]
			src := g.Data[rtap.i*g.NX : (rtap.i+1)*g.NX]
			for C, ct := range colTaps {
				for _, ctap := range ct {
					if v := src[ctap.i]; !isNaN32(v) {
						w := wr * ctap.w
						accV[C] += w * float64(v)
						accW[C] += w
					}
				}
			}
		}
		meanRow(out.Data[R*out.NX:(R+1)*out.NX], accV, accW)
	}
	return out, nil
}

// zoneWeight is the area weight of a row of cells at latitude lat, dy degrees tall: the
// spherical zone's sin(north edge) − sin(south edge), clipped at the poles.
func zoneWeight(lat, dy float64) float64 {
	n := math.Min(90, lat+dy/2) * math.Pi / 180
	s := math.Max(-90, lat-dy/2) * math.Pi / 180
	return math.Sin(n) - math.Sin(s)
}

// meanRow writes accV/accW per cell (NaN where no valid sample had weight).
func meanRow(dst []float32, accV, accW []float64) {
	for C := range dst {
		if accW[C] > 0 {
			dst[C] = float32(accV[C] / accW[C])
		} else {
			dst[C] = float32(math.NaN())
		}
	}
}

// BlockMean coarsens a cell-centre grid by whole factors fx × fy as Resample does (blocks of
// fx × fy cells aligned on the north-west corner, a partial block at the east or south edge
// dropped, each value the mean of the block's valid cells weighted by their rows' zone areas),
// taking the input a few rows at a time, so a caller reading a large window band by band never
// holds it whole. Resample of a cell-centre grid is NewBlockMean, one AddRows, Result.
type BlockMean struct {
	in         Grid // the input's lattice (Data nil)
	fx, fy     int
	out        *Grid
	accV, accW []float64
}

// NewBlockMean starts the block means of a cell-centre grid with the lattice of in (its Data
// is not read).
func NewBlockMean(in *Grid, fx, fy int) (*BlockMean, error) {
	if in.Registration != CellCentre || fx < 1 || fy < 1 {
		return nil, gridErr("block means need a cell-centre grid and whole factors ≥ 1")
	}
	nx, ny := in.NX/fx, in.NY/fy
	if nx == 0 || ny == 0 {
		return nil, fault.New(fault.InvalidParameter, "resolution", "resample spacing %g×%g degrees is coarser than the whole %d×%d grid",
			float64(fx)*in.DX, float64(fy)*in.DY, in.NX, in.NY)
	}
	h := *in
	h.Data = nil
	out := &Grid{NX: nx, NY: ny, West: in.West + float64(fx-1)*in.DX/2, North: in.North - float64(fy-1)*in.DY/2,
		DX: float64(fx) * in.DX, DY: float64(fy) * in.DY, Registration: CellCentre}
	out.Data = make([]float32, nx*ny)
	nan := float32(math.NaN())
	for i := range out.Data {
		out.Data[i] = nan
	}
	return &BlockMean{in: h, fx: fx, fy: fy, out: out, accV: make([]float64, nx), accW: make([]float64, nx)}, nil
}

// AddRows adds input rows row0, row0+1, … (data holds whole rows of the input's width). Rows
// must come in order, each exactly once, and each call must start at the first row of an
// output row (row0 a multiple of fy) and hold whole output rows, except that the last call may
// end anywhere (rows of a partial block at the south edge are dropped).
func (m *BlockMean) AddRows(row0 int, data []float32) {
	nx, fx, fy := m.in.NX, m.fx, m.fy
	rows := len(data) / nx
	for k := 0; k < rows; k++ {
		r := row0 + k
		R := r / fy
		if R >= m.out.NY {
			break
		}
		if r%fy == 0 {
			clear(m.accV)
			clear(m.accW)
		}
		wr := zoneWeight(m.in.Lat(r), m.in.DY)
		src := data[k*nx : k*nx+m.out.NX*fx]
		for C := range m.out.NX {
			v4, w4 := m.accV[C], m.accW[C]
			for _, v := range src[C*fx : C*fx+fx] {
				if !isNaN32(v) {
					v4 += wr * float64(v)
					w4 += wr
				}
			}
			m.accV[C], m.accW[C] = v4, w4
		}
		if r%fy == fy-1 {
			meanRow(m.out.Data[R*m.out.NX:(R+1)*m.out.NX], m.accV, m.accW)
		}
	}
}

// Result is the coarsened grid (an output row whose input rows were not all given is NaN).
func (m *BlockMean) Result() *Grid { return m.out }
