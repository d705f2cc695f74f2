package geo

import (
	"fmt"

	"ridgeflank/fault"
)

// Field names the faults of this package carry.
const (
	TrackField = "track" // a track file or track geometry
)

// gridErr returns a fault.InvalidGrid error whose cause is ErrInvalidGrid.
func gridErr(format string, args ...any) error {
	return fault.New(fault.InvalidGrid, "", "%w: "+format, append([]any{ErrInvalidGrid}, args...)...)
}

// emptyWindow returns a fault.NoData error whose cause is ErrEmptyWindow.
func emptyWindow(format string, args ...any) error {
	return fault.New(fault.NoData, "", "%w: "+format, append([]any{ErrEmptyWindow}, args...)...)
}

// trackErr returns a fault.InvalidTrack error whose cause is ErrInvalidTrack.
func trackErr(format string, args ...any) error {
	return fault.New(fault.InvalidTrack, TrackField, "%w: "+format, append([]any{ErrInvalidTrack}, args...)...)
}

// trackOver returns a fault.Over("max_vertices", ...) error (too many waypoints) whose cause is
// ErrInvalidTrack; asked is 0 when the number is not known.
func trackOver(limit, asked int, format string, args ...any) error {
	return fault.Over("max_vertices", int64(limit), int64(asked), TrackField, "%w: "+format, append([]any{ErrInvalidTrack}, args...)...)
}

// wrapFault returns err with a prefix giving its context: a fault keeps its kind, limit and
// field (field when it has none); any other error becomes a fault of kind k about field. err
// stays the cause.
func wrapFault(err error, k fault.Kind, field, format string, args ...any) error {
	prefix := fmt.Sprintf(format, args...)
	if f, ok := fault.As(err); ok {
		if f.Field != "" {
			field = f.Field
		}
		return &fault.Error{Kind: f.Kind, Field: field, Msg: prefix + ": " + err.Error(), Limit: f.Limit, Err: err}
	}
	return &fault.Error{Kind: k, Field: field, Msg: prefix + ": " + err.Error(), Err: err}
}
