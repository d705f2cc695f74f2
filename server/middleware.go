package server

import (
	"context"
	"crypto/rand"
	"encoding/hex"
	"errors"
	"fmt"
	"io"
	"net"
	"net/http"
	"net/url"
	"runtime/debug"
	"strings"
	"time"

	"github.com/go-chi/chi/v5/middleware"
	"github.com/go-chi/cors"
	"github.com/go-chi/httprate"
)

type ctxKey int

const (
	ctxRequestID ctxKey = iota
	ctxPrincipal
)

// requestState is what requestIDMiddleware keeps for the rest of the chain: the request id and
// the query string, parsed once (queryOf) instead of by every middleware and parser that reads
// it (five parses made a tenth of a position query's CPU time).
type requestState struct {
	id     string
	query  url.Values
	parsed bool
	route  string // the route pattern, once routed (routePattern)
}

// requestID returns the request id stored by requestIDMiddleware.
func requestID(ctx context.Context) string {
	if st, _ := ctx.Value(ctxRequestID).(*requestState); st != nil {
		return st.id
	}
	return ""
}

// queryOf is r.URL.Query(), parsed at most once per request behind requestIDMiddleware. The
// values are shared by every reader: read them, never change them.
func queryOf(r *http.Request) url.Values {
	st, _ := r.Context().Value(ctxRequestID).(*requestState)
	if st == nil {
		return r.URL.Query()
	}
	if !st.parsed {
		st.query, st.parsed = r.URL.Query(), true
	}
	return st.query
}

// requestIDMiddleware keeps a sane incoming X-Request-ID (≤ 64 characters
// from [A-Za-z0-9._-]) or makes a random one, and echoes it in the response.
func (s *server) requestIDMiddleware(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		id := r.Header.Get("X-Request-ID")
		if !saneRequestID(id) {
			var b [12]byte
			_, _ = rand.Read(b[:])
			id = hex.EncodeToString(b[:])
		}
		w.Header().Set("X-Request-ID", id)
		next.ServeHTTP(w, r.WithContext(context.WithValue(r.Context(), ctxRequestID, &requestState{id: id})))
	})
}

func saneRequestID(id string) bool {
	if id == "" || len(id) > 64 {
		return false
	}
	for _, c := range id {
		if !(c >= 'a' && c <= 'z' || c >= 'A' && c <= 'Z' || c >= '0' && c <= '9' || c == '-' || c == '_' || c == '.') {
			return false
		}
	}
	return true
}

// accessLog writes one structured log line per request.
func (s *server) accessLog(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		ww := middleware.NewWrapResponseWriter(w, r.ProtoMajor)
		next.ServeHTTP(ww, r)
		status := ww.Status()
		if status == 0 {
			status = http.StatusOK
		}
		level := levelFor(status)
		if !s.log.Enabled(r.Context(), level) {
			return // not logged at this level: build no line
		}
		s.log.LogAttrs(r.Context(), level, "http request",
			slogStr("request_id", requestID(r.Context())),
			slogStr("method", r.Method),
			slogStr("path", r.URL.Path),
			slogStr("route", routePattern(r)),
			slogInt("status", status),
			slogInt("bytes", ww.BytesWritten()),
			slogDur("duration", time.Since(start)),
			slogStr("remote", r.RemoteAddr),
			slogStr("client", s.clientAddr(r)),
		)
	})
}

// recoverer turns a panic into a logged stack and a 500 problem.
func (s *server) recoverer(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		defer func() {
			v := recover()
			if v == nil {
				return
			}
			if v == http.ErrAbortHandler {
				panic(v)
			}
			s.log.ErrorContext(r.Context(), "panic", "request_id", requestID(r.Context()),
				"panic", fmt.Sprint(v), "stack", string(debug.Stack()))
			if ww, ok := w.(middleware.WrapResponseWriter); ok && ww.Status() != 0 {
				return
			}
			writeProblem(w, r, problem(CodeInternal, "an internal error occurred; the request id identifies it in the server log"))
		}()
		next.ServeHTTP(w, r)
	})
}

