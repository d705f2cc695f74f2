package jobs

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/jackc/pgx/v5/pgxpool"
	"github.com/riverqueue/river"
	"github.com/riverqueue/river/riverdriver"
	"github.com/riverqueue/river/riverdriver/riverpgxv5"
	"github.com/riverqueue/river/riverdriver/riversqlite"
	"github.com/riverqueue/river/rivermigrate"
	"github.com/riverqueue/river/rivertype"
	_ "modernc.org/sqlite" // registers the "sqlite" database/sql driver for OpenSQLite

	"ridgeflank/fault"
)

// Job kinds.
const (
	KindGridImport = "grid_import"
	KindExport     = "export"
)

// Documented limits and timings of the queue.
const (
	// JobTimeout is the longest one attempt of a job may run.
	JobTimeout = 30 * time.Minute
	// RescueAfter is how long a job may stay "running" without finishing
	// before it is put back in the queue (it was running in a process that
	// died). Must exceed JobTimeout.
	RescueAfter = 35 * time.Minute
	// MaxAttempts is how often a failing job is tried before it is discarded.
	MaxAttempts = 3
	// Workers is the number of jobs run at once per process (the machine
	// class we target has 2 cores; imports are I/O and CPU heavy).
	Workers = 2
)

// ErrNotFound is returned by Get for an unknown job id.
var ErrNotFound = errors.New("job not found")

// ImportArgs describe one accepted grid upload, already streamed to disk.
type ImportArgs struct {
	// GridID is the id the client asked for; empty to derive it from the grid's content (the
	// job's result carries the id given).
	GridID string `json:"grid_id,omitempty"`
	// Path is the uploaded file on the server's disk.
	Path string `json:"path"`
	// Filename is the client's name of the file.
	Filename string `json:"filename"`
	// Name is a human-readable title.
	Name string `json:"name,omitempty"`
	// Quantity is the grid kind (age, depth, elevation, ...).
	Quantity string `json:"quantity"`
	// Variable selects a netCDF variable, if any.
	Variable string `json:"variable,omitempty"`
	// Units declares the units of the file's values; empty takes the file's own.
	Units string `json:"units,omitempty"`
	// Vertical is "depth" (positive down) or "elevation" (positive up) for bathymetry; empty
	// takes the file's declaration or the kind's.
	Vertical string `json:"vertical,omitempty"`
	// VerticalSense is the older name of Vertical, read from jobs queued before it existed.
	VerticalSense string `json:"vertical_sense,omitempty"`
	// Registration overrides the file's registration: "cell-centre" or "node".
	Registration string `json:"registration,omitempty"`
	// Licence of the data, if given.
	Licence string `json:"licence,omitempty"`
	// SHA256 is the content hash computed while streaming the upload.
	SHA256 string `json:"sha256"`
	// Bytes is the upload size.
	Bytes int64 `json:"bytes"`
}

// Kind implements river.JobArgs.
func (ImportArgs) Kind() string { return KindGridImport }

// ExportArgs describe one large export: an opaque request the export worker
// understands (the HTTP layer's query, serialised) and where to put the file.
type ExportArgs struct {
	Request json.RawMessage `json:"request"`
	Path    string          `json:"path"`
}

// Kind implements river.JobArgs.
func (ExportArgs) Kind() string { return KindExport }

// Progress reports a job's progress: fraction in [0, 1] and a short message.
// It is safe to call from several goroutines.
type Progress func(fraction float64, message string)

// Handlers do the work of each kind. A handler returns a JSON-encodable
// result, or an error; wrap an error with Permanent when retrying is useless
// (a malformed file).
type Handlers struct {
	Import func(ctx context.Context, args ImportArgs, progress Progress) (any, error)
	Export func(ctx context.Context, args ExportArgs, progress Progress) (any, error)
}

// Permanent marks an error that no retry will fix; the job is cancelled.
func Permanent(err error) error { return river.JobCancel(err) }

// State of a job as shown by the API.
type State string

// States.
const (
	StateQueued    State = "queued"
	StateRunning   State = "running"
	StateRetrying  State = "retrying"
	StateSucceeded State = "succeeded"
	StateFailed    State = "failed"
	StateCancelled State = "cancelled"
)

