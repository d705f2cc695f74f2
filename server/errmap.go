package server

import (
	"errors"

	"ridgeflank/fault"
	"ridgeflank/store"
	"ridgeflank/thermal"
)

// faultProblems is THE table from fault kinds to problem codes; status 0 takes the code's
// catalogued status. Kinds not listed answer bad-request.
var faultProblems = map[fault.Kind]struct {
	code   string
	status int
}{
	fault.InvalidCoords:     {CodeInvalidCoords, 0},
	fault.InvalidGeoJSON:    {CodeInvalidGeoJSON, 0},
	fault.InvalidParameter:  {CodeInvalidParameter, 0},
	fault.UnknownParameter:  {CodeUnknownParameter, 0},
	fault.UnknownModel:      {CodeUnknownModel, 0},
	fault.UnknownSediment:   {CodeUnknownSediment, 0},
	fault.InvalidModel:      {CodeInvalidModelParams, 0},
	fault.AgeOutOfRange:     {CodeAgeOutOfRange, 0},
	fault.UnsupportedFormat: {CodeUnsupportedFormat, 0},
	fault.UnsupportedMedia:  {CodeUnsupportedMedia, 0},
	fault.InvalidGrid:       {CodeInvalidGrid, 0},
	fault.LimitExceeded:     {CodeLimitExceeded, 0},
	fault.NotFound:          {CodeNotFound, 0},
	fault.NoData:            {CodeNoData, 0},
	fault.Conflict:          {CodeConflict, 0},
}

// faultProblem maps the *fault.Error in err's chain to a problem through faultProblems: the
// fault's message is the detail, its field the parameter, its limit the problem's limit.
// nil when err holds no fault.
func faultProblem(err error) *Problem {
	f, ok := fault.As(err)
	if !ok {
		return nil
	}
	m, ok := faultProblems[f.Kind]
	if !ok {
		m.code = CodeBadRequest
	}
	p := problem(m.code, "%s", f.Msg).withCause(err).withParam(f.Field)
	if m.status != 0 {
		p.withStatus(m.status)
	}
	if f.Limit != nil {
		v := f.Limit.Value
		p.Limit, p.LimitName = &v, f.Limit.Name
	}
	return p
}

// mapDomainError maps *fault.Error (through faultProblems) and the sentinel errors of store
// and thermal to problems; nil when err is none of them.
func mapDomainError(err error) *Problem {
	if p := faultProblem(err); p != nil {
		return p
	}
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

func isNotFound(err error) bool { return errors.Is(err, store.ErrNotFound) }
