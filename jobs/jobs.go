package jobs

import (
	"context"
	"encoding/json"
	"errors"
	"path"
	"regexp"
	"sort"
	"strings"
	"time"

	"ridgeflank/fault"
)

// Job kinds.
const (
	KindGridImport = "grid_import"
	KindExport     = "export"
	// KindCalibration fits a cooling model to a region (evaluate.Service.Calibrate).
	KindCalibration = "calibration"
	// KindStatistics answers a statistics question larger than a request should.
	KindStatistics = "statistics"
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

// CalibrationArgs describe one calibration: the evaluate request, serialised (the HTTP layer
// checked it before queueing).
type CalibrationArgs struct {
	Request json.RawMessage `json:"request"`
}

// StatisticsArgs describe one statistics question that needs more work than a request should
// do: an opaque request the statistics worker understands (serialised); the job's result is
// the answer itself.
type StatisticsArgs struct {
	Request json.RawMessage `json:"request"`
}

// Kind implements river.JobArgs.
func (CalibrationArgs) Kind() string { return KindCalibration }

// Kind implements river.JobArgs.
func (StatisticsArgs) Kind() string { return KindStatistics }

// Progress reports a job's progress: fraction in [0, 1] and a short message.
// It is safe to call from several goroutines.
type Progress func(fraction float64, message string)

// Handlers do the work of each kind. A handler returns a JSON-encodable
// result, or an error; wrap an error with Permanent when retrying is useless
// (a malformed file).
type Handlers struct {
	Import func(ctx context.Context, args ImportArgs, progress Progress) (any, error)
	Export func(ctx context.Context, args ExportArgs, progress Progress) (any, error)
	// Calibrate answers the evaluate.Calibration as its result.
	Calibrate func(ctx context.Context, args CalibrationArgs, progress Progress) (any, error)
	// Statistics answers a large statistics question.
	Statistics func(ctx context.Context, args StatisticsArgs, progress Progress) (any, error)
}

// PermanentError marks an error that no retry will fix: the queue records it and runs the job
// no more. Test for it with IsPermanent (or errors.As).
type PermanentError struct{ Err error }

// Error returns the wrapped error's message.
func (e *PermanentError) Error() string {
	if e.Err == nil {
		return "permanent job failure"
	}
	return e.Err.Error()
}

// Unwrap returns the wrapped error.
func (e *PermanentError) Unwrap() error { return e.Err }

// Permanent wraps err as a PermanentError; Permanent(nil) is nil.
func Permanent(err error) error {
	if err == nil {
		return nil
	}
	return &PermanentError{Err: err}
}

// IsPermanent reports whether err, or an error it wraps, is a PermanentError.
func IsPermanent(err error) bool {
	var p *PermanentError
	return errors.As(err, &p)
}

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

// absPath finds absolute file paths in a message: a '/' at the start or after a space, quote
// (GDAL quotes paths `so'), bracket, '=' or ',' up to the next space, quote, bracket, ',' or ':'. GDAL's virtual file
// system names (/vsis3/bucket/key) are paths too.
var absPath = regexp.MustCompile("(^|[\\s\"'`(\\[=,])(/[^\\s\"'`()\\[\\],:]+)")

// ScrubPaths rewrites the server paths in a job's message before it is stored or answered:
// each key of names (a known path, such as an upload's file on disk) becomes its value (the
// client's name of it), and any other absolute path its last element, so no answer tells the
// server's directory layout.
func ScrubPaths(msg string, names map[string]string) string {
	// Longest first: a whole path before its last element.
	keys := make([]string, 0, len(names))
	for p := range names {
		if p != "" {
			keys = append(keys, p)
		}
	}
	sort.Slice(keys, func(i, j int) bool { return len(keys[i]) > len(keys[j]) })
	for _, p := range keys {
		msg = strings.ReplaceAll(msg, p, names[p])
	}
	return absPath.ReplaceAllStringFunc(msg, func(m string) string {
		i := strings.IndexByte(m, '/')
		return m[:i] + path.Base(m[i:])
	})
}

// ScrubbedError is an error whose message had its server paths rewritten (ScrubPaths); it
// unwraps to the original, so errors.Is and IsPermanent still see the cause.
type ScrubbedError struct {
	Msg string
	Err error
}

func (e *ScrubbedError) Error() string { return e.Msg }

// Unwrap returns the original error.
func (e *ScrubbedError) Unwrap() error { return e.Err }
