package server

import (
	"context"
	"io/fs"
	"log/slog"
	"net/http"
	"net/netip"
	"time"

	"github.com/go-chi/chi/v5"
	"github.com/go-chi/chi/v5/middleware"
	"github.com/go-chi/httprate"
	"github.com/prometheus/client_golang/prometheus"

	"ridgeflank/evaluate"
	"ridgeflank/jobs"
	"ridgeflank/store"
)

// Limits are the documented request limits. A request over one of them is
// answered 413 (bodies) or 422 (everything else) with a problem naming the
// limit and its value. Zero fields take DefaultLimits' value.
type Limits struct {
	// Limits are the limits of the questions themselves (positions, vertices, cells, samples,
	// parameters, tile zoom, grid cache), owned by the evaluate service.
	evaluate.Limits
	MaxBodyBytes    int64         // JSON bodies (regions, models, trajectories), bytes
	MaxUploadBytes  int64         // multipart grid uploads, bytes
	MaxCurvePoints  int           // ages in one /curve request
	RequestTimeout  time.Duration // every API request except uploads
	UploadTimeout   time.Duration // grid uploads (streamed to disk)
	SyncExportCells int           // COG/netCDF area answers above this many cells become export jobs
	// BodyIdleTimeout is the longest a request body may send nothing; BodyMinBytesPerSecond the
	// slowest pace a body may keep on average (after a grace of BodyIdleTimeout). A body that
	// stalls or trickles slower is answered 408 and its connection closed.
	BodyIdleTimeout       time.Duration
	BodyMinBytesPerSecond int64
	// MaxConcurrentValues bounds the values (cells read × parameters answered) of all area
	// answers in flight together; a request that finds no room within HeavyWait is answered
	// 503 with Retry-After.
	MaxConcurrentValues int64
	HeavyWait           time.Duration
	// ValuesPerRequest: an area answer counts as one request per this many values (at least
	// one) against the client's requests per minute.
	ValuesPerRequest int64
}

// DefaultLimits are the limits used when Deps.Limits leaves a field zero.
var DefaultLimits = Limits{
	Limits:          evaluate.DefaultLimits,
	MaxBodyBytes:    4 << 20,
	MaxUploadBytes:  2 << 30,
	MaxCurvePoints:  10_001,
	RequestTimeout:  30 * time.Second,
	UploadTimeout:   30 * time.Minute,
	SyncExportCells: 1_000_000,
	// 10 s without a byte, or slower than 16 KiB/s on average: a satellite link manages more;
	// a client holding connections open does not (common practice, no source).
	BodyIdleTimeout:       10 * time.Second,
	BodyMinBytesPerSecond: 16 << 10,
	// About 12 bytes per value are held while an answer is made (measured: 64 concurrent CSV
	// answers of the demo basin's 300,000 cells × 14 parameters, 1.8 GB): 32 M values keep
	// answers in flight near 0.4 GB; a larger single question runs alone.
	MaxConcurrentValues: 32_000_000,
	HeavyWait:           2 * time.Second,
	// 600 requests a minute then allow 37 answers of the demo basin's 14 parameters a minute,
	// and 600 of one parameter (common practice, no source).
	ValuesPerRequest: 250_000,
}

func (l Limits) withDefaults() Limits {
	d := DefaultLimits
	l.Limits = l.Limits.WithDefaults()
	set64 := func(v *int64, dv int64) {
		if *v <= 0 {
			*v = dv
		}
	}
	set := func(v *int, dv int) {
		if *v <= 0 {
			*v = dv
		}
	}
	setD := func(v *time.Duration, dv time.Duration) {
		if *v <= 0 {
			*v = dv
		}
	}
	set64(&l.MaxBodyBytes, d.MaxBodyBytes)
	set64(&l.MaxUploadBytes, d.MaxUploadBytes)
	set(&l.MaxCurvePoints, d.MaxCurvePoints)
	setD(&l.RequestTimeout, d.RequestTimeout)
	setD(&l.BodyIdleTimeout, d.BodyIdleTimeout)
	set64(&l.BodyMinBytesPerSecond, d.BodyMinBytesPerSecond)
	setD(&l.UploadTimeout, d.UploadTimeout)
	set(&l.SyncExportCells, d.SyncExportCells)
	set64(&l.MaxConcurrentValues, d.MaxConcurrentValues)
	setD(&l.HeavyWait, d.HeavyWait)
	set64(&l.ValuesPerRequest, d.ValuesPerRequest)
	return l
}