// timeout gives every request a deadline carried by its context down to the
// store and the grid computation. A POST to skipPath (the upload route, which
// has its own longer limit) is left alone.
func (s *server) timeout(d time.Duration, skipPath string) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			if skipPath != "" && r.Method == http.MethodPost && strings.TrimSuffix(r.URL.Path, "/") == skipPath {
				next.ServeHTTP(w, r)
				return
			}
			ctx, release := withLazyDeadline(r.Context(), d)
			defer release()
			next.ServeHTTP(w, r.WithContext(ctx))
		})
	}
}

// bodyLimit caps the request body; reading past it fails with
// *http.MaxBytesError, which the adapter answers 413 stating the limit.
func (s *server) bodyLimit(n int64) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			if r.ContentLength > n {
				writeProblem(w, r, limitProblem(http.StatusRequestEntityTooLarge, "max_body_bytes", n,
					"the request body (%d bytes) is larger than the limit of %d bytes", r.ContentLength, n))
				return
			}
			r.Body = http.MaxBytesReader(w, r.Body, n)
			next.ServeHTTP(w, r)
		})
	}
}

// rateLimit allows RateLimitPerMinute×mult requests per client IP per minute. The API's
// limiter (mult 1) keeps its counter in s.apiCounter, which charge adds the cost of heavy
// requests to (windows aligned to the wall clock's minutes, as charge computes them).
func (s *server) rateLimit(mult int) func(http.Handler) http.Handler {
	n := s.deps.Config.RateLimitPerMinute
	if n < 0 {
		return func(next http.Handler) http.Handler { return next }
	}
	counter := httprate.NewLocalLimitCounter(time.Minute)
	if mult == 1 {
		s.apiCounter = counter
	}
	return httprate.LimitBy(n*mult, time.Minute, func(r *http.Request) (string, error) {
		return s.clientKey(r), nil
	}, httprate.WithLimitCounter(counter), httprate.WithLimitHandler(func(w http.ResponseWriter, r *http.Request) {
		lim := int64(n * mult)
		writeProblem(w, r, limitProblem(http.StatusTooManyRequests, "requests_per_minute", lim,
			"more than %d requests per minute from this address (an area question counts one per %d values, cells × parameters)", lim, s.limits.ValuesPerRequest).withCode(CodeRateLimited))
	}))
}

func (p *Problem) withCode(code string) *Problem {
	k := problemKinds[code]
	p.Code, p.Type, p.Title = code, k.Type, k.Title
	return p
}

// corsMiddleware allows the configured origins.
func (s *server) corsMiddleware() func(http.Handler) http.Handler {
	return cors.Handler(cors.Options{
		AllowedOrigins:   s.deps.Config.CORSOrigins,
		AllowedMethods:   []string{"GET", "HEAD", "POST", "PUT", "DELETE", "OPTIONS"},
		AllowedHeaders:   []string{"Accept", "Authorization", "Content-Type", "If-Match", "If-None-Match", "X-Request-ID"},
		ExposedHeaders:   []string{"ETag", "Location", "X-Request-ID", "Ridgeflank-Provenance", "Ridgeflank-Caution", "Ridgeflank-Colour-Scale", "Ridgeflank-Flag", "Ridgeflank-Repair", "Ridgeflank-Resolution-Note"},
		AllowCredentials: false,
		MaxAge:           600,
	})
}

// needStore answers 503 for endpoints that need a store when none is
// configured (a server built for the age-only endpoints, as in examples).
func (s *server) needStore(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if s.deps.Store == nil && !storeFree(r.URL.Path, r.Method) {
			writeProblem(w, r, problem(CodeUnavailable, "this server has no store configured"))
			return
		}
		next.ServeHTTP(w, r)
	})
}

func storeFree(p, method string) bool {
	p = strings.TrimSuffix(p, "/")
	switch p {
	case "/api", "/api/openapi.json", "/api/conformance", "/api/colour-scales", "/api/problems":
		return true
	}
	if strings.HasPrefix(p, "/api/problems/") {
		return true
	}
	return method == http.MethodGet && strings.HasPrefix(p, "/api/models")
}

// pageCSP is the Content-Security-Policy of the page and its assets: everything from this
// origin only; inline style attributes are allowed because the map library positions its panes
// with them; images may be data: or blob: URLs (the map snapshot and legends); no framing.
const pageCSP = "default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data: blob:; " +
	"connect-src 'self'; font-src 'self'; object-src 'none'; base-uri 'self'; form-action 'self'; frame-ancestors 'none'"

