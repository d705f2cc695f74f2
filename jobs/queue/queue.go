package queue

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"log/slog"
	"path/filepath"
	"sync"
	"time"

	"github.com/jackc/pgx/v5"
	"github.com/riverqueue/river"
	"github.com/riverqueue/river/riverdriver"
	"github.com/riverqueue/river/riverdriver/riverpgxv5"
	"github.com/riverqueue/river/riverdriver/riversqlite"
	"github.com/riverqueue/river/rivermigrate"
	"github.com/riverqueue/river/rivertype"

	"ridgeflank/fault"
	"ridgeflank/jobs"
	"ridgeflank/store"
	"ridgeflank/store/postgis"
	"ridgeflank/store/sqlite"
)

// output is what a job records in River's metadata "output" key.
type output struct {
	Progress float64         `json:"progress"`
	Message  string          `json:"message,omitempty"`
	Result   json.RawMessage `json:"result,omitempty"`
	Fault    *jobs.Fault     `json:"fault,omitempty"`
}

// Options tune a Queue.
type Options struct {
	// Logger receives River's log (nil: discarded).
	Logger *slog.Logger
	// Workers is the number of concurrent jobs (0: jobs.Workers);
	// negative makes an insert-only queue that runs no jobs.
	Workers int
	// PollInterval is how often idle workers look for jobs (0: 1 s).
	PollInterval time.Duration
	// HeartbeatEvery and OwnerGone tune the liveness of processes sharing a PostGIS queue (0:
	// DefaultHeartbeatEvery, DefaultOwnerGone); see heartbeat.go.
	HeartbeatEvery, OwnerGone time.Duration
}

// Queue is a durable job queue.
type Queue struct {
	impl  queueImpl
	close func() error // closes what Open opened (nil: nothing)
}

type queueImpl interface {
	migrate(ctx context.Context) error
	start(ctx context.Context) error
	stop(ctx context.Context) error
	insert(ctx context.Context, args river.JobArgs, opts *river.InsertOpts) (int64, error)
	get(ctx context.Context, id int64) (*rivertype.JobRow, error)
	update(ctx context.Context, id int64, out output) error
	ping(ctx context.Context) error
	importPaths(ctx context.Context) (map[string]bool, error)
}

// Open makes the queue for a store, in the store's own database: on the embedded SQLite
// store a second pool on its file with one connection (River's SQLite driver needs that; the
// store's DSN gives WAL and a busy timeout), on PostGIS the store's pool. It pings the database
// and fails for a store of any other kind. Run Migrate before Start, and Close when done.
func Open(ctx context.Context, st store.Store, h jobs.Handlers, o Options) (*Queue, error) {
	var (
		q   *Queue
		err error
	)
	switch s := st.(type) {
	case *sqlite.Store:
		db, oerr := sql.Open("sqlite", sqlite.DSN(s.Path()))
		if oerr != nil {
			return nil, fmt.Errorf("job queue: %w", oerr)
		}
		db.SetMaxOpenConns(1)
		q, err = newQueue[*sql.Tx](riversqlite.New(db), true, h, o, db.PingContext)
		if err != nil {
			db.Close()
			return nil, err
		}
		q.close = db.Close
	case *postgis.Store:
		pool := s.Pool()
		q, err = newQueue[pgx.Tx](riverpgxv5.New(pool), false, h, o, pool.Ping)
		if err != nil {
			return nil, err
		}
		q.impl.(*riverQueue[pgx.Tx]).beats = pgBeats{pool: pool}
	default:
		return nil, fmt.Errorf("job queue: no queue for a %s store", st.Backend())
	}
	if err := q.impl.ping(ctx); err != nil {
		_ = q.Close()
		return nil, fmt.Errorf("job queue: %w", err)
	}
	return q, nil
}

type riverQueue[TTx any] struct {
	driver  riverdriver.Driver[TTx]
	client  *river.Client[TTx]
	pinger  func(context.Context) error
	runJobs bool
	// single is true for the embedded store, which one process owns: a job "running" when it
	// starts was left by a process that died, and is rescued at once (rescueOrphans).
	single bool
	log    *slog.Logger
	// beats, on a shared (PostGIS) queue, keeps the processes' signs of life: jobs of a gone
	// process are rescued at once (heartbeat.go). id is this process's River client id.
	beats       heartbeats
	id          string
	every, gone time.Duration
	stopBeats   func()
}