// Status is what GET /api/jobs/{id} shows.
type Status struct {
	ID         int64           `json:"id"`
	Kind       string          `json:"kind"`
	State      State           `json:"state"`
	Attempt    int             `json:"attempt"`
	MaxAttempt int             `json:"max_attempts"`
	Progress   float64         `json:"progress"`
	Message    string          `json:"message,omitempty"`
	Result     json.RawMessage `json:"result,omitempty"`
	Errors     []string        `json:"errors,omitempty"`
	// Fault says why the job failed when the cause was bad input (a *fault.Error).
	Fault      *Fault          `json:"fault,omitempty"`
	Args       json.RawMessage `json:"args,omitempty"`
	CreatedAt  time.Time       `json:"created_at"`
	StartedAt  *time.Time      `json:"started_at,omitempty"`
	FinishedAt *time.Time      `json:"finished_at,omitempty"`
}

// Fault is the bad-input cause of a failed job: the kind, field and message of its
// *fault.Error, so every way in can report it as it reports the same fault met at once.
type Fault struct {
	Kind    fault.Kind `json:"kind"`
	Field   string     `json:"field,omitempty"`
	Message string     `json:"message"`
}

// output is what a job records in River's metadata "output" key.
type output struct {
	Progress float64         `json:"progress"`
	Message  string          `json:"message,omitempty"`
	Result   json.RawMessage `json:"result,omitempty"`
	Fault    *Fault          `json:"fault,omitempty"`
}

// Options tune a Queue.
type Options struct {
	Logger *slog.Logger
	// Workers is the number of concurrent jobs (0: the package default);
	// negative makes an insert-only queue that runs no jobs.
	Workers int
	// PollInterval is how often idle workers look for jobs (0: 1 s).
	PollInterval time.Duration
}

// Queue is a durable job queue.
type Queue struct {
	impl queueImpl
}

type queueImpl interface {
	migrate(ctx context.Context) error
	start(ctx context.Context) error
	stop(ctx context.Context) error
	insert(ctx context.Context, args river.JobArgs, opts *river.InsertOpts) (int64, error)
	get(ctx context.Context, id int64) (*rivertype.JobRow, error)
	update(ctx context.Context, id int64, out output) error
	ping(ctx context.Context) error
}

// NewSQLite makes a queue on the embedded SQLite database. db must be a
// pool with one open connection (db.SetMaxOpenConns(1)), as River's SQLite
// driver needs; use OpenSQLite to get one.
func NewSQLite(db *sql.DB, h Handlers, o Options) (*Queue, error) {
	return newQueue[*sql.Tx](riversqlite.New(db), h, o, func(ctx context.Context) error { return db.PingContext(ctx) })
}

// OpenSQLite opens a second pool on the store's SQLite file for River, with
// one connection, WAL and a busy timeout (the driver must be registered as
// "sqlite", as modernc.org/sqlite does).
func OpenSQLite(path string) (*sql.DB, error) {
	db, err := sql.Open("sqlite", "file:"+path+"?_pragma=busy_timeout(10000)&_pragma=journal_mode(WAL)&_pragma=foreign_keys(1)")
	if err != nil {
		return nil, err
	}
	db.SetMaxOpenConns(1)
	return db, nil
}

// NewPostgres makes a queue on the PostGIS database's pool.
func NewPostgres(pool *pgxpool.Pool, h Handlers, o Options) (*Queue, error) {
	return newQueue[pgx.Tx](riverpgxv5.New(pool), h, o, func(ctx context.Context) error { return pool.Ping(ctx) })
}

type riverQueue[TTx any] struct {
	driver  riverdriver.Driver[TTx]
	client  *river.Client[TTx]
	pinger  func(context.Context) error
	runJobs bool
}

