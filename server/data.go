package server

import (
	"container/list"
	"context"
	"fmt"
	"math"
	"net/http"
	"strings"
	"sync"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/paulmach/orb"
	"golang.org/x/sync/singleflight"

	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// Parameter names of the EDR collections (issue contract: never rename).
const (
	PSeafloorAge       = "seafloor_age"
	PObservedDepth     = "observed_depth"
	PSedimentThickness = "sediment_thickness"
	PPredictedDepth    = "predicted_depth"
	PHeatFlow          = "heat_flow"
	PThermalThickness  = "thermal_thickness"
	PCorrectedDepth    = "corrected_depth"
	PResidualDepth     = "residual_depth"
	PDepth600C         = "depth_600c"
)

// paramInfo describes one parameter: its unit, what it needs, and whether it
// is a model prediction (which carries the navigation caution).
type paramInfo struct {
	ID          string
	Label       string
	Description string
	Unit        string // UCUM symbol
	UnitLabel   string
	NeedsDepth  bool // needs an observed depth grid
	NeedsSed    bool // needs a sediment grid
	Predicted   bool // depends on the model
	Output      geo.Outputs
}

var parameterList = []paramInfo{
	{PSeafloorAge, "Seafloor age", "Age of the oceanic crust from the dataset's age grid", "Ma", "million years", false, false, false, 0},
	{PObservedDepth, "Observed depth", "Observed water depth from the dataset's bathymetry grid, positive down", "m", "metre", true, false, false, 0},
	{PSedimentThickness, "Sediment thickness", "Sediment thickness from the dataset's sediment grid", "m", "metre", false, true, false, 0},
	{PPredictedDepth, "Predicted depth", "Water depth predicted by the cooling model from seafloor age, positive down. Model estimate, not for navigation", "m", "metre", false, false, true, geo.OutPredictedDepth},
	{PHeatFlow, "Heat flow", "Surface heat flow predicted by the cooling model", "mW/m2", "milliwatt per square metre", false, false, true, geo.OutHeatFlow},
	{PThermalThickness, "Thermal thickness", "Depth below the seafloor where the model reaches 90% of the mantle temperature excess", "km", "kilometre", false, false, true, geo.OutThermalThickness},
	{PCorrectedDepth, "Corrected depth", "Observed depth corrected for sediment load (and crust when a crustal thickness grid is present), positive down", "m", "metre", true, false, true, geo.OutCorrectedDepth},
	{PResidualDepth, "Residual depth", "Predicted minus corrected depth; positive means shallower than the model", "m", "metre", true, false, true, geo.OutResidualDepth},
	{PDepth600C, "Depth of the 600 °C isotherm", "Depth below the seafloor of the 600 °C isotherm in the model", "km", "kilometre", false, false, true, geo.OutDepth600C},
}

func paramByID(id string) (paramInfo, bool) {
	for _, p := range parameterList {
		if p.ID == id {
			return p, true
		}
	}
	return paramInfo{}, false
}

// dataset is a stored dataset with its grids loaded.
type dataset struct {
	Row        store.Dataset
	Age        *geo.Grid
	Depth      *geo.Grid // observed bathymetry in the sense DepthSense
	DepthSense geo.VerticalSense
	Sediment   *geo.Grid
	Crust      *geo.Grid
	Refs       []GridRef
	// From the catalogue rows (known without reading any grid file):
	Bounds      orb.Bound // footprint of the age grid
	HasDepth    bool
	HasSediment bool
}

// available lists the parameters the dataset can answer.
func (d *dataset) available() []paramInfo {
	var out []paramInfo
	for _, p := range parameterList {
		if p.NeedsDepth && !d.HasDepth || p.NeedsSed && !d.HasSediment {
			continue
		}
		out = append(out, p)
	}
	return out
}

// gridCache keeps decoded grid files in memory, least recently used first
// out, bounded by a total number of cells. Keys are content hashes (plus a
// suffix for overviews), so a changed file is a new key.
type gridCache struct {
	mu       sync.Mutex
	maxCells int
	cells    int
	ll       *list.List
	items    map[string]*list.Element
	group    singleflight.Group
}

type cacheEntry struct {
	key string
	g   *geo.Grid
}

func newGridCache(maxCells int) *gridCache {
	return &gridCache{maxCells: maxCells, ll: list.New(), items: map[string]*list.Element{}}
}

func (c *gridCache) get(key string) (*geo.Grid, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if e, ok := c.items[key]; ok {
		c.ll.MoveToFront(e)
		return e.Value.(*cacheEntry).g, true
	}
	return nil, false
}

func (c *gridCache) put(key string, g *geo.Grid) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if _, ok := c.items[key]; ok {
		return
	}
	n := len(g.Data)
	if n > c.maxCells {
		return
	}
	c.items[key] = c.ll.PushFront(&cacheEntry{key, g})
	c.cells += n
	for c.cells > c.maxCells {
		e := c.ll.Back()
		ce := e.Value.(*cacheEntry)
		c.ll.Remove(e)
		delete(c.items, ce.key)
		c.cells -= len(ce.g.Data)
	}
}

