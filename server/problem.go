package server

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"math"
	"net/http"
	"sort"
	"strconv"
	"time"

	"ridgeflank/fault"
	"ridgeflank/store"
)

// ProblemTypeBase prefixes every problem type URI. Type URIs are relative
// references resolved against the API's own origin; each is listed in the
// OpenAPI document and described at GET /api/problems.
const ProblemTypeBase = "/api/problems/"

// Problem is an RFC 9457 problem details object. Code repeats the last path
// segment of Type so that OGC API clients that read a `code` member (OGC API –
// Common exception schema) understand it too.
type Problem struct {
	Type      string `json:"type"`
	Title     string `json:"title"`
	Status    int    `json:"status"`
	Detail    string `json:"detail,omitempty"`
	Instance  string `json:"instance,omitempty"`
	Code      string `json:"code"`
	RequestID string `json:"request_id,omitempty"`
	// Limit and LimitName state the documented limit a request went over.
	Limit     *int64 `json:"limit,omitempty"`
	LimitName string `json:"limit_name,omitempty"`
	// Parameter names the query parameter or field at fault (the first, when there are several).
	Parameter string `json:"parameter,omitempty"`
	// InvalidParams names every bad field when there are several (RFC 9457 §3's example
	// extension member "invalid-params").
	InvalidParams []InvalidParam `json:"invalid-params,omitempty"`

	cause error
	// retryAfter, when positive, is sent as the Retry-After header (RFC 9110 §10.2.3), in
	// whole seconds.
	retryAfter time.Duration
}

func (p *Problem) Error() string {
	if p.Detail != "" {
		return p.Code + ": " + p.Detail
	}
	return p.Code
}

func (p *Problem) Unwrap() error { return p.cause }

// InvalidParam is one bad field of a request and why it is refused.
type InvalidParam struct {
	Name   string `json:"name"`
	Reason string `json:"reason"`
}

// problemKind is one entry of the problem catalogue.
type problemKind struct {
	Code   string `json:"code"`
	Status int    `json:"status"`
	Title  string `json:"title"`
	Type   string `json:"type"`
}

// Problem codes. These strings are part of the API contract: never rename one.
const (
	CodeBadRequest         = "bad-request"
	CodeInvalidCoords      = "invalid-coords"
	CodeInvalidGeoJSON     = "invalid-geojson"
	CodeInvalidParameter   = "invalid-parameter"
	CodeUnknownParameter   = "unknown-parameter-name"
	CodeUnknownModel       = "unknown-model"
	CodeUnknownSediment    = "unknown-sediment"
	CodeAgeOutOfRange      = "age-out-of-range"
	CodeUnsupportedFormat  = "unsupported-format"
	CodeLimitExceeded      = "limit-exceeded"
	CodeBodyTooLarge       = "body-too-large"
	CodeUnsupportedMedia   = "unsupported-media-type"
	CodeUnauthorized       = "unauthorized"
	CodeForbidden          = "forbidden"
	CodeNotFound           = "not-found"
	CodeMethodNotAllowed   = "method-not-allowed"
	CodeConflict           = "conflict"
	CodePreconditionFailed = "precondition-failed"
	CodePreconditionNeeded = "precondition-required"
	CodeNoData             = "no-data"
	CodeRateLimited        = "rate-limited"
	CodeTimeout            = "timeout"
	CodeUnavailable        = "unavailable"
	CodeStoreUnavailable   = "store-unavailable"
	CodeInsufficientSpace  = "insufficient-storage"
	CodeInternal           = "internal"
	CodeInvalidModelParams = "invalid-model-parameters"
	CodeInvalidGrid        = "invalid-grid"
	CodeInvalidTrack       = "invalid-track"
	CodeInvalidRegion      = "invalid-region"
	CodeImplausible        = "implausible-result"
)

var problemKinds = map[string]problemKind{}

func init() {
	for _, k := range []problemKind{
		{Code: CodeBadRequest, Status: 400, Title: "Bad request"},
		{Code: CodeInvalidCoords, Status: 400, Title: "Malformed coords (WKT)"},
		{Code: CodeInvalidGeoJSON, Status: 400, Title: "Malformed GeoJSON"},
		{Code: CodeInvalidParameter, Status: 400, Title: "Invalid parameter or form field"},
		{Code: CodeUnknownParameter, Status: 400, Title: "Unknown parameter-name"},
		{Code: CodeUnknownModel, Status: 400, Title: "Unknown cooling model"},
		{Code: CodeUnknownSediment, Status: 400, Title: "Unknown sediment compaction set"},
		{Code: CodeAgeOutOfRange, Status: 422, Title: "Age out of range"},
		{Code: CodeUnsupportedFormat, Status: 400, Title: "Unsupported output format"},
		{Code: CodeLimitExceeded, Status: 422, Title: "Request over a documented limit"},
		{Code: CodeBodyTooLarge, Status: 413, Title: "Request body over the size limit"},
		{Code: CodeUnsupportedMedia, Status: 415, Title: "Unsupported media type"},
		{Code: CodeUnauthorized, Status: 401, Title: "Missing or invalid token"},
		{Code: CodeForbidden, Status: 403, Title: "Token role not sufficient"},
		{Code: CodeNotFound, Status: 404, Title: "Not found"},
		{Code: CodeMethodNotAllowed, Status: 405, Title: "Method not allowed"},
		{Code: CodeConflict, Status: 409, Title: "Conflict"},
		{Code: CodePreconditionFailed, Status: 412, Title: "Version does not match (If-Match)"},
		{Code: CodePreconditionNeeded, Status: 428, Title: "If-Match header required"},
		{Code: CodeNoData, Status: 404, Title: "No data at the requested location"},
		{Code: CodeRateLimited, Status: 429, Title: "Too many requests"},
		{Code: CodeTimeout, Status: 503, Title: "Request took too long"},
		{Code: CodeUnavailable, Status: 503, Title: "Service unavailable"},
		{Code: CodeStoreUnavailable, Status: 503, Title: "Database unreachable for now; retry after the Retry-After delay"},
		{Code: CodeInsufficientSpace, Status: 507, Title: "Not enough free space to store the grid"},
		{Code: CodeInternal, Status: 500, Title: "Internal error"},
		{Code: CodeInvalidModelParams, Status: 422, Title: "Invalid model parameters"},
		{Code: CodeInvalidGrid, Status: 422, Title: "Grid file not usable"},
		{Code: CodeInvalidTrack, Status: 400, Title: "Track file not readable"},
		{Code: CodeInvalidRegion, Status: 400, Title: "Polygon not valid (OGC simple features)"},
		{Code: CodeImplausible, Status: 422, Title: "Physically impossible result"},
	} {
		k.Type = ProblemTypeBase + k.Code
		problemKinds[k.Code] = k
	}
}

