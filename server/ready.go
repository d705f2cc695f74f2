package server

import (
	"context"
	"fmt"
	"sync"
	"time"
)

// readyCacheFor is how long one readiness answer is reused: probes from several load balancers
// and bursts of them reach the database at most once a second (common practice, no source).
const readyCacheFor = time.Second

// readyCheckTimeout bounds the checks behind one readiness answer (the store ping above all),
// so that a database that does not answer makes /readyz say so quickly instead of hanging.
const readyCheckTimeout = time.Second

// readiness is the last readiness answer and when it was made.
type readiness struct {
	mu     sync.Mutex
	at     time.Time
	ok     bool
	checks map[string]string
}

// readyState returns whether the service is ready and the outcome of each check, made at most
// once per readyCacheFor. The checks run without the request's cancellation (another probe may
// reuse the answer) but within readyCheckTimeout.
func (s *server) readyState(ctx context.Context) (bool, map[string]string) {
	s.ready.mu.Lock()
	defer s.ready.mu.Unlock()
	if !s.ready.at.IsZero() && time.Since(s.ready.at) < readyCacheFor {
		return s.ready.ok, s.ready.checks
	}
	ctx, cancel := context.WithTimeout(context.WithoutCancel(ctx), readyCheckTimeout)
	defer cancel()
	ok, checks := s.checkReady(ctx)
	s.ready.at, s.ready.ok, s.ready.checks = time.Now(), ok, checks
	return ok, checks
}

// checkReady runs the readiness checks: the store is reachable with its migrations applied,
// the grid directory has its reserve of free space, and the job queue is ready.
func (s *server) checkReady(ctx context.Context) (bool, map[string]string) {
	checks := map[string]string{}
	ok := true
	switch st := s.deps.Store; {
	case st == nil:
		checks["store"], ok = "not configured", false
	default:
		if err := st.Ping(ctx); err != nil {
			checks["store"], ok = "unreachable: "+err.Error(), false
		} else if applied, err := st.MigrationsApplied(ctx); err != nil || !applied {
			checks["store"], ok = "migrations not applied", false
			if err != nil {
				checks["store"] += ": " + err.Error()
			}
		} else {
			checks["store"] = "ok (" + st.Backend() + ")"
		}
	}
	if g, checked := s.gridSpace(); checked {
		switch {
		case g.err != nil:
			checks["grid_storage"], ok = "free space unknown: "+g.err.Error(), false
		case g.low():
			checks["grid_storage"], ok = g.String(), false
		default:
			checks["grid_storage"] = "ok (" + g.String() + ")"
		}
	}
	if s.deps.Jobs != nil {
		if err := s.deps.Jobs.Ready(ctx); err != nil {
			checks["jobs"], ok = err.Error(), false
		} else {
			checks["jobs"] = "ok"
		}
	}
	return ok, checks
}

// gridStorage is the free space of the grid directory against its reserve.
type gridStorage struct {
	dir           string
	free, reserve int64
	err           error
}

func (g gridStorage) low() bool { return g.err == nil && g.free < g.reserve }

func (g gridStorage) String() string {
	if g.low() {
		return fmt.Sprintf("%s free in the grid directory, below the reserve of %s (min_free_grid_bytes)", mib(g.free), mib(g.reserve))
	}
	return fmt.Sprintf("%s free in the grid directory", mib(g.free))
}

func mib(n int64) string { return fmt.Sprintf("%.0f MiB", float64(n)/(1<<20)) }

// gridSpace measures the grid directory's free space; checked is false when there is nothing
// to measure (no store, grids not in a local directory, or the check disabled).
func (s *server) gridSpace() (g gridStorage, checked bool) {
	if s.deps.Store == nil || s.deps.Config.MinFreeGridBytes < 0 {
		return g, false
	}
	d, ok := s.deps.Store.Blobs().(interface{ Dir() string })
	if !ok {
		return g, false
	}
	g.dir, g.reserve = d.Dir(), s.deps.Config.MinFreeGridBytes
	g.free, g.err = s.deps.FreeBytes(g.dir)
	return g, true
}
