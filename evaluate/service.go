package evaluate

import (
	"container/list"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"sync"
	"time"

	"github.com/paulmach/orb"
	"golang.org/x/sync/singleflight"

	"ridgeflank/fault"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/raster"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// Limits are the documented limits of the questions the Service answers. Zero fields take
// DefaultLimits' value. A question over one of them gets a fault.Over error naming it.
type Limits struct {
	MaxPositions    int // points in one Points question ("max_positions")
	MaxVertices     int // vertices of one polygon, multipolygon or track ("max_vertices")
	MaxAreaCells    int // output cells of one area answer ("max_area_cells")
	MaxInputCells   int // input cells read by one area answer ("max_input_cells")
	MaxTrackSamples int // samples along one track ("max_track_samples")
	MaxParameters   int // parameters in one question ("max_parameters")
	MaxTileZoom     int // deepest tile zoom ("max_tile_zoom")
	// MaxStatisticsCells bounds the cells one statistics question answered at once reads at
	// its level ("max_statistics_cells"); statistics stream in bands, so this bounds time, not
	// memory. A larger question is answered as a job (AnswerStatistics), up to
	// MaxStatisticsJobCells.
	MaxStatisticsCells int
	// MaxStatisticsJobCells bounds the cells one statistics job reads
	// ("max_statistics_job_cells").
	MaxStatisticsJobCells int64
	// MaxExportCells bounds the cells of one exported file ("max_export_cells"); files
	// larger than MaxAreaCells are written band by band, so this bounds time and disk.
	MaxExportCells int64
	// MaxPlanLines bounds the lines of one survey plan ("max_plan_lines").
	MaxPlanLines int
	// MaxPlanSamples bounds the samples of all the lines of one plan checked together
	// ("max_plan_samples"), as MaxTrackSamples bounds one track's: the check holds every
	// sample's values, so this bounds its memory (about 200 bytes a sample).
	MaxPlanSamples int
}

// DefaultLimits are the limits used when a Limits field is zero.
var DefaultLimits = Limits{
	MaxPositions:    1000,
	MaxVertices:     10000,
	MaxAreaCells:    4_000_000,
	MaxInputCells:   20_000_000,
	MaxTrackSamples: 100_000,
	MaxParameters:   32, // more than the parameters the service answers (TestEveryParameterFitsOneQuestion)
	MaxTileZoom:     14,
	// 200 M cells: a whole ocean at 1′ in a few seconds on two cores.
	MaxStatisticsCells: 200_000_000,
	// 16 G cells: four 15-arc-second global grids' worth (86400 × 43200 = 3.7 G each).
	MaxStatisticsJobCells: 16_000_000_000,
	// 4 G cells: a 15-arc-second global grid (86400 × 43200 = 3.7 G).
	MaxExportCells: 4_000_000_000,
	// 200 lines and 500,000 samples: 50,000 km at 100 m spacing.
	MaxPlanLines:   200,
	MaxPlanSamples: 250_000,
}

// WithDefaults returns l with every zero field set to DefaultLimits' value.
func (l Limits) WithDefaults() Limits {
	d := DefaultLimits
	for _, f := range []struct{ v, dv *int }{
		{&l.MaxPositions, &d.MaxPositions}, {&l.MaxVertices, &d.MaxVertices}, {&l.MaxAreaCells, &d.MaxAreaCells},
		{&l.MaxInputCells, &d.MaxInputCells}, {&l.MaxTrackSamples, &d.MaxTrackSamples},
		{&l.MaxParameters, &d.MaxParameters}, {&l.MaxTileZoom, &d.MaxTileZoom},
		{&l.MaxStatisticsCells, &d.MaxStatisticsCells}, {&l.MaxPlanLines, &d.MaxPlanLines},
		{&l.MaxPlanSamples, &d.MaxPlanSamples},
	} {
		if *f.v <= 0 {
			*f.v = *f.dv
		}
	}
	if l.MaxExportCells <= 0 {
		l.MaxExportCells = d.MaxExportCells
	}
	if l.MaxStatisticsJobCells <= 0 {
		l.MaxStatisticsJobCells = d.MaxStatisticsJobCells
	}
	return l
}

// Config configures a Service.
type Config struct {
	Store   store.Store // catalogue, grid files, custom models (required for dataset questions)
	Version string      // software version for provenance ("dev" when empty)
	Limits  Limits
	// MemoryBudget bounds, in bytes, the memory the service keeps between questions: decoded
	// grid blocks (raster.Cache) and GDAL's own block cache together (0: DefaultMemoryBudget).
	// See BudgetShares for how it is divided.
	MemoryBudget int64
	// DatasetTTL is how long a loaded dataset is reused before the store is asked again (0:
	// DatasetTTL, the package default). It bounds how long a change made through another
	// instance of the service (another process on the same database) takes to show here.
	DatasetTTL time.Duration
}

// DefaultMemoryBudget is the memory budget used when Config.MemoryBudget is 0: 512 MiB.
const DefaultMemoryBudget int64 = 512 << 20

// BudgetShares divides a memory budget: three quarters for decoded blocks of the stored grids
// (raster.Cache), one sixteenth for GDAL's cache of file blocks (gdal.SetCacheBytes), and the
// rest left for the questions in flight and for the model and sediment tables (a few MB).
func BudgetShares(budget int64) (blocks, gdalCache int64) {
	return budget / 4 * 3, max(budget/16, 8<<20)
}

// Service answers questions about the datasets of one store. It owns the caches (grids by
// content hash, datasets for DatasetTTL, models and sediment tables) and is safe for concurrent
// use. Every way in (HTTP handlers, job workers, the command line) asks the same Service.
type Service struct {
	st      store.Store
	version string
	limits  Limits

	budget     int64
	datasetTTL time.Duration
	blocks     *raster.Cache
	files      fileSet
	datasets   sync.Map // id -> cachedDataset
	models     modelCache
	modelRefs  sync.Map // thermal.Params -> *ModelRef
}

// New returns a Service over cfg.Store.
func New(cfg Config) *Service {
	if cfg.Version == "" {
		cfg.Version = "dev"
	}
	l := cfg.Limits.WithDefaults()
	if cfg.MemoryBudget <= 0 {
		cfg.MemoryBudget = DefaultMemoryBudget
	}
	if cfg.DatasetTTL <= 0 {
		cfg.DatasetTTL = DatasetTTL
	}
	blocks, gdalCache := BudgetShares(cfg.MemoryBudget)
	gdal.SetCacheBytes(gdalCache)
	return &Service{st: cfg.Store, version: cfg.Version, limits: l, budget: cfg.MemoryBudget, datasetTTL: cfg.DatasetTTL,
		blocks: raster.NewCache(blocks),
		files:  fileSet{m: map[string]*list.Element{}, ll: list.New()},
		models: modelCache{m: map[thermal.Params]thermal.Model{}}}
}

// MemoryBudget is the service's memory budget in bytes.
func (s *Service) MemoryBudget() int64 { return s.budget }

// CacheStats describes the decoded-block cache (for health and metrics).
func (s *Service) CacheStats() raster.CacheStats { return s.blocks.Stats() }

// Limits returns the service's limits (defaults filled in).
func (s *Service) Limits() Limits { return s.limits }

// Version is the software version the service states in provenance.
func (s *Service) Version() string { return s.version }

// ---- grid files ----

// maxOpenFiles bounds the grid files kept open for windowed reads (each holds a few GDAL handles).
const maxOpenFiles = 64

// fileSet keeps the stored grid files open for windowed reads, by content hash and path, least
// recently used first out (a closed file finishes the reads in flight).
type fileSet struct {
	mu    sync.Mutex
	m     map[string]*list.Element
	ll    *list.List
	group singleflight.Group
}

// gridFile returns the catalogued grid row opened for windowed reads.
func (s *Service) gridFile(row store.Grid) (*raster.File, error) {
	key := row.ContentHash + "|" + row.Path
	fs := &s.files
	fs.mu.Lock()
	if e, ok := fs.m[key]; ok {
		fs.ll.MoveToFront(e)
		f := e.Value.(*raster.File)
		fs.mu.Unlock()
		return f, nil
	}
	fs.mu.Unlock()
	v, err, _ := fs.group.Do(key, func() (any, error) {
		path, err := s.st.Blobs().Path(row.Path)
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
		f, err := raster.Open(path, row.ContentHash, opt, s.blocks)
		if err != nil {
			return nil, fmt.Errorf("reading grid %s: %w", row.ID, err)
		}
		fs.mu.Lock()
		defer fs.mu.Unlock()
		if e, ok := fs.m[key]; ok { // opened meanwhile
			f.Close(false)
			return e.Value.(*raster.File), nil
		}
		fs.m[key] = fs.ll.PushFront(f)
		for fs.ll.Len() > maxOpenFiles {
			e := fs.ll.Back()
			old := e.Value.(*raster.File)
			fs.ll.Remove(e)
			for k, v := range fs.m {
				if v == e {
					delete(fs.m, k)
				}
			}
			old.Close(false)
		}
		return f, nil
	})
	if err != nil {
		return nil, err
	}
	return v.(*raster.File), nil
}

// ---- datasets ----

// Dataset is a stored dataset with its grid files opened for windowed reads (by Dataset, not by
// DatasetMeta).
type Dataset struct {
	Row   store.Dataset
	Files DatasetFiles
	// Age, Depth, Sediment and Crust are windows of the files read for one question
	// (Service.window); they are nil in the Dataset that Service.Dataset returns. Depth is the
	// observed bathymetry in the sense DepthSense.
	Age, Depth, Sediment, Crust *geo.Grid
	// AgeUncertainty is a window of the age-uncertainty grid (Ma, one standard deviation),
	// read only by the questions that use it (survey plan checks).
	AgeUncertainty *geo.Grid
	DepthSense     geo.VerticalSense
	Refs           []GridRef
	// From the catalogue rows (known without reading any grid file):
	Bounds      orb.Bound // footprint of the age grid
	HasDepth    bool
	HasSediment bool
	// AgeUncertaintyRef is the dataset's age-uncertainty grid (zero when it has none). It is
	// not in Refs: only the questions that read it (survey plan checks) name it.
	AgeUncertaintyRef GridRef
	uncRow            *store.Grid
}

// DatasetFiles are a dataset's grid files (nil where it has none).
type DatasetFiles struct {
	Age, Depth, Sediment, Crust *raster.File
	AgeUncertainty              *raster.File
}

// AgeHeader is the shape of the dataset's full-resolution age grid (no Data).
func (d *Dataset) AgeHeader() geo.Grid { return d.Files.Age.Header() }

// Available lists the parameters the dataset can answer, in the order of Parameters.
func (d *Dataset) Available() []Parameter {
	var out []Parameter
	for _, p := range Parameters {
		if d.answers(p) {
			out = append(out, p)
		}
	}
	return out
}

func (d *Dataset) answers(p Parameter) bool {
	return !(p.NeedsDepth && !d.HasDepth || p.NeedsSed && !d.HasSediment || p.NeedsAgeUncertainty() && !d.HasAgeUncertainty())
}

// HasAgeUncertainty reports whether the dataset has an age-uncertainty grid.
func (d *Dataset) HasAgeUncertainty() bool { return d.AgeUncertaintyRef.ID != "" }

// DatasetTTL is the default of Config.DatasetTTL: how long a loaded dataset (its row and grid
// rows; grid values are cached by content hash separately) is reused without asking the store
// again. Forget drops them at once; changes made by other processes show after at most this long.
const DatasetTTL = 5 * time.Second

type cachedDataset struct {
	d  *Dataset
	at time.Time
}

// Forget drops every cached dataset; call it after any write to datasets or grids.
func (s *Service) Forget() { s.datasets.Clear() }

// Dataset returns the dataset id with its grid files open (cached for Config.DatasetTTL).
func (s *Service) Dataset(ctx context.Context, id string) (*Dataset, error) {
	if v, ok := s.datasets.Load(id); ok {
		if c := v.(cachedDataset); time.Since(c.at) < s.datasetTTL {
			return c.d, nil
		}
	}
	d, rows, err := s.datasetMeta(ctx, id)
	if err != nil {
		return nil, err
	}
	for i, row := range rows {
		if err := ctx.Err(); err != nil {
			return nil, err
		}
		f, err := s.gridFile(row)
		if err != nil {
			return nil, err
		}
		switch d.Refs[i].Role {
		case PSeafloorAge:
			d.Files.Age = f
		case PObservedDepth:
			d.Files.Depth = f
		case PSedimentThickness:
			d.Files.Sediment = f
		case RoleCrust:
			d.Files.Crust = f
		}
	}
	if d.uncRow != nil {
		f, err := s.gridFile(*d.uncRow)
		if err != nil {
			return nil, err
		}
		d.Files.AgeUncertainty = f
	}
	s.datasets.Store(id, cachedDataset{d, time.Now()})
	return d, nil
}

// DatasetMeta returns the dataset id described from its catalogue rows, without reading any
// grid file (its grid fields are nil): enough to describe it as a collection.
func (s *Service) DatasetMeta(ctx context.Context, id string) (*Dataset, error) {
	d, _, err := s.datasetMeta(ctx, id)
	return d, err
}

func (s *Service) datasetMeta(ctx context.Context, id string) (*Dataset, []store.Grid, error) {
	if s.st == nil {
		return nil, nil, fault.New(fault.NotFound, "", "no dataset (collection) %q: there is no store", id)
	}
	row, err := s.st.GetDataset(ctx, id)
	if err != nil {
		if errors.Is(err, store.ErrNotFound) {
			return nil, nil, fault.New(fault.NotFound, "", "no dataset (collection) %q%w", id, quiet(err))
		}
		return nil, nil, err
	}
	if row.AgeGridID == "" {
		return nil, nil, fault.New(fault.NoData, "", "dataset %q has no age grid", id)
	}
	d := &Dataset{Row: row}
	var rows []store.Grid
	for _, sl := range []struct{ id, role string }{
		{row.AgeGridID, PSeafloorAge},
		{row.DepthGridID, PObservedDepth},
		{row.SedimentGridID, PSedimentThickness},
		{row.CrustGridID, RoleCrust},
	} {
		if sl.id == "" {
			continue
		}
		gr, err := s.st.GetGrid(ctx, sl.id)
		if err != nil {
			return nil, nil, fmt.Errorf("dataset %s: grid %s: %w", id, sl.id, err)
		}
		rows = append(rows, gr)
		d.Refs = append(d.Refs, GridRef{ID: gr.ID, Role: sl.role, SHA256: gr.ContentHash, Label: gridLabel(gr.Name, gr.Provenance, gr.Licence)})
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
	if row.AgeUncertaintyGridID != "" {
		gr, err := s.st.GetGrid(ctx, row.AgeUncertaintyGridID)
		if err != nil {
			return nil, nil, fmt.Errorf("dataset %s: grid %s: %w", id, row.AgeUncertaintyGridID, err)
		}
		d.uncRow = &gr
		d.AgeUncertaintyRef = GridRef{ID: gr.ID, Role: RoleAgeUncertainty, SHA256: gr.ContentHash, Label: gridLabel(gr.Name, gr.Provenance, gr.Licence)}
	}
	return d, rows, nil
}

// quietErr wraps a cause without adding to the message (for fault.New's trailing %w).
type quietErr struct{ err error }

func (q quietErr) Error() string { return "" }
func (q quietErr) Unwrap() error { return q.err }

func quiet(err error) error { return quietErr{err} }

// ---- models ----

// DefaultModel is the model used when a question names none.
const DefaultModel = thermal.IDGDH1

// modelCache keeps the Model built for each stored custom parameter set, so thermal.TableFor
// (keyed by parameters) is reused across questions.
type modelCache struct {
	mu sync.Mutex
	m  map[thermal.Params]thermal.Model
}

func (c *modelCache) get(p thermal.Params) (thermal.Model, error) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if m, ok := c.m[p]; ok {
		return m, nil
	}
	m, err := thermal.NewModel(p)
	if err != nil {
		return nil, err
	}
	if len(c.m) > 1024 {
		clear(c.m)
	}
	c.m[p] = m
	return m, nil
}

// IsBuiltin reports whether id names a built-in model.
func IsBuiltin(id string) bool {
	for _, b := range thermal.BuiltinIDs() {
		if strings.EqualFold(b, strings.TrimSpace(id)) {
			return true
		}
	}
	return false
}

// Model resolves a built-in or stored custom model ("" is DefaultModel). An unknown id is a
// fault.UnknownModel about field "model".
func (s *Service) Model(ctx context.Context, id string) (thermal.Model, error) {
	id = strings.TrimSpace(id)
	if id == "" {
		id = DefaultModel
	}
	if IsBuiltin(id) {
		return thermal.Builtin(id)
	}
	p, err := s.CustomModel(ctx, id)
	if err != nil {
		if errors.Is(err, store.ErrNotFound) {
			return nil, fault.New(fault.UnknownModel, "model", "no model %q; built-in models are %s, or store a custom one with POST /api/models%w",
				id, strings.Join(thermal.BuiltinIDs(), ", "), quiet(err))
		}
		return nil, err
	}
	return s.models.get(p)
}

// CustomModel reads a stored custom parameter set (store.ErrNotFound when there is none).
func (s *Service) CustomModel(ctx context.Context, id string) (thermal.Params, error) {
	if s.st == nil {
		return thermal.Params{}, store.ErrNotFound
	}
	m, err := s.st.GetModel(ctx, id)
	if err != nil {
		return thermal.Params{}, err
	}
	var p thermal.Params
	if err := json.Unmarshal(m.Params, &p); err != nil {
		return p, fmt.Errorf("stored model %s: %w", id, err)
	}
	p.ID = m.ID
	return p, nil
}