func newQueue[TTx any](driver riverdriver.Driver[TTx], h Handlers, o Options, ping func(context.Context) error) (*Queue, error) {
	if o.Logger == nil {
		o.Logger = slog.New(slog.DiscardHandler)
	}
	rq := &riverQueue[TTx]{driver: driver, pinger: ping, runJobs: o.Workers >= 0}
	cfg := &river.Config{
		Logger:               o.Logger,
		JobTimeout:           JobTimeout,
		RescueStuckJobsAfter: RescueAfter,
		MaxAttempts:          MaxAttempts,
		FetchPollInterval:    o.PollInterval,
	}
	if cfg.FetchPollInterval <= 0 {
		cfg.FetchPollInterval = time.Second
	}
	if _, isSQLite := any(driver).(*riversqlite.Driver); isSQLite {
		cfg.PollOnly = true
	}
	if rq.runJobs {
		n := o.Workers
		if n == 0 {
			n = Workers
		}
		workers := river.NewWorkers()
		river.AddWorker(workers, river.WorkFunc(func(ctx context.Context, job *river.Job[ImportArgs]) error {
			if h.Import == nil {
				return Permanent(errors.New("this server has no grid importer"))
			}
			return rq.run(ctx, job.ID, func(p Progress) (any, error) { return h.Import(ctx, job.Args, p) })
		}))
		river.AddWorker(workers, river.WorkFunc(func(ctx context.Context, job *river.Job[ExportArgs]) error {
			if h.Export == nil {
				return Permanent(errors.New("this server has no exporter"))
			}
			return rq.run(ctx, job.ID, func(p Progress) (any, error) { return h.Export(ctx, job.Args, p) })
		}))
		cfg.Workers = workers
		cfg.Queues = map[string]river.QueueConfig{river.QueueDefault: {MaxWorkers: n}}
	}
	c, err := river.NewClient(driver, cfg)
	if err != nil {
		return nil, fmt.Errorf("jobs: %w", err)
	}
	rq.client = c
	return &Queue{impl: rq}, nil
}

// run executes one job, recording progress as it goes (at most every 250 ms unless the message changes)
// and the final result.
func (q *riverQueue[TTx]) run(ctx context.Context, id int64, fn func(Progress) (any, error)) error {
	var (
		mu      sync.Mutex // a handler may report from several goroutines
		last    time.Time
		lastMsg string
	)
	progress := func(f float64, msg string) {
		mu.Lock()
		defer mu.Unlock()
		if time.Since(last) < 250*time.Millisecond && f < 1 && msg == lastMsg {
			return
		}
		last, lastMsg = time.Now(), msg
		_ = q.update(context.WithoutCancel(ctx), id, output{Progress: clamp01(f), Message: msg})
	}
	progress(0, "started")
	res, err := fn(progress)
	if err != nil {
		out := output{Progress: 0, Message: err.Error()}
		if f, ok := fault.As(err); ok {
			out.Message = f.Msg
			out.Fault = &Fault{Kind: f.Kind, Field: f.Field, Message: f.Msg}
		}
		_ = q.update(context.WithoutCancel(ctx), id, out)
		return err
	}
	raw, err := json.Marshal(res)
	if err != nil {
		return Permanent(fmt.Errorf("jobs: result not encodable: %w", err))
	}
	return river.RecordOutput(ctx, output{Progress: 1, Message: "done", Result: raw})
}

func clamp01(f float64) float64 {
	if !(f >= 0) {
		return 0
	}
	if f > 1 {
		return 1
	}
	return f
}

func (q *riverQueue[TTx]) migrate(ctx context.Context) error {
	m, err := rivermigrate.New(q.driver, nil)
	if err != nil {
		return err
	}
	_, err = m.Migrate(ctx, rivermigrate.DirectionUp, nil)
	return err
}

func (q *riverQueue[TTx]) start(ctx context.Context) error {
	if !q.runJobs {
		return nil
	}
	return q.client.Start(ctx)
}

func (q *riverQueue[TTx]) stop(ctx context.Context) error {
	if !q.runJobs {
		return nil
	}
	err := q.client.Stop(ctx)
	if errors.Is(err, context.DeadlineExceeded) || errors.Is(err, context.Canceled) {
		// Running jobs did not finish in time: cancel them so they are
		// retried on the next start rather than waiting for the rescuer.
		c2, cancel := context.WithTimeout(context.WithoutCancel(ctx), 10*time.Second)
		defer cancel()
		return q.client.StopAndCancel(c2)
	}
	return err
}

