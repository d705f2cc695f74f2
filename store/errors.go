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
)

// chainedError is a sentinel that also matches a more general sentinel.
type chainedError struct {
	msg    string
	parent error
}

func (e *chainedError) Error() string { return e.msg }
func (e *chainedError) Unwrap() error { return e.parent }