// securityHeaders sets the headers every answer carries: no content-type sniffing, no referrer
// beyond this origin, no framing; and the page's Content-Security-Policy on everything that is
// not an API or tile answer.
func securityHeaders(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		h := w.Header()
		h.Set("X-Content-Type-Options", "nosniff")
		h.Set("Referrer-Policy", "same-origin")
		h.Set("X-Frame-Options", "DENY")
		if !strings.HasPrefix(r.URL.Path, "/api/") && !strings.HasPrefix(r.URL.Path, "/tiles/") {
			h.Set("Content-Security-Policy", pageCSP)
		}
		next.ServeHTTP(w, r)
	})
}

// bodyPace holds request bodies to a pace: every read must bring bytes within
// Limits.BodyIdleTimeout, and the body as a whole must arrive at Limits.BodyMinBytesPerSecond on
// average after a grace of BodyIdleTimeout. A stalled or trickling body ends in a 408 problem
// (its connection is closed), a body cut short in a 400; neither is a server error.
func (s *server) bodyPace(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		if r.Body != nil && r.Body != http.NoBody {
			r.Body = &pacedBody{rc: r.Body, ctl: http.NewResponseController(w), start: time.Now(),
				idle: s.limits.BodyIdleTimeout, rate: s.limits.BodyMinBytesPerSecond, declared: r.ContentLength}
		}
		next.ServeHTTP(w, r)
	})
}

// pacedBody is a request body read under bodyPace's deadlines.
type pacedBody struct {
	rc       io.ReadCloser
	ctl      *http.ResponseController
	start    time.Time
	idle     time.Duration
	rate     int64
	declared int64 // Content-Length, or -1
	read     int64
}

func (b *pacedBody) Read(p []byte) (int, error) {
	want := b.declared
	if want < 0 {
		want = b.read + int64(len(p))
	}
	deadline := b.start.Add(b.idle + time.Duration(float64(want)/float64(b.rate)*float64(time.Second)))
	if d := time.Now().Add(b.idle); d.Before(deadline) {
		deadline = d
	}
	_ = b.ctl.SetReadDeadline(deadline) // not every writer supports it (tests' recorders): then no pace
	n, err := b.rc.Read(p)
	b.read += int64(n)
	switch {
	case err == nil, errors.Is(err, io.EOF):
		return n, err
	case isTimeout(err):
		return n, problem(CodeTimeout, "the request body stalled: %d bytes arrived in %s, slower than %d bytes/s or idle for %s",
			b.read, time.Since(b.start).Round(time.Millisecond), b.rate, b.idle).withStatus(http.StatusRequestTimeout).withCause(err)
	case errors.Is(err, io.ErrUnexpectedEOF):
		return n, problem(CodeBadRequest, "the request body ended after %d of the %d bytes it announced", b.read, b.declared).withCause(err)
	}
	return n, err
}

func (b *pacedBody) Close() error { return b.rc.Close() }

// isTimeout reports a network read timeout.
func isTimeout(err error) bool {
	var ne net.Error
	return errors.As(err, &ne) && ne.Timeout()
}

// Header limits. Go's server refuses a request whose header block exceeds
// http.Server.MaxHeaderBytes (plus its 4 KiB allowance) itself, answering a plain-text 431
// before any handler runs (net/http writes it from the connection; no hook reaches it). So the
// documented limit is MaxHeaderBytes, well below that hard limit, checked here and answered as
// problem+json; only a header block over HardMaxHeaderBytes gets Go's own answer.
const (
	MaxHeaderBytes     = 64 << 10
	HardMaxHeaderBytes = 1 << 20 // http.Server.MaxHeaderBytes (serve sets it)
)

// headerLimit answers 431 problem+json for a request whose header fields (names, values and
// the request line) exceed MaxHeaderBytes.
func headerLimit(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		n := len(r.Method) + len(r.RequestURI) + len(r.Proto) + 4
		for k, vs := range r.Header {
			for _, v := range vs {
				n += len(k) + len(v) + 4 // ": " and CRLF
			}
		}
		if n > MaxHeaderBytes {
			writeProblem(w, r, limitProblem(http.StatusRequestHeaderFieldsTooLarge, "max_header_bytes", MaxHeaderBytes,
				"the request's header fields are %d bytes; the limit is %d", n, MaxHeaderBytes))
			return
		}
		next.ServeHTTP(w, r)
	})
}
