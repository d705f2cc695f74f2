package server

import (
	"errors"

	"ridgeflank/store"
	"ridgeflank/thermal"
)

// mapDomainError maps the sentinel errors of store and thermal to problems (typed faults are
// mapped before, by faultProblem); nil when err is none of them.
func mapDomainError(err error) *Problem {
	switch {
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