// load returns the cached value for key or builds it once (concurrent
// callers share one build).
func (c *gridCache) load(key string, build func() (*geo.Grid, error)) (*geo.Grid, error) {
	if g, ok := c.get(key); ok {
		return g, nil
	}
	v, err, _ := c.group.Do(key, func() (any, error) {
		if g, ok := c.get(key); ok {
			return g, nil
		}
		g, err := build()
		if err != nil {
			return nil, err
		}
		c.put(key, g)
		return g, nil
	})
	if err != nil {
		return nil, err
	}
	return v.(*geo.Grid), nil
}

// loadGrid reads a catalogued grid file (cached by content hash).
func (s *server) loadGrid(ctx context.Context, row store.Grid) (*geo.Grid, error) {
	return s.grids.load(row.ContentHash, func() (*geo.Grid, error) {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		path, err := s.deps.Store.Blobs().Path(row.Path)
		if err != nil {
			return nil, err
		}
		opt := gdal.ReadOptions{}
		switch row.Registration {
		case store.CellCentre:
			opt.Registration = "cell-centre"
		case store.Node:
			opt.Registration = "node"
		}
		g, _, err := gdal.Read(path, opt)
		if err != nil {
			return nil, fmt.Errorf("reading grid %s: %w", row.ID, err)
		}
		return g, nil
	})
}

// datasetFromPath loads {datasetId} with its grids.
func (s *server) datasetFromPath(r *http.Request) (*dataset, error) {
	return s.loadDataset(r.Context(), chi.URLParam(r, "datasetId"))
}

// datasetTTL is how long a loaded dataset (its row and grid rows; the grid
// values are cached by content hash separately) is reused without asking
// the store again. Writes through this API invalidate it at once; changes
// made by other processes show after at most this long.
const datasetTTL = 5 * time.Second

type cachedDataset struct {
	d  *dataset
	at time.Time
}

func (s *server) forgetDatasets() { s.dsCache.Clear() }

func (s *server) loadDataset(ctx context.Context, id string) (*dataset, error) {
	if v, ok := s.dsCache.Load(id); ok {
		if c := v.(cachedDataset); time.Since(c.at) < datasetTTL {
			return c.d, nil
		}
	}
	d, err := s.loadDatasetUncached(ctx, id)
	if err != nil {
		return nil, err
	}
	s.dsCache.Store(id, cachedDataset{d, time.Now()})
	return d, nil
}

func (s *server) loadDatasetUncached(ctx context.Context, id string) (*dataset, error) {
	d, rows, err := s.loadDatasetMeta(ctx, id)
	if err != nil {
		return nil, err
	}
	for i, row := range rows {
		g, err := s.loadGrid(ctx, row)
		if err != nil {
			return nil, err
		}
		switch d.Refs[i].Role {
		case PSeafloorAge:
			d.Age = g
		case PObservedDepth:
			d.Depth = g
		case PSedimentThickness:
			d.Sediment = g
		case "crustal_thickness":
			d.Crust = g
		}
	}
	return d, nil
}

