package fault

import (
	"errors"
	"fmt"
)

// Kind says what went wrong, independently of the way in (HTTP, command line, job). The
// strings are stable: the HTTP layer uses them as problem codes.
type Kind string

// Kinds of fault.
const (
	// Invalid input.
	InvalidCoords     Kind = "invalid-coords"           // a geometry (WKT or GeoJSON positions) that cannot be used
	InvalidGeoJSON    Kind = "invalid-geojson"          // a GeoJSON document that cannot be read
	InvalidTrack      Kind = "invalid-track"            // a track file (CSV, GPX, GeoJSON) that cannot be read
	InvalidRegion     Kind = "invalid-region"           // a polygon that is not valid (OGC simple features) and cannot be repaired
	InvalidParameter  Kind = "invalid-parameter"        // a query parameter or form field with a bad value
	UnknownParameter  Kind = "unknown-parameter-name"   // an EDR parameter name that is not known or not available
	UnknownModel      Kind = "unknown-model"            // a cooling model id that is not known
	UnknownSediment   Kind = "unknown-sediment"         // a compaction set name that is not known
	InvalidModel      Kind = "invalid-model-parameters" // model parameters out of their physical range
	AgeOutOfRange     Kind = "age-out-of-range"         // an age outside what a model covers
	UnsupportedFormat Kind = "unsupported-format"       // an output format the query does not answer
	UnsupportedMedia  Kind = "unsupported-media-type"   // an input format that is not read
	InvalidGrid       Kind = "invalid-grid"             // a raster that cannot be imported as asked
	Implausible       Kind = "implausible-result"       // inputs that give a physically impossible result
	// Limits and absence.
	LimitExceeded Kind = "limit-exceeded" // a documented limit was exceeded (see Error.Limit)
	NotFound      Kind = "not-found"      // a named resource does not exist
	NoData        Kind = "no-data"        // the request lies outside the data
	Conflict      Kind = "conflict"       // the request conflicts with what is stored
)

// Limit is a documented limit a request went over.
type Limit struct {
	Name  string // stable name, e.g. "max_area_cells"
	Value int64  // the limit
	Asked int64  // how much the request needed (0 when unknown)
}

// Error is the one error type of faults. Field names the parameter, form field or input at
// fault ("coords", "units", "sediment_thickness"), when there is one.
type Error struct {
	Kind  Kind
	Field string
	Msg   string
	Limit *Limit
	// Invalid names every bad field when a request has several (Field is then the first); the
	// HTTP layer answers them as the problem's "invalid-params" list (RFC 9457 §3, its example
	// extension member).
	Invalid []Invalid
	Err     error // underlying cause, for errors.Is/As and logs
}

// Invalid is one bad field of a request and why it is refused.
type Invalid struct {
	Field  string
	Reason string
}

func (e *Error) Error() string { return e.Msg }

// Unwrap returns the cause.
func (e *Error) Unwrap() error { return e.Err }

// New returns a fault of kind k about field (may be empty) with a formatted message. A
// trailing %w in the format wraps its argument as the cause.
func New(k Kind, field, format string, args ...any) *Error {
	err := fmt.Errorf(format, args...)
	return &Error{Kind: k, Field: field, Msg: err.Error(), Err: errors.Unwrap(err)}
}

// Over returns a LimitExceeded fault: the request asked for asked where name allows limit.
func Over(name string, limit, asked int64, field, format string, args ...any) *Error {
	e := New(LimitExceeded, field, format, args...)
	e.Limit = &Limit{Name: name, Value: limit, Asked: asked}
	return e
}

// As returns the fault in err's chain, if any.
func As(err error) (*Error, bool) {
	var e *Error
	if errors.As(err, &e) {
		return e, true
	}
	return nil, false
}

// Is reports whether err's chain holds a fault of kind k.
func Is(err error, k Kind) bool {
	e, ok := As(err)
	return ok && e.Kind == k
}

// KindOf returns the kind of the fault in err's chain, or "" when there is none.
func KindOf(err error) Kind {
	if e, ok := As(err); ok {
		return e.Kind
	}
	return ""
}
