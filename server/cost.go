package server

import (
	"context"
	"net/http"
	"strconv"
	"time"

	"github.com/go-chi/httprate"
	"golang.org/x/sync/semaphore"
)

// Heavy requests (area answers) are weighed by their values: the cells they read times the
// parameters they answer (evaluate.Service.AreaCost), twice:
//
//   - at once: all requests in flight together may hold at most Limits.MaxConcurrentValues
//     values (a weighted semaphore; a request larger than the cap waits for the server to be
//     idle). A request that finds no room within Limits.HeavyWait is answered 503 with
//     Retry-After, a problem naming max_concurrent_values.
//   - per minute: a request counts against the client's requests per minute as one request
//     per Limits.ValuesPerRequest values (at least one), so a client within its request
//     count cannot keep both cores busy with the largest questions.

// costGate is the semaphore of the values of the requests in flight.
type costGate struct {
	sem *semaphore.Weighted
	max int64
}

func newCostGate(max int64) *costGate { return &costGate{sem: semaphore.NewWeighted(max), max: max} }

// admit waits up to wait for room for values; release must be called when the work is done.
func (g *costGate) admit(ctx context.Context, values int64, wait time.Duration) (release func(), err error) {
	w := min(max(values, 1), g.max)
	c, cancel := context.WithTimeout(ctx, wait)
	defer cancel()
	if err := g.sem.Acquire(c, w); err != nil {
		return nil, err
	}
	return func() { g.sem.Release(w) }, nil
}

// admitHeavy admits a request of values (cells × parameters), charges the client's rate by
// them, and answers the problem to return when there is no room.
func (s *server) admitHeavy(w http.ResponseWriter, r *http.Request, values int64) (func(), error) {
	s.charge(r, values)
	release, err := s.gate.admit(r.Context(), values, s.limits.HeavyWait)
	if err != nil {
		if r.Context().Err() != nil {
			return nil, r.Context().Err()
		}
		retry := max(1, int(s.limits.HeavyWait.Seconds()))
		w.Header().Set("Retry-After", strconv.Itoa(retry))
		return nil, limitProblem(http.StatusServiceUnavailable, "max_concurrent_values", s.limits.MaxConcurrentValues,
			"the server is answering other large questions (at most %d values, cells × parameters, at once); retry after %d s, or ask for fewer parameters or a coarser resolution",
			s.limits.MaxConcurrentValues, retry).withCode(CodeUnavailable)
	}
	return release, nil
}

// charge counts a request of values as values/ValuesPerRequest requests (the rate limiter
// already counted one) against its client's requests per minute.
func (s *server) charge(r *http.Request, values int64) {
	if s.apiCounter == nil {
		return
	}
	extra := values/s.limits.ValuesPerRequest - 1
	if extra <= 0 {
		return
	}
	extra = min(extra, int64(s.deps.Config.RateLimitPerMinute)) // at most a whole minute's worth
	// httprate.LimitBy keys its counter by the key function's answers joined, each followed by ':'.
	_ = s.apiCounter.IncrementBy(s.clientKey(r)+":", time.Now().UTC().Truncate(time.Minute), int(extra))
}

// clientKey is the rate limiter's key of a request: its client's IP address.
func (s *server) clientKey(r *http.Request) string {
	return httprate.CanonicalizeIP(s.clientAddr(r))
}