// loadDatasetMeta reads a dataset's row and its grids' catalogue rows, but
// no grid file: enough to describe it as a collection.
func (s *server) loadDatasetMeta(ctx context.Context, id string) (*dataset, []store.Grid, error) {
	row, err := s.deps.Store.GetDataset(ctx, id)
	if err != nil {
		if isNotFound(err) {
			return nil, nil, problem(CodeNotFound, "no dataset (collection) %q", id)
		}
		return nil, nil, err
	}
	if row.AgeGridID == "" {
		return nil, nil, problem(CodeNoData, "dataset %q has no age grid", id)
	}
	d := &dataset{Row: row}
	var rows []store.Grid
	for _, sl := range []struct{ id, role string }{
		{row.AgeGridID, PSeafloorAge},
		{row.DepthGridID, PObservedDepth},
		{row.SedimentGridID, PSedimentThickness},
		{row.CrustGridID, "crustal_thickness"},
	} {
		if sl.id == "" {
			continue
		}
		gr, err := s.deps.Store.GetGrid(ctx, sl.id)
		if err != nil {
			return nil, nil, fmt.Errorf("dataset %s: grid %s: %w", id, sl.id, err)
		}
		rows = append(rows, gr)
		d.Refs = append(d.Refs, GridRef{ID: gr.ID, Role: sl.role, SHA256: gr.ContentHash})
		switch sl.role {
		case PSeafloorAge:
			d.Bounds = gr.Footprint.Bound()
		case PObservedDepth:
			d.HasDepth = true
			d.DepthSense = geo.DepthPositiveDown
			if gr.Kind == store.KindElevation || gr.VerticalSense == store.ElevationPositiveUp {
				d.DepthSense = geo.ElevationPositiveUp
			}
		case PSedimentThickness:
			d.HasSediment = true
		}
	}
	return d, rows, nil
}

// queryOpts are the model/sediment/parameter choices of one EDR query.
type queryOpts struct {
	Model    thermal.Model
	Sediment thermal.Compaction
	Params   []paramInfo
}

// parseQueryOpts reads parameter-name, model= and sediment=.
func (s *server) parseQueryOpts(r *http.Request, d *dataset) (queryOpts, error) {
	q := r.URL.Query()
	var o queryOpts
	m, err := s.resolveModel(r.Context(), strings.TrimSpace(q.Get("model")))
	if err != nil {
		return o, err
	}
	o.Model = m
	sed := q.Get("sediment")
	if sed == "" {
		sed = "shale"
	}
	c, err := thermal.CompactionByName(sed)
	if err != nil {
		return o, problem(CodeUnknownSediment, "sediment=%q: choose one of %s", sed, strings.Join(thermal.CompactionNames(), ", ")).withParam("sediment")
	}
	o.Sediment = c
	names := q.Get("parameter-name")
	if names == "" {
		o.Params = d.available()
		return o, nil
	}
	seen := map[string]bool{}
	for _, n := range strings.Split(names, ",") {
		n = strings.TrimSpace(n)
		if n == "" || seen[n] {
			continue
		}
		seen[n] = true
		p, ok := paramByID(n)
		if !ok {
			known := make([]string, len(parameterList))
			for i, p := range parameterList {
				known[i] = p.ID
			}
			return o, problem(CodeUnknownParameter, "parameter-name %q is not known; choose from %s", n, strings.Join(known, ", ")).withParam("parameter-name")
		}
		if p.NeedsDepth && !d.HasDepth || p.NeedsSed && !d.HasSediment {
			return o, problem(CodeUnknownParameter, "parameter %q needs a grid dataset %q does not have", n, d.Row.ID).withParam("parameter-name")
		}
		o.Params = append(o.Params, p)
	}
	if len(o.Params) > s.limits.MaxParameters {
		return o, limitProblem(http.StatusUnprocessableEntity, "max_parameters", int64(s.limits.MaxParameters), "too many parameter names").withParam("parameter-name")
	}
	if len(o.Params) == 0 {
		return o, problem(CodeInvalidParameter, "parameter-name is empty").withParam("parameter-name")
	}
	return o, nil
}

