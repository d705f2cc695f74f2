package server

import (
	"errors"
	"time"

	"ridgeflank/store"
	"ridgeflank/thermal"
)

// StoreRetryAfter is the Retry-After of a store-unavailable answer: a few readiness-check
// periods, long enough for a restarting database or a failover, short enough that clients come
// back soon (common practice, no source).
const StoreRetryAfter = 5 * time.Second

// mapDomainError maps the sentinel errors of store and thermal to problems (typed faults are
// mapped before, by faultProblem); nil when err is none of them.
func mapDomainError(err error) *Problem {
	switch {
	case errors.Is(err, store.ErrUnavailable):
		return problem(CodeStoreUnavailable, "the database cannot be reached at the moment; nothing was changed, retry in a few seconds").
			withCause(err).withRetryAfter(StoreRetryAfter)
	case errors.Is(err, store.ErrInsufficientStorage):
		return problem(CodeInsufficientSpace, "%v; nothing was stored", err).withCause(err)
	case errors.Is(err, store.ErrNotFound):
		return problem(CodeNotFound, "%v", err).withCause(err)
	case errors.Is(err, store.ErrVersionMismatch):
		return problem(CodePreconditionFailed, "%v: fetch the resource again and retry with its current ETag", err).withCause(err)
	case errors.Is(err, store.ErrConflict):
		return problem(CodeConflict, "%v", err).withCause(err)
	case errors.Is(err, store.ErrInvalid):
		return problem(CodeInvalidParameter, "%v", err).withCause(err).withStatus(422)
	case errors.Is(err, store.ErrUnauthorized):
		return problem(CodeUnauthorized, "the bearer token is unknown or revoked").withCause(err)
	case errors.Is(err, thermal.ErrUnknownModel):
		return problem(CodeUnknownModel, "%v", err).withCause(err)
	case errors.Is(err, thermal.ErrInvalidParams):
		return problem(CodeInvalidModelParams, "%v", err).withCause(err)
	}
	return nil
}
