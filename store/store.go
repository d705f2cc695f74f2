package store

import (
	"context"
	"encoding/json"
	"time"

	"github.com/paulmach/orb"
)

// Store is the persistence contract. Every method honours ctx cancellation and deadlines.
// Errors wrap ErrNotFound, ErrConflict (ErrVersionMismatch for stale versions), ErrInvalid or
// ErrUnauthorized; anything else is an infrastructure failure.
//
// Versioned entities (regions, datasets, tracks, custom models) start at Version 1. An update
// must carry the version the caller last read in its Version field; the store writes only if
// that is still the stored version and then increments it, otherwise it returns
// ErrVersionMismatch and changes nothing (optimistic concurrency: no lost updates).
// Deletes take an expected version too; 0 means "whatever the version".
//
// Times are UTC with microsecond precision. Lists are ordered by creation time, then id.
type Store interface {
	// Regions.
	CreateRegion(ctx context.Context, r Region) (Region, error)
	GetRegion(ctx context.Context, id string) (Region, error)
	ListRegions(ctx context.Context, f RegionFilter) ([]Region, error)
	UpdateRegion(ctx context.Context, r Region) (Region, error)
	DeleteRegion(ctx context.Context, id string, expectedVersion int64) error

	// Grid catalogue and grid files.
	//
	// ImportGrid stores a grid file and its catalogue row. write is called with a temporary path
	// inside the grid directory and must create the file there (for example a COG written by
	// geo/gdal.WriteCOG, or CopyFile for a ready file). The file is fsynced and renamed to its
	// content-addressed name, then the row is committed. Metadata fields ID (optional),
	// Name, Kind, Units, VerticalSense, Footprint, ResolutionDeg, Registration, Provenance and
	// Licence come from g; ContentHash is optional (when set and already catalogued, write is not
	// called; when set and the written file differs, ErrInvalid); SizeBytes, Path and CreatedAt
	// are filled in. If a grid with the same content already exists it is returned unchanged with
	// created == false (idempotent re-import; the new metadata, ID included, is ignored: compare
	// the returned ID). A new content under an ID that is taken is ErrConflict, and the stored
	// grid is untouched. On any failure no catalogue row is visible and the file is removed now
	// or by the next sweep.
	ImportGrid(ctx context.Context, g Grid, write func(tmpPath string) error) (grid Grid, created bool, err error)
	GetGrid(ctx context.Context, id string) (Grid, error)
	GetGridByHash(ctx context.Context, sha256Hex string) (Grid, error)
	ListGrids(ctx context.Context, f GridFilter) ([]Grid, error)
	// DeleteGrid removes the row and then the file; ErrConflict while a dataset uses the grid.
	DeleteGrid(ctx context.Context, id string) error
	// Blobs gives access to the grid files (Grid.Path is a key in it).
	Blobs() Blobs
	// Sweep removes temporary files and grid files no catalogue row references. It runs at Open;
	// it skips (returning nil) while an import is in progress anywhere on this host.
	Sweep(ctx context.Context) (removed []string, err error)

	// Datasets: named sets of grids (an age grid plus optional companions).
	CreateDataset(ctx context.Context, d Dataset) (Dataset, error)
	GetDataset(ctx context.Context, id string) (Dataset, error)
	ListDatasets(ctx context.Context, p Page) ([]Dataset, error)
	UpdateDataset(ctx context.Context, d Dataset) (Dataset, error)
	DeleteDataset(ctx context.Context, id string, expectedVersion int64) error

	// Tracks and survey plans.
	CreateTrack(ctx context.Context, t Track) (Track, error)
	GetTrack(ctx context.Context, id string) (Track, error)
	ListTracks(ctx context.Context, p Page) ([]Track, error)
	UpdateTrack(ctx context.Context, t Track) (Track, error)
	DeleteTrack(ctx context.Context, id string, expectedVersion int64) error

	// Survey plans (see Plan). Get, Update and Delete answer ErrNotFound for an id that could
	// never have been stored (not a valid id, invalid UTF-8 included).
	CreatePlan(ctx context.Context, p Plan) (Plan, error)
	GetPlan(ctx context.Context, id string) (Plan, error)
	ListPlans(ctx context.Context, p Page) ([]Plan, error)
	UpdatePlan(ctx context.Context, p Plan) (Plan, error)
	DeletePlan(ctx context.Context, id string, expectedVersion int64) error

	// Custom thermal model parameter sets.
	CreateModel(ctx context.Context, m Model) (Model, error)
	GetModel(ctx context.Context, id string) (Model, error)
	ListModels(ctx context.Context, p Page) ([]Model, error)
	UpdateModel(ctx context.Context, m Model) (Model, error)
	DeleteModel(ctx context.Context, id string, expectedVersion int64) error

	// API tokens. Only the SHA-256 of a token is stored; CreateToken returns the plaintext once.
	CreateToken(ctx context.Context, name string, role Role) (tok Token, plaintext string, err error)
	ListTokens(ctx context.Context) ([]Token, error)
	RevokeToken(ctx context.Context, id string) error
	// Authenticate returns the token for a plaintext secret, or ErrUnauthorized when it is
	// unknown or revoked. It records the time of use (at most once a minute per token).
	Authenticate(ctx context.Context, plaintext string) (Token, error)

	// Health and schema.
	Ping(ctx context.Context) error
	// MigrationsApplied reports whether every embedded migration has been applied.
	MigrationsApplied(ctx context.Context) (bool, error)
	// Migrate applies pending migrations and returns the names of the files applied.
	Migrate(ctx context.Context) ([]string, error)
	MigrationStatus(ctx context.Context) ([]MigrationStatus, error)
	// Backend is "sqlite" or "postgis".
	Backend() string

	Close() error
}