// Config holds the deployment choices of the HTTP layer.
type Config struct {
	// CORSOrigins lists the origins allowed by CORS; empty disables CORS headers.
	CORSOrigins []string
	// RateLimitPerMinute is the number of API requests one client IP may make
	// per minute (tiles get four times as many); 0 means 600, negative disables.
	RateLimitPerMinute int
	// ReadAuth requires a token with role reader or above on every read.
	ReadAuth bool
	// TileMaxAgeSeconds is the Cache-Control max-age of tiles (0 means 3600).
	TileMaxAgeSeconds int
	// UploadDir is where grid uploads are streamed before their import job.
	UploadDir string
	// ExportDir holds the files of export jobs (default: the system's
	// temporary directory).
	ExportDir string
	// PublicURL is the externally visible base URL (for absolute links). When it is empty,
	// links are built from the request's Host only when that host is trusted (loopback, or
	// listed in TrustedHosts); from any other Host they are root-relative ("/api/…"), so a
	// forged Host header cannot put another site's address into answers.
	PublicURL string
	// TrustedHosts are the host names (without port) whose Host header may make absolute links
	// when PublicURL is empty.
	TrustedHosts []string
	// TrustedProxies are the reverse proxies (addresses or prefixes) whose forwarding headers
	// (X-Forwarded-For, Forwarded) name the client a request is accounted to (rate limits, the
	// access log); see clientAddr. Empty: the TCP peer is the client, whatever the headers say.
	TrustedProxies []netip.Prefix
	// MemoryBudgetBytes bounds the memory kept between requests (decoded grid blocks and GDAL's
	// block cache together; evaluate.Config.MemoryBudget); 0 means evaluate.DefaultMemoryBudget.
	MemoryBudgetBytes int64
	// TileCacheBytes bounds the rendered map tiles kept to answer the same tile again without
	// rendering it (by its ETag); 0 means a sixty-fourth of the memory budget (8 MiB of the
	// default 512 MiB, within its part for the questions in flight), negative keeps none.
	TileCacheBytes int64
	// MinFreeGridBytes is the free space the grid directory must keep: below it /readyz answers
	// not ready (naming the shortfall) and grid uploads answer 507. 0 means
	// DefaultMinFreeGridBytes; negative disables the check.
	MinFreeGridBytes int64
}

// DefaultMinFreeGridBytes is Config.MinFreeGridBytes when it is 0: 256 MiB, room for the
// largest single import of a global 1′ grid as a COG with its overviews, with a margin (common
// practice, no source).
const DefaultMinFreeGridBytes int64 = 256 << 20

// Deps are everything the handlers need; New keeps no global state.
type Deps struct {
	Store    store.Store // required except by the age-only model endpoints and the API description
	Logger   *slog.Logger
	Version  string
	Limits   Limits
	Jobs     JobQueue
	Assets   fs.FS
	Config   Config
	Registry *prometheus.Registry // nil: a fresh registry per handler
	// Evaluate answers the dataset questions; nil means one built from Store, Version and
	// Limits. Share one between the handler and the export worker to share its caches.
	Evaluate *evaluate.Service
	// FreeBytes returns the free space of the file system holding a directory; nil means
	// store.FreeBytes (statfs). Tests give their own.
	FreeBytes func(dir string) (int64, error)
}

// server carries the dependencies shared by the handlers.
type server struct {
	deps    Deps
	log     *slog.Logger
	limits  Limits
	metrics *metrics
	ev      *evaluate.Service
	ready   readiness
	// gate weighs area answers in flight by their values; apiCounter is the API rate
	// limiter's counter (nil when rates are not limited), charged by heavy requests' cost.
	gate       *costGate
	apiCounter httprate.LimitCounter
	tiles      *tileCache // rendered tiles by ETag (nil: none kept)
}

// New builds the HTTP handler: the EDR API under /api, tiles under /tiles,
// health and metrics, and the page's assets at /.
func New(deps Deps) http.Handler {
	return newServer(deps).routes()
}

func newServer(deps Deps) *server {
	if deps.Logger == nil {
		deps.Logger = slog.New(slog.DiscardHandler)
	}
	if deps.Version == "" {
		deps.Version = "dev"
	}
	if deps.Config.TileMaxAgeSeconds <= 0 {
		deps.Config.TileMaxAgeSeconds = 3600
	}
	if deps.Config.RateLimitPerMinute == 0 {
		deps.Config.RateLimitPerMinute = 600
	}
	if deps.Config.MinFreeGridBytes == 0 {
		deps.Config.MinFreeGridBytes = DefaultMinFreeGridBytes
	}
	if deps.FreeBytes == nil {
		deps.FreeBytes = store.FreeBytes
	}
	s := &server{
		deps:   deps,
		log:    deps.Logger,
		limits: deps.Limits.withDefaults(),
		ev:     deps.Evaluate,
	}
	if s.ev == nil {
		s.ev = NewEvaluate(deps)
	}
	s.metrics = newMetrics(deps.Registry)
	s.gate = newCostGate(s.limits.MaxConcurrentValues)
	tb := deps.Config.TileCacheBytes
	if tb == 0 {
		tb = s.ev.MemoryBudget() / 64
	}
	s.tiles = newTileCache(tb)
	return s
}