func (o queryOpts) predicts() bool {
	for _, p := range o.Params {
		if p.Predicted {
			return true
		}
	}
	return false
}

func (o queryOpts) hasPredictedDepth() bool {
	for _, p := range o.Params {
		if p.ID == PPredictedDepth || p.ID == PResidualDepth || p.ID == PCorrectedDepth {
			return true
		}
	}
	return false
}

// provenanceFor builds the provenance of a dataset query.
func (s *server) provenanceFor(d *dataset, o queryOpts) Provenance {
	var p Provenance
	if o.predicts() {
		p = s.provenance(o.Model)
	} else {
		p = s.provenance(nil)
	}
	p.Dataset = d.Row.ID
	p.Grids = d.Refs
	for _, q := range o.Params {
		if q.NeedsDepth && q.Predicted {
			p.Sediment = o.Sediment.Name
		}
	}
	if o.hasPredictedDepth() {
		p.Caution = Caution
	}
	return p
}

type sedKey struct {
	c             thermal.Compaction
	mantle, water float64
}

func (s *server) sedimentCorrector(c thermal.Compaction, m thermal.Model) (*thermal.SedimentCorrector, error) {
	pr := m.Params()
	k := sedKey{c, pr.MantleDensityKgM3, pr.WaterDensityKgM3}
	if v, ok := s.sedTabs.Load(k); ok {
		return v.(*thermal.SedimentCorrector), nil
	}
	sc, err := thermal.NewSedimentCorrector(c, k.mantle, k.water)
	if err != nil {
		return nil, err
	}
	s.sedTabs.Store(k, sc)
	return sc, nil
}

// pointValues evaluates every parameter at one position (bilinear sampling
// of the grids, the model's lookup table for predictions). The arithmetic
// is that of geo.Evaluate: corrected = observed (positive down) + sediment
// correction (Sclater & Christie 1980) + crust correction (Airy, 7 km
// reference); residual = predicted − corrected (thermal.ResidualDepthM).
func (s *server) pointValues(d *dataset, o queryOpts, sc *thermal.SedimentCorrector, lon, lat float64, out []float64) {
	tab := thermal.TableFor(o.Model)
	age := float64(d.Age.SampleBilinear(lon, lat))
	obs, sed := math.NaN(), math.NaN()
	if d.Depth != nil {
		obs = geo.ToDepthM(float64(d.Depth.SampleBilinear(lon, lat)), d.DepthSense)
	}
	if d.Sediment != nil {
		sed = float64(d.Sediment.SampleBilinear(lon, lat))
	}
	corrected := func() float64 {
		c := obs
		if d.Sediment != nil {
			c += sc.CorrectionM(sed)
		}
		if d.Crust != nil {
			pr := o.Model.Params()
			c += thermal.CrustCorrectionM(float64(d.Crust.SampleBilinear(lon, lat)), thermal.DefaultCrustDensityKgM3, pr.MantleDensityKgM3, pr.WaterDensityKgM3)
		}
		return c
	}
	for i, p := range o.Params {
		var v float64
		switch p.ID {
		case PSeafloorAge:
			v = age
		case PObservedDepth:
			v = obs
		case PSedimentThickness:
			v = sed
		case PPredictedDepth:
			v = tab.DepthM(age)
		case PHeatFlow:
			v = tab.HeatFlowMWm2(age)
		case PThermalThickness:
			v = tab.ThermalThicknessKm(age)
		case PDepth600C:
			v = tab.Depth600CKm(age)
		case PCorrectedDepth:
			v = corrected()
		case PResidualDepth:
			v = thermal.ResidualDepthM(tab.DepthM(age), corrected())
		}
		out[i] = v
	}
}