// Limits enforced by every implementation (ErrInvalid beyond them).
const (
	MaxIDLen          = 64      // bytes; ids use [A-Za-z0-9_-] only
	MaxNameLen        = 200     // bytes
	MaxDescriptionLen = 10000   // bytes (descriptions, provenance, licence)
	MaxTags           = 32      // tags per region
	MaxTagLen         = 64      // bytes per tag
	MaxParamsBytes    = 65536   // JSON parameters of tracks and custom models
	MaxVertices       = 1000000 // positions per geometry
	MaxListLimit      = 10000   // Page.Limit; 0 means this many
	MaxPlanLines      = 10000   // lines per survey plan (positions count towards MaxVertices)
)

// Page selects a slice of a list. Limit 0 means MaxListLimit; Offset counts skipped rows.
type Page struct {
	Limit  int
	Offset int
}

// Region is a named area of interest.
//
// Geometry is stored as given (validation of rings, orientation and self-intersection belongs to
// the geo package); the store checks only that it is structurally sound: at least one polygon,
// closed rings of four or more finite positions, latitudes within [-90, 90] and longitudes
// within [-540, 540]. A region that crosses the antimeridian may be split at ±180 (RFC 7946
// §3.1.9) or use continuous longitudes beyond 180; queries treat both forms alike (see RegionFilter).
type Region struct {
	ID          string // generated when empty on create
	Name        string
	Description string
	Tags        []string // never nil on output
	Geometry    orb.MultiPolygon
	Owner       string
	CreatedAt   time.Time
	UpdatedAt   time.Time
	Version     int64
}

// RegionFilter narrows ListRegions. All set conditions must hold.
//
// Spatial tests are planar in longitude/latitude degrees, as PostGIS geometry does, and exact
// (a region is returned when its geometry touches or overlaps the query, not merely its box).
// To handle the antimeridian the query is also tested shifted by +360 and −360 degrees of
// longitude, so a region stored with longitudes beyond 180 matches a query in −180..180 and
// the other way round. Polar caps are ordinary lon/lat polygons reaching latitude ±90.
type RegionFilter struct {
	// BBox: Min is (west, south), Max is (east, north). West > east means the box crosses the
	// antimeridian (for example west 170, east −170). Longitudes in 0..360 are accepted.
	BBox *orb.Bound
	// Intersects: a Point, MultiPoint, LineString, MultiLineString, Polygon, MultiPolygon or Bound.
	Intersects orb.Geometry
	Tag        string // regions carrying this tag
	Owner      string // regions of this owner
	Page
}

// GridKind says what a grid holds.
type GridKind string

// Grid kinds.
const (
	KindAge               GridKind = "age"                // seafloor age, Ma
	KindDepth             GridKind = "depth"              // water depth, m, positive down
	KindElevation         GridKind = "elevation"          // topography/bathymetry, m, positive up
	KindSedimentThickness GridKind = "sediment_thickness" // m
	KindCrustalThickness  GridKind = "crustal_thickness"  // km
	KindAgeUncertainty    GridKind = "age_uncertainty"    // Ma
	KindOther             GridKind = "other"
)

// GridKinds lists the valid kinds.
func GridKinds() []GridKind {
	return []GridKind{KindAge, KindDepth, KindElevation, KindSedimentThickness, KindCrustalThickness, KindAgeUncertainty, KindOther}
}

// VerticalSense is the sign convention of a vertical quantity.
type VerticalSense string