// handlerFunc is the shape of every handler: it returns an error instead of
// writing one, and the single adapter h turns errors into problem details.
type handlerFunc func(w http.ResponseWriter, r *http.Request) error

// NewEvaluate builds the evaluate service of deps: its store, version and limits.
func NewEvaluate(deps Deps) *evaluate.Service {
	return evaluate.New(evaluate.Config{Store: deps.Store, Version: deps.Version, Limits: deps.Limits.withDefaults().Limits,
		MemoryBudget: deps.Config.MemoryBudgetBytes})
}

// h adapts a handlerFunc to http.HandlerFunc, writing any returned error as
// RFC 9457 application/problem+json. Server faults are logged at error level; a refusal the
// service means to give under a condition that passes (503 store unavailable or busy with a
// Retry-After, 507 disk full) is logged at warning level, so an outage of the database does not
// fill the error log with one line per request.
func (s *server) h(fn handlerFunc) http.HandlerFunc {
	return func(w http.ResponseWriter, r *http.Request) {
		err := fn(w, r)
		if err == nil {
			return
		}
		p := asProblem(err)
		if p.Status >= 500 {
			level := slog.LevelError
			if p.Status == http.StatusServiceUnavailable || p.Status == http.StatusInsufficientStorage {
				level = slog.LevelWarn
			}
			s.log.Log(r.Context(), level, "request failed", "request_id", requestID(r.Context()),
				"method", r.Method, "path", r.URL.Path, "status", p.Status, "err", err)
		} else if d := store.DetailOf(err); d != "" {
			// The database's own words (constraint names, SQL) go to the log, never the answer.
			s.log.InfoContext(r.Context(), "request refused by the store", "request_id", requestID(r.Context()),
				"method", r.Method, "path", r.URL.Path, "status", p.Status, "detail", d)
		}
		if ww, ok := w.(interface{ Status() int }); ok && ww.Status() != 0 {
			// The response has started: nothing sane can be written any more.
			s.log.WarnContext(r.Context(), "error after response started", "err", err)
			return
		}
		writeProblem(w, r, p)
	}
}