func newQueue[TTx any](driver riverdriver.Driver[TTx], pollOnly bool, h jobs.Handlers, o Options, ping func(context.Context) error) (*Queue, error) {
	if o.Logger == nil {
		o.Logger = slog.New(slog.DiscardHandler)
	}
	rq := &riverQueue[TTx]{driver: driver, pinger: ping, runJobs: o.Workers >= 0, single: pollOnly, log: o.Logger,
		id: clientID(), every: o.HeartbeatEvery, gone: o.OwnerGone}
	if rq.every <= 0 {
		rq.every = DefaultHeartbeatEvery
	}
	if rq.gone <= 0 {
		rq.gone = DefaultOwnerGone
	}
	cfg := &river.Config{
		ID:                   rq.id,
		Logger:               o.Logger,
		JobTimeout:           jobs.JobTimeout,
		RescueStuckJobsAfter: jobs.RescueAfter,
		MaxAttempts:          jobs.MaxAttempts,
		FetchPollInterval:    o.PollInterval,
	}
	if cfg.FetchPollInterval <= 0 {
		cfg.FetchPollInterval = time.Second
	}
	cfg.PollOnly = pollOnly // SQLite has no LISTEN/NOTIFY
	if rq.runJobs {
		n := o.Workers
		if n == 0 {
			n = jobs.Workers
		}
		workers := river.NewWorkers()
		river.AddWorker(workers, river.WorkFunc(func(ctx context.Context, job *river.Job[jobs.ImportArgs]) error {
			if h.Import == nil {
				return river.JobCancel(errors.New("this server has no grid importer"))
			}
			// The upload's path on disk reads as the client's file name in messages.
			var names map[string]string
			if job.Args.Path != "" && job.Args.Filename != "" {
				names = map[string]string{job.Args.Path: job.Args.Filename, filepath.Base(job.Args.Path): job.Args.Filename}
			}
			return rq.runNamed(ctx, job.ID, names, func(p jobs.Progress) (any, error) { return h.Import(ctx, job.Args, p) })
		}))
		river.AddWorker(workers, river.WorkFunc(func(ctx context.Context, job *river.Job[jobs.ExportArgs]) error {
			if h.Export == nil {
				return river.JobCancel(errors.New("this server has no exporter"))
			}
			return rq.run(ctx, job.ID, func(p jobs.Progress) (any, error) { return h.Export(ctx, job.Args, p) })
		}))
		river.AddWorker(workers, river.WorkFunc(func(ctx context.Context, job *river.Job[jobs.CalibrationArgs]) error {
			if h.Calibrate == nil {
				return river.JobCancel(errors.New("this server has no calibrator"))
			}
			return rq.run(ctx, job.ID, func(p jobs.Progress) (any, error) { return h.Calibrate(ctx, job.Args, p) })
		}))
		river.AddWorker(workers, river.WorkFunc(func(ctx context.Context, job *river.Job[jobs.StatisticsArgs]) error {
			if h.Statistics == nil {
				return river.JobCancel(errors.New("this server answers no statistics jobs"))
			}
			return rq.run(ctx, job.ID, func(p jobs.Progress) (any, error) { return h.Statistics(ctx, job.Args, p) })
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
// and the final result. A jobs.PermanentError becomes River's JobCancel, so the job is not retried.
func (q *riverQueue[TTx]) run(ctx context.Context, id int64, fn func(jobs.Progress) (any, error)) error {
	return q.runNamed(ctx, id, nil, fn)
}

// runNamed is run with the paths a job's messages may name and the names to show instead
// (jobs.ScrubPaths): what is stored (progress message, fault, River's error list) never holds
// a server path.
func (q *riverQueue[TTx]) runNamed(ctx context.Context, id int64, names map[string]string, fn func(jobs.Progress) (any, error)) error {
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
		_ = q.update(context.WithoutCancel(ctx), id, output{Progress: clamp01(f), Message: jobs.ScrubPaths(msg, names)})
	}
	progress(0, "started")
	res, err := fn(progress)
	if err != nil {
		err = &jobs.ScrubbedError{Msg: jobs.ScrubPaths(err.Error(), names), Err: err}
		out := output{Progress: 0, Message: err.Error()}
		if f, ok := fault.As(err); ok {
			out.Message = jobs.ScrubPaths(f.Msg, names)
			out.Fault = &jobs.Fault{Kind: f.Kind, Field: f.Field, Message: out.Message}
		}
		_ = q.update(context.WithoutCancel(ctx), id, out)
		if jobs.IsPermanent(err) {
			return river.JobCancel(err) // River runs a cancelled job no more
		}
		return err
	}
	raw, err := json.Marshal(res)
	if err != nil {
		return river.JobCancel(fmt.Errorf("jobs: result not encodable: %w", err))
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
	if _, err = m.Migrate(ctx, rivermigrate.DirectionUp, nil); err != nil {
		return err
	}
	if q.beats != nil {
		return q.beats.migrate(ctx)
	}
	return nil
}

func (q *riverQueue[TTx]) start(ctx context.Context) error {
	if !q.runJobs {
		return nil
	}
	if q.single {
		n, err := q.rescueOrphans(ctx, nil)
		if err != nil {
			return fmt.Errorf("rescuing jobs left running: %w", err)
		}
		if n > 0 {
			q.log.Info("jobs left running by a stopped process put back in the queue or failed", "count", n)
		}
	}
	if q.beats != nil {
		if err := q.beatAndRescue(ctx); err != nil {
			return fmt.Errorf("job queue heartbeat: %w", err)
		}
		bctx, cancel := context.WithCancel(context.WithoutCancel(ctx))
		done := make(chan struct{})
		q.stopBeats = func() { cancel(); <-done }
		go func() {
			defer close(done)
			t := time.NewTicker(q.every)
			defer t.Stop()
			for {
				select {
				case <-bctx.Done():
					return
				case <-t.C:
					if err := q.beatAndRescue(bctx); err != nil && bctx.Err() == nil {
						q.log.Warn("job queue heartbeat", "err", err)
					}
				}
			}
		}()
	}
	return q.client.Start(ctx)
}

// beatAndRescue records this process's sign of life and rescues the running jobs whose
// process has given none for q.gone.
func (q *riverQueue[TTx]) beatAndRescue(ctx context.Context) error {
	if err := q.beats.beat(ctx, q.id); err != nil {
		return err
	}
	seen, err := q.beats.seen(ctx)
	if err != nil {
		return err
	}
	// This process's own beat, just written, is the database's present.
	now, ok := seen[q.id]
	if !ok {
		return nil
	}
	n, err := q.rescueOrphans(ctx, func(j *rivertype.JobRow) bool {
		if len(j.AttemptedBy) == 0 {
			return false
		}
		at, ok := seen[j.AttemptedBy[len(j.AttemptedBy)-1]]
		return ok && now.Sub(at) > q.gone
	})
	if n > 0 {
		q.log.Info("jobs left running by a process that stopped giving signs of life put back in the queue or failed", "count", n)
	}
	return err
}

// OrphanMessage is the error recorded on a job whose process stopped while running it.
const OrphanMessage = "the process running this job stopped before it finished"

// rescueOrphans puts the jobs left "running" (all of them, or those gone says are) back in the
// queue at once (or fails them when their attempts are used up), as River's rescuer would after
// jobs.RescueAfter. With gone nil only for the embedded store before the workers start: no
// other process can be running them. The error recorded is OrphanMessage.
func (q *riverQueue[TTx]) rescueOrphans(ctx context.Context, gone func(*rivertype.JobRow) bool) (int, error) {
	now := time.Now().UTC()
	p := riverdriver.JobRescueManyParams{StuckHorizon: now.Add(time.Minute)}
	// At most Workers jobs run at once per process, so a few are left; 10,000 is generous.
	res, err := q.client.JobList(ctx, river.NewJobListParams().States(rivertype.JobStateRunning).First(10_000))
	if err != nil {
		return 0, err
	}
	for _, job := range res.Jobs {
		if gone != nil && !gone(job) {
			continue
		}
		errData, err := json.Marshal(rivertype.AttemptError{At: now, Attempt: max(job.Attempt, 0), Error: OrphanMessage})
		if err != nil {
			return 0, err
		}
		state, fin := rivertype.JobStateAvailable, (*time.Time)(nil)
		if job.Attempt >= job.MaxAttempts {
			state, fin = rivertype.JobStateDiscarded, &now
		}
		p.ID = append(p.ID, job.ID)
		p.Error = append(p.Error, errData)
		p.FinalizedAt = append(p.FinalizedAt, fin)
		p.ScheduledAt = append(p.ScheduledAt, now)
		p.State = append(p.State, string(state))
	}
	if len(p.ID) == 0 {
		return 0, nil
	}
	if _, err := q.driver.GetExecutor().JobRescueMany(ctx, &p); err != nil {
		return 0, err
	}
	return len(p.ID), nil
}

func (q *riverQueue[TTx]) stop(ctx context.Context) error {
	if !q.runJobs {
		return nil
	}
	if q.stopBeats != nil {
		q.stopBeats()
		q.stopBeats = nil
		defer func() { _ = q.beats.forget(context.WithoutCancel(ctx), q.id) }()
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
		return nil, fmt.Errorf("job %d: %w", id, jobs.ErrNotFound)
	}
	return row, err
}

func (q *riverQueue[TTx]) update(ctx context.Context, id int64, out output) error {
	_, err := q.client.JobUpdate(ctx, id, &river.JobUpdateParams{Output: out})
	return err
}

func (q *riverQueue[TTx]) ping(ctx context.Context) error { return q.pinger(ctx) }

// Close releases the database pool Open made for the queue (none on PostGIS, whose pool is the
// store's). Call it after Stop.
func (q *Queue) Close() error {
	if q.close == nil {
		return nil
	}
	return q.close()
}

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
	if errors.Is(err, jobs.ErrNotFound) {
		return nil
	}
	return err
}

// EnqueueImport accepts a grid import; the job survives restarts.
func (q *Queue) EnqueueImport(ctx context.Context, a jobs.ImportArgs) (int64, error) {
	return q.impl.insert(ctx, a, &river.InsertOpts{MaxAttempts: jobs.MaxAttempts})
}

// EnqueueExport accepts a large export.
func (q *Queue) EnqueueExport(ctx context.Context, a jobs.ExportArgs) (int64, error) {
	return q.impl.insert(ctx, a, &river.InsertOpts{MaxAttempts: jobs.MaxAttempts})
}

// EnqueueCalibration accepts a calibration.
func (q *Queue) EnqueueCalibration(ctx context.Context, a jobs.CalibrationArgs) (int64, error) {
	return q.impl.insert(ctx, a, &river.InsertOpts{MaxAttempts: jobs.MaxAttempts})
}

// EnqueueStatistics accepts a statistics question larger than a request should answer.
func (q *Queue) EnqueueStatistics(ctx context.Context, a jobs.StatisticsArgs) (int64, error) {
	return q.impl.insert(ctx, a, &river.InsertOpts{MaxAttempts: jobs.MaxAttempts})
}

// Get returns a job's status; errors.Is(err, jobs.ErrNotFound) for unknown ids.
func (q *Queue) Get(ctx context.Context, id int64) (jobs.Status, error) {
	row, err := q.impl.get(ctx, id)
	if err != nil {
		return jobs.Status{}, err
	}
	return statusOf(row), nil
}

func statusOf(row *rivertype.JobRow) jobs.Status {
	st := jobs.Status{
		ID: row.ID, Kind: row.Kind, Attempt: row.Attempt, MaxAttempt: row.MaxAttempts,
		CreatedAt: row.CreatedAt, StartedAt: row.AttemptedAt, FinishedAt: row.FinalizedAt,
		Args: json.RawMessage(row.EncodedArgs),
	}
	switch row.State {
	case rivertype.JobStateAvailable, rivertype.JobStateScheduled, rivertype.JobStatePending:
		st.State = jobs.StateQueued
		if row.Attempt > 0 {
			st.State = jobs.StateRetrying
		}
	case rivertype.JobStateRetryable:
		st.State = jobs.StateRetrying
	case rivertype.JobStateRunning:
		st.State = jobs.StateRunning
	case rivertype.JobStateCompleted:
		st.State = jobs.StateSucceeded
	case rivertype.JobStateCancelled:
		st.State = jobs.StateCancelled
	case rivertype.JobStateDiscarded:
		st.State = jobs.StateFailed
	default:
		st.State = jobs.State(row.State)
	}
	if st.State == jobs.StateQueued {
		st.StartedAt = nil
	}
	var md struct {
		Output *output `json:"output"`
	}
	if len(row.Metadata) > 0 && json.Unmarshal(row.Metadata, &md) == nil && md.Output != nil {
		st.Progress, st.Message, st.Result, st.Fault = md.Output.Progress, md.Output.Message, md.Output.Result, md.Output.Fault
	}
	// Jobs stored before messages were scrubbed answer without server paths too.
	st.Message = jobs.ScrubPaths(st.Message, nil)
	if st.Fault != nil {
		st.Fault.Message = jobs.ScrubPaths(st.Fault.Message, nil)
	}
	for _, e := range row.Errors {
		st.Errors = append(st.Errors, jobs.ScrubPaths(e.Error, nil))
	}
	if st.State == jobs.StateCancelled && len(st.Errors) > 0 {
		st.State = jobs.StateFailed
	}
	return st
}

// ImportPaths are the upload files that import jobs not yet finished will read (queued,
// retrying or running): the files an upload sweep must keep.
func (q *Queue) ImportPaths(ctx context.Context) (map[string]bool, error) {
	return q.impl.importPaths(ctx)
}

func (q *riverQueue[TTx]) importPaths(ctx context.Context) (map[string]bool, error) {
	params := river.NewJobListParams().Kinds(jobs.KindGridImport).States(
		rivertype.JobStateAvailable, rivertype.JobStateScheduled, rivertype.JobStateRetryable,
		rivertype.JobStateRunning, rivertype.JobStatePending).First(10_000)
	res, err := q.client.JobList(ctx, params)
	if err != nil {
		return nil, err
	}
	out := map[string]bool{}
	for _, j := range res.Jobs {
		var a jobs.ImportArgs
		if json.Unmarshal(j.EncodedArgs, &a) == nil && a.Path != "" {
			out[a.Path] = true
		}
	}
	return out, nil
}