// Vertical senses.
const (
	DepthPositiveDown   VerticalSense = "depth_positive_down"
	ElevationPositiveUp VerticalSense = "elevation_positive_up"
	VerticalNone        VerticalSense = "none"
)

// Registration of grid values: at cell centres (pixel is area) or at nodes (pixel is point).
type Registration string

// Registrations.
const (
	CellCentre Registration = "cell_centre"
	Node       Registration = "node"
)

// Grid is a catalogue row describing one stored raster file.
type Grid struct {
	ID            string
	Name          string
	Kind          GridKind
	Units         string
	VerticalSense VerticalSense
	Footprint     orb.MultiPolygon // area covered, lon/lat degrees (same rules as Region.Geometry)
	ResolutionDeg float64          // nominal cell size, degrees, > 0
	Registration  Registration
	Provenance    string // where the data came from
	Licence       string
	ContentHash   string // SHA-256 of the stored file, lower-case hex
	SizeBytes     int64
	Path          string // key of the file in Blobs (a file name in the grid directory)
	CreatedAt     time.Time
}

// GridFilter narrows ListGrids: by kind and by footprint intersecting a box (same box rules as
// RegionFilter.BBox).
type GridFilter struct {
	Kind GridKind
	BBox *orb.Bound
	Page
}

// Dataset is a named set of grids that belong together; the API's collections.
// AgeGridID must name a grid of kind age; DepthGridID one of kind depth or elevation;
// SedimentGridID sediment_thickness; CrustGridID crustal_thickness; AgeUncertaintyGridID
// age_uncertainty. Empty optional ids mean "none".
type Dataset struct {
	ID                   string
	Name                 string
	Description          string
	AgeGridID            string
	DepthGridID          string
	SedimentGridID       string
	CrustGridID          string
	AgeUncertaintyGridID string
	CreatedAt            time.Time
	UpdatedAt            time.Time
	Version              int64
}

// GridIDs returns the non-empty grid ids of the dataset.
func (d Dataset) GridIDs() []string {
	var ids []string
	for _, id := range []string{d.AgeGridID, d.DepthGridID, d.SedimentGridID, d.CrustGridID, d.AgeUncertaintyGridID} {
		if id != "" {
			ids = append(ids, id)
		}
	}
	return ids
}

// Track is a survey track: ordered waypoints (lon, lat degrees) and free parameters.
// Waypoints are stored as given (at least two finite positions, latitudes within [-90, 90],
// longitudes within [-540, 540]); a leg crossing the antimeridian is the caller's to interpret.
type Track struct {
	ID          string
	Name        string
	Description string
	Waypoints   orb.LineString
	Params      json.RawMessage // a JSON object, kept byte for byte; "{}" when empty
	CreatedAt   time.Time
	UpdatedAt   time.Time
	Version     int64
}

// Model is a stored custom thermal model: Params holds a marshalled thermal.Params
// (the caller marshals and validates it; the store keeps the JSON object byte for byte).
type Model struct {
	ID          string
	Name        string
	Description string
	Params      json.RawMessage
	CreatedAt   time.Time
	UpdatedAt   time.Time
	Version     int64
}

// Plan is a stored survey plan: named lines of waypoints and the settings they are checked
// under. The store does not interpret Settings, a JSON object kept byte for byte ("{}" when
// empty), as Model.Params. Lines are stored as given: each has at least two finite positions
// with latitudes within [-90, 90] and longitudes within [-540, 540], so a line crossing the
// antimeridian keeps the longitudes it was given (179.5 then -179.5, or 179.5 then 180.5).
// Version, times and ids follow the rules of the other versioned entities (see Store).
type Plan struct {
	ID          string // generated (PrefixPlan) when empty on create
	Name        string
	Description string
	Lines       []PlanLine // 1..MaxPlanLines, in the order they are sailed
	Settings    json.RawMessage
	CreatedAt   time.Time
	UpdatedAt   time.Time
	Version     int64
}

// PlanLine is one line of a plan. WaypointNames is nil or holds one name per waypoint ("" for
// an unnamed one); names that are all empty are stored, and returned, as nil.
type PlanLine struct {
	Name          string
	Waypoints     orb.LineString // lon, lat degrees
	WaypointNames []string
}

// Token describes an API token (never its secret).
type Token struct {
	ID         string
	Name       string
	Role       Role
	CreatedAt  time.Time
	LastUsedAt *time.Time // nil if never used
	RevokedAt  *time.Time // nil if active
}

// MigrationStatus is one embedded migration and whether it has been applied.
type MigrationStatus struct {
	Version   int64
	Source    string // file name
	Applied   bool
	AppliedAt time.Time // zero if pending
}