func (s *server) routes() http.Handler {
	r := chi.NewRouter()
	r.Use(s.requestIDMiddleware, s.accessLog, s.recoverer, s.metrics.middleware, securityHeaders, headerLimit, s.bodyPace, middleware.GetHead)
	if len(s.deps.Config.CORSOrigins) > 0 {
		r.Use(s.corsMiddleware())
	}
	r.NotFound(s.h(func(w http.ResponseWriter, r *http.Request) error {
		return problem(CodeNotFound, "no resource at %s", r.URL.Path)
	}))
	r.MethodNotAllowed(s.h(func(w http.ResponseWriter, r *http.Request) error {
		return problem(CodeMethodNotAllowed, "%s is not allowed on %s", r.Method, r.URL.Path)
	}))

	r.Get("/healthz", s.h(s.healthz))
	r.Get("/readyz", s.h(s.readyz))
	// Under ReadAuth the metrics need a token too (they describe the service's use).
	r.With(s.authenticate).Get("/metrics", s.metrics.handler().ServeHTTP)

	r.Route("/api", func(r chi.Router) {
		r.Use(s.rateLimit(1), s.timeout(s.limits.RequestTimeout, "/api/grids"), s.needStore, s.authenticate)
		r.Get("/", s.h(s.landing))
		r.Get("/openapi.json", s.h(s.openAPI))
		r.Get("/conformance", s.h(s.conformance))
		r.Get("/problems", s.h(s.problems))
		r.Get("/problems/{code}", s.h(s.problemDoc))
		r.Get("/colour-scales", s.h(s.colourScales))

		r.Get("/collections", s.h(s.collections))
		r.Route("/collections/{datasetId}", func(r chi.Router) {
			r.Use(s.checkCRS)
			r.Get("/", s.h(s.collection))
			r.Get("/position", s.h(s.position))
			r.Get("/area", s.h(s.area))
			r.Get("/trajectory", s.h(s.trajectory))
			r.With(s.bodyLimit(s.limits.MaxBodyBytes)).Post("/trajectory", s.h(s.trajectoryPost))
			r.Get("/corridor", s.h(s.corridor))
			r.Get("/slab-pull", s.h(s.slabPull))
			r.With(s.bodyLimit(s.limits.MaxBodyBytes)).Post("/slab-pull", s.h(s.slabPullPost))
			r.Get("/locations", s.h(s.locationsList))
			r.Get("/locations/{regionId}", s.h(s.location))
			r.Get("/locations/{regionId}/statistics", s.h(s.locationStatistics))
			r.Get("/statistics", s.h(s.areaStatistics))
			r.Get("/figure", s.h(s.figureAnswer))
			r.With(s.bodyLimit(s.limits.MaxBodyBytes)).Post("/statistics", s.h(s.areaStatisticsPost)) // a read: no editor role
			r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Post("/calibrations", s.h(s.createCalibration))
			r.Get("/calibrations/{jobId}", s.h(s.getCalibration))
			r.Get("/calibrations/{jobId}/plot.png", s.h(s.calibrationPlot(evaluate.PlotPNG)))
			r.Get("/calibrations/{jobId}/plot.svg", s.h(s.calibrationPlot(evaluate.PlotSVG)))
		})

		r.Get("/models", s.h(s.listModels))
		r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Post("/models", s.h(s.createModel))
		r.Get("/models/{modelId}", s.h(s.getModel))
		r.Get("/models/{modelId}/curve", s.h(s.modelCurve))
		r.Get("/models/{modelId}/geotherm", s.h(s.modelGeotherm))
		r.Get("/models/{modelId}/ridge-push", s.h(s.modelRidgePush))

		r.Get("/regions", s.h(s.listRegions))
		r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Post("/regions", s.h(s.createRegion))
		r.Get("/regions/{regionId}", s.h(s.getRegion))
		r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Put("/regions/{regionId}", s.h(s.updateRegion))
		r.With(s.require(RoleEditor)).Delete("/regions/{regionId}", s.h(s.deleteRegion))

		r.Get("/plans", s.h(s.listPlans))
		r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Post("/plans", s.h(s.createPlan))
		r.With(s.bodyLimit(s.limits.MaxBodyBytes)).Post("/plans/check", s.h(s.checkPlanPost)) // a read: no editor role
		r.Get("/plans/{planId}", s.h(s.getPlan))
		r.Get("/plans/{planId}/check", s.h(s.checkStoredPlan))
		r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Put("/plans/{planId}", s.h(s.updatePlan))
		r.With(s.require(RoleEditor)).Delete("/plans/{planId}", s.h(s.deletePlan))

		r.Get("/grids", s.h(s.listGrids))
		r.With(s.require(RoleEditor), s.timeout(s.limits.UploadTimeout, ""), s.bodyLimit(s.limits.MaxUploadBytes)).Post("/grids", s.h(s.uploadGrid))
		r.Get("/grids/{gridId}", s.h(s.getGrid))
		r.With(s.require(RoleEditor)).Delete("/grids/{gridId}", s.h(s.deleteGrid))

		r.Get("/datasets", s.h(s.listDatasets))
		r.With(s.require(RoleEditor), s.bodyLimit(s.limits.MaxBodyBytes)).Post("/datasets", s.h(s.createDataset))
		r.Get("/datasets/{datasetId}", s.h(s.getDataset))
		r.With(s.require(RoleEditor)).Delete("/datasets/{datasetId}", s.h(s.deleteDataset))

		r.Get("/jobs/{jobId}", s.h(s.getJob))
		r.Get("/jobs/{jobId}/result", s.h(s.jobResult))
		r.Get("/whoami", s.h(s.whoami))
	})

	r.Route("/tiles", func(r chi.Router) {
		r.Use(s.rateLimit(4), s.timeout(s.limits.RequestTimeout, ""), s.needStore, s.authenticate)
		r.Get("/{datasetId}/{parameter}/{z}/{x}/{y}.png", s.h(s.tile))
	})

	if s.deps.Assets != nil {
		r.Get("/*", s.assets().ServeHTTP)
	}
	return r
}

// JobQueue is the durable queue the handlers use (jobs/queue.Queue implements it).
type JobQueue interface {
	EnqueueImport(ctx context.Context, a jobs.ImportArgs) (int64, error)
	EnqueueExport(ctx context.Context, a jobs.ExportArgs) (int64, error)
	EnqueueCalibration(ctx context.Context, a jobs.CalibrationArgs) (int64, error)
	EnqueueStatistics(ctx context.Context, a jobs.StatisticsArgs) (int64, error)
	Get(ctx context.Context, id int64) (jobs.Status, error)
	Ready(ctx context.Context) error
}