func (q *riverQueue[TTx]) insert(ctx context.Context, args river.JobArgs, opts *river.InsertOpts) (int64, error) {
	res, err := q.client.Insert(ctx, args, opts)
	if err != nil {
		return 0, err
	}
	return res.Job.ID, nil
}

func (q *riverQueue[TTx]) get(ctx context.Context, id int64) (*rivertype.JobRow, error) {
	row, err := q.client.JobGet(ctx, id)
	if errors.Is(err, rivertype.ErrNotFound) {
		return nil, fmt.Errorf("job %d: %w", id, ErrNotFound)
	}
	return row, err
}

func (q *riverQueue[TTx]) update(ctx context.Context, id int64, out output) error {
	_, err := q.client.JobUpdate(ctx, id, &river.JobUpdateParams{Output: out})
	return err
}

func (q *riverQueue[TTx]) ping(ctx context.Context) error { return q.pinger(ctx) }

// Migrate runs River's own migrations (its tables live beside the store's).
func (q *Queue) Migrate(ctx context.Context) error { return q.impl.migrate(ctx) }

// Start starts the workers (a no-op for insert-only queues).
func (q *Queue) Start(ctx context.Context) error { return q.impl.start(ctx) }

// Stop waits for running jobs until ctx ends, then cancels them; cancelled
// jobs are retried on the next start.
func (q *Queue) Stop(ctx context.Context) error { return q.impl.stop(ctx) }

// Ready checks that the queue's database answers and River's tables exist.
func (q *Queue) Ready(ctx context.Context) error {
	if err := q.impl.ping(ctx); err != nil {
		return err
	}
	_, err := q.impl.get(ctx, 0)
	if errors.Is(err, ErrNotFound) {
		return nil
	}
	return err
}

// EnqueueImport accepts a grid import; the job survives restarts.
func (q *Queue) EnqueueImport(ctx context.Context, a ImportArgs) (int64, error) {
	return q.impl.insert(ctx, a, &river.InsertOpts{MaxAttempts: MaxAttempts})
}

// EnqueueExport accepts a large export.
func (q *Queue) EnqueueExport(ctx context.Context, a ExportArgs) (int64, error) {
	return q.impl.insert(ctx, a, &river.InsertOpts{MaxAttempts: MaxAttempts})
}

// Get returns a job's status; errors.Is(err, ErrNotFound) for unknown ids.
func (q *Queue) Get(ctx context.Context, id int64) (Status, error) {
	row, err := q.impl.get(ctx, id)
	if err != nil {
		return Status{}, err
	}
	return statusOf(row), nil
}

func statusOf(row *rivertype.JobRow) Status {
	st := Status{
		ID: row.ID, Kind: row.Kind, Attempt: row.Attempt, MaxAttempt: row.MaxAttempts,
		CreatedAt: row.CreatedAt, StartedAt: row.AttemptedAt, FinishedAt: row.FinalizedAt,
		Args: json.RawMessage(row.EncodedArgs),
	}
	switch row.State {
	case rivertype.JobStateAvailable, rivertype.JobStateScheduled, rivertype.JobStatePending:
		st.State = StateQueued
		if row.Attempt > 0 {
			st.State = StateRetrying
		}
	case rivertype.JobStateRetryable:
		st.State = StateRetrying
	case rivertype.JobStateRunning:
		st.State = StateRunning
	case rivertype.JobStateCompleted:
		st.State = StateSucceeded
	case rivertype.JobStateCancelled:
		st.State = StateCancelled
	case rivertype.JobStateDiscarded:
		st.State = StateFailed
	default:
		st.State = State(row.State)
	}
	if st.State == StateQueued {
		st.StartedAt = nil
	}
	var md struct {
		Output *output `json:"output"`
	}
	if len(row.Metadata) > 0 && json.Unmarshal(row.Metadata, &md) == nil && md.Output != nil {
		st.Progress, st.Message, st.Result, st.Fault = md.Output.Progress, md.Output.Message, md.Output.Result, md.Output.Fault
	}
	for _, e := range row.Errors {
		st.Errors = append(st.Errors, e.Error)
	}
	if st.State == StateCancelled && len(st.Errors) > 0 {
		st.State = StateFailed
	}
	return st
}
