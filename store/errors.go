package store

import "errors"

// Sentinel errors. Implementations wrap them with context; test with errors.Is.
var (
	// ErrNotFound: no row with that id (or hash).
	ErrNotFound = errors.New("not found")
	// ErrConflict: the write clashes with stored state: a duplicate id, a grid that a
	// dataset still uses, or a stale version (see ErrVersionMismatch, which is also an ErrConflict).
	ErrConflict = errors.New("conflict")
	// ErrVersionMismatch: the expected version given to an update or delete is not the stored
	// one (someone else wrote first). errors.Is(err, ErrConflict) is true for it as well.
	ErrVersionMismatch error = &chainedError{msg: "version mismatch", parent: ErrConflict}
	// ErrInvalid: the input breaks a documented limit or rule.
	ErrInvalid = errors.New("invalid")
	// ErrUnauthorized: an API token that is unknown or revoked.
	ErrUnauthorized = errors.New("unauthorized")
	// ErrUnavailable: the database cannot be reached now (refused or lost connections, the
	// server shutting down or starting up, a connection not made within the connect timeout).
	// Nothing was written; the same call may succeed later.
	ErrUnavailable = errors.New("store unavailable")
	// ErrInsufficientStorage: the grid directory has too little free space for a write (ENOSPC,
	// or less free space than the configured reserve). Nothing was stored.
	ErrInsufficientStorage = errors.New("insufficient storage")
)

// chainedError is a sentinel that also matches a more general sentinel.
type chainedError struct {
	msg    string
	parent error
}

func (e *chainedError) Error() string { return e.msg }
func (e *chainedError) Unwrap() error { return e.parent }

// dbError is a sentinel error with a clean message for answers and the database's own text
// (constraint names, SQL) kept aside for the log: Error() never shows the detail.
type dbError struct {
	sentinel error
	msg      string
	detail   error
}

func (e *dbError) Error() string   { return e.sentinel.Error() + ": " + e.msg }
func (e *dbError) Unwrap() []error { return []error{e.sentinel, e.detail} }

// WithDetail wraps sentinel (ErrConflict, ErrInvalid…) with a message fit for answers, keeping
// the database's error detail only for DetailOf (the log). errors.Is finds both.
func WithDetail(sentinel error, msg string, detail error) error {
	return &dbError{sentinel: sentinel, msg: msg, detail: detail}
}

// DetailOf returns the database detail err carries (see WithDetail), or "".
func DetailOf(err error) string {
	var d *dbError
	if errors.As(err, &d) && d.detail != nil {
		return d.detail.Error()
	}
	return ""
}
