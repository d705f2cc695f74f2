package server

import (
	"log/slog"
	"net/http"
	"time"

	"github.com/go-chi/chi/v5"
)

func slogStr(k, v string) slog.Attr               { return slog.String(k, v) }
func slogInt(k string, v int) slog.Attr           { return slog.Int(k, v) }
func slogDur(k string, v time.Duration) slog.Attr { return slog.Duration(k, v) }

func levelFor(status int) slog.Level {
	switch {
	case status >= 500:
		return slog.LevelError
	case status >= 400:
		return slog.LevelWarn
	}
	return slog.LevelInfo
}

// routePattern is the chi route pattern that matched (e.g.
// /api/collections/{datasetId}/position), or "" before routing.
func routePattern(r *http.Request) string {
	st, _ := r.Context().Value(ctxRequestID).(*requestState)
	if st != nil && st.route != "" {
		return st.route
	}
	rc := chi.RouteContext(r.Context())
	if rc == nil {
		return ""
	}
	route := rc.RoutePattern()
	if st != nil && route != "" {
		st.route = route // the metrics and the access log both ask, after routing
	}
	return route
}
