package server

import (
	"net/http"
	"strconv"
	"time"

	"github.com/go-chi/chi/v5/middleware"
	"github.com/prometheus/client_golang/prometheus"
	"github.com/prometheus/client_golang/prometheus/collectors"
	"github.com/prometheus/client_golang/prometheus/promhttp"
)

// metrics are the Prometheus series of one handler. Route labels are chi
// patterns, so their number is bounded.
type metrics struct {
	reg      *prometheus.Registry
	requests *prometheus.CounterVec
	duration *prometheus.HistogramVec
	tiles    prometheus.Counter
	cells    prometheus.Counter
}

func newMetrics(reg *prometheus.Registry) *metrics {
	if reg == nil {
		reg = prometheus.NewRegistry()
		reg.MustRegister(collectors.NewGoCollector(), collectors.NewProcessCollector(collectors.ProcessCollectorOpts{}))
	}
	m := &metrics{
		reg: reg,
		requests: prometheus.NewCounterVec(prometheus.CounterOpts{
			Name: "ridgeflank_http_requests_total", Help: "HTTP requests by route pattern, method and status code.",
		}, []string{"route", "method", "code"}),
		duration: prometheus.NewHistogramVec(prometheus.HistogramOpts{
			Name: "ridgeflank_http_request_duration_seconds", Help: "HTTP request duration by route pattern.",
			Buckets: []float64{.001, .0025, .005, .01, .025, .05, .1, .25, .5, 1, 2.5, 5, 10, 30},
		}, []string{"route", "method"}),
		tiles: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "ridgeflank_tiles_rendered_total", Help: "Map tiles rendered (cache misses).",
		}),
		cells: prometheus.NewCounter(prometheus.CounterOpts{
			Name: "ridgeflank_cells_computed_total", Help: "Grid cells evaluated by queries and tiles.",
		}),
	}
	reg.MustRegister(m.requests, m.duration, m.tiles, m.cells)
	return m
}

func (m *metrics) middleware(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		start := time.Now()
		ww, ok := w.(middleware.WrapResponseWriter)
		if !ok {
			ww = middleware.NewWrapResponseWriter(w, r.ProtoMajor)
		}
		next.ServeHTTP(ww, r)
		route := routePattern(r)
		if route == "" {
			route = "unmatched"
		}
		code := ww.Status()
		if code == 0 {
			code = 200
		}
		m.requests.WithLabelValues(route, r.Method, strconv.Itoa(code)).Inc()
		m.duration.WithLabelValues(route, r.Method).Observe(time.Since(start).Seconds())
	})
}

func (m *metrics) handler() http.Handler {
	return promhttp.HandlerFor(m.reg, promhttp.HandlerOpts{})
}