// problemCatalogue lists every problem kind, sorted by code.
func problemCatalogue() []problemKind {
	out := make([]problemKind, 0, len(problemKinds))
	for _, k := range problemKinds {
		out = append(out, k)
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Code < out[j].Code })
	return out
}

// problem builds a Problem of a catalogued kind with a formatted detail.
func problem(code, format string, args ...any) *Problem {
	k, ok := problemKinds[code]
	if !ok {
		panic("server: uncatalogued problem code " + code)
	}
	return &Problem{Type: k.Type, Title: k.Title, Status: k.Status, Code: code, Detail: fmt.Sprintf(format, args...)}
}

// withStatus overrides the default status (e.g. limit-exceeded as 413).
func (p *Problem) withStatus(s int) *Problem { p.Status = s; return p }

// withParam names the parameter at fault.
func (p *Problem) withParam(name string) *Problem { p.Parameter = name; return p }

// withRetryAfter asks the client to wait d before retrying (the Retry-After header).
func (p *Problem) withRetryAfter(d time.Duration) *Problem { p.retryAfter = d; return p }

// withCause keeps the underlying error for errors.Is/As and logs.
func (p *Problem) withCause(err error) *Problem { p.cause = err; return p }

// limitProblem reports a request over a documented limit, stating it.
func limitProblem(status int, limitName string, limit int64, format string, args ...any) *Problem {
	code := CodeLimitExceeded
	if status == http.StatusRequestEntityTooLarge && limitName == "max_body_bytes" {
		code = CodeBodyTooLarge
	}
	p := problem(code, format, args...)
	p.Status = status
	p.Limit = &limit
	p.LimitName = limitName
	return p
}

// writeProblem writes p as application/problem+json.
func writeProblem(w http.ResponseWriter, r *http.Request, p *Problem) {
	if p.Instance == "" && r != nil {
		p.Instance = r.URL.Path
	}
	if r != nil && p.RequestID == "" {
		p.RequestID = requestID(r.Context())
	}
	h := w.Header()
	for _, k := range []string{"Content-Disposition", "Content-Encoding", "ETag", "Last-Modified", "Cache-Control"} {
		h.Del(k)
	}
	h.Set("Content-Type", "application/problem+json")
	h.Set("Cache-Control", "no-store")
	if p.retryAfter > 0 {
		h.Set("Retry-After", strconv.Itoa(int(math.Ceil(p.retryAfter.Seconds()))))
	}
	w.WriteHeader(p.Status)
	_ = json.NewEncoder(w).Encode(p)
}

// asProblem maps any error to a Problem. Errors that are not already a
// *Problem are mapped through the sentinel errors of the packages we call;
// everything else is an internal error whose detail is not shown.
func asProblem(err error) *Problem {
	var p *Problem
	if errors.As(err, &p) {
		return p
	}
	var mbe *http.MaxBytesError
	if errors.As(err, &mbe) {
		return limitProblem(http.StatusRequestEntityTooLarge, "max_body_bytes", mbe.Limit,
			"the request body is larger than %d bytes", mbe.Limit).withCause(err)
	}
	// An unreachable database or a full disk is said as such even when a layer in between
	// wrapped it, or a deadline ran out while waiting for it.
	if errors.Is(err, store.ErrUnavailable) || errors.Is(err, store.ErrInsufficientStorage) {
		return mapDomainError(err)
	}
	if f, ok := fault.As(err); ok {
		return faultProblem(f)
	}
	if errors.Is(err, context.DeadlineExceeded) {
		return problem(CodeTimeout, "the request did not finish within its time limit").withCause(err)
	}
	if errors.Is(err, context.Canceled) {
		return problem(CodeTimeout, "the request was cancelled").withCause(err)
	}
	if q := mapDomainError(err); q != nil {
		return q
	}
	return problem(CodeInternal, "an internal error occurred; the request id identifies it in the server log").withCause(err)
}

// faultProblem is the one mapping of typed faults (package fault) to problems: the kind is the
// problem code (a kind with no problem of its own is a bad request), the status the code's,
// the field the parameter at fault, and a limit its name and value.
func faultProblem(f *fault.Error) *Problem {
	code := string(f.Kind)
	if _, ok := problemKinds[code]; !ok {
		code = CodeBadRequest
	}
	p := problem(code, "%s", f.Msg).withParam(f.Field).withCause(f)
	if f.Limit != nil {
		v := f.Limit.Value
		p.Limit, p.LimitName = &v, f.Limit.Name
	}
	for _, iv := range f.Invalid {
		p.InvalidParams = append(p.InvalidParams, InvalidParam{Name: iv.Field, Reason: iv.Reason})
	}
	return p
}
