package main

import (
	"slices"
	"testing"
	"time"

	"gonum.org/v1/gonum/stat"
)

// TestPercentileNearestRank checks the nearest-rank percentile against the worked examples of
// the nearest-rank method in Wikipedia's "Percentile" article (from memory) and against gonum's
// stat.Quantile with the Empirical kind (the smallest value with at least a fraction p of the
// values at or below it), a reference outside the project.
func TestPercentileNearestRank(t *testing.T) {
	ds := func(v ...int) []time.Duration {
		out := make([]time.Duration, len(v))
		for i, x := range v {
			out[i] = time.Duration(x)
		}
		return out
	}
	cases := []struct {
		list []time.Duration
		p    float64
		want time.Duration
	}{
		// {15, 20, 35, 40, 50}: 5th → 15, 30th → 20, 40th → 20, 50th → 35, 100th → 50.
		{ds(15, 20, 35, 40, 50), 5, 15},
		{ds(15, 20, 35, 40, 50), 30, 20},
		{ds(15, 20, 35, 40, 50), 40, 20},
		{ds(15, 20, 35, 40, 50), 50, 35},
		{ds(15, 20, 35, 40, 50), 100, 50},
		// {3, 6, 7, 8, 8, 10, 13, 15, 16, 20}: 25th → 7, 50th → 8, 75th → 15, 100th → 20.
		{ds(3, 6, 7, 8, 8, 10, 13, 15, 16, 20), 25, 7},
		{ds(3, 6, 7, 8, 8, 10, 13, 15, 16, 20), 50, 8},
		{ds(3, 6, 7, 8, 8, 10, 13, 15, 16, 20), 75, 15},
		{ds(3, 6, 7, 8, 8, 10, 13, 15, 16, 20), 100, 20},
		{nil, 50, 0},
	}
	for _, c := range cases {
		if got := percentile(c.list, c.p); got != c.want {
			t.Errorf("percentile(%v, %g) = %v, want %v", c.list, c.p, got, c.want)
		}
	}

	// 1000 latencies in a scrambled order, sorted as kindStats.finish sorts them.
	var list []time.Duration
	x := 7
	for range 1000 {
		x = (x*7919 + 13) % 10007
		list = append(list, time.Duration(x)*time.Microsecond)
	}
	slices.Sort(list)
	f := make([]float64, len(list))
	for i, d := range list {
		f[i] = float64(d)
	}
	for _, p := range []float64{1, 50, 90, 99, 99.9} {
		want := stat.Quantile(p/100, stat.Empirical, f, nil)
		if got := float64(percentile(list, p)); got != want {
			t.Errorf("p%g of 1000 values: %v, gonum stat.Quantile(Empirical) %v", p, time.Duration(got), time.Duration(want))
		}
	}
}

// TestLoopbackOnly checks that only http:// targets on a loopback address are accepted
// (127.0.0.0/8 and ::1, RFC 1122 §3.2.1.3 and RFC 4291 §2.5.3).
func TestLoopbackOnly(t *testing.T) {
	for _, ok := range []string{"http://127.0.0.1:8080", "http://127.3.4.5:1", "http://[::1]:8080", "http://localhost:9000"} {
		if err := checkLoopback(ok); err != nil {
			t.Errorf("%s refused: %v", ok, err)
		}
	}
	for _, bad := range []string{"http://10.0.0.1:8080", "http://192.168.1.2", "http://example.org:8080", "http://[2001:db8::1]:80",
		"http://0.0.0.0:8080", "https://127.0.0.1:8443", "127.0.0.1:8080", "http://:8080"} {
		if err := checkLoopback(bad); err == nil {
			t.Errorf("%s accepted", bad)
		}
	}
	if err := checkLoopbackDB("postgres://postgres@127.0.0.1:5432/db?sslmode=disable"); err != nil {
		t.Errorf("loopback database refused: %v", err)
	}
	if err := checkLoopbackDB("postgres://u:p@db.example.org:5432/db"); err == nil {
		t.Error("remote database accepted")
	}
	c := config{target: "http://203.0.113.5:8080", duration: time.Second, ratioDuration: time.Second, maxRequests: 1, workers: 1}
	if err := c.check(); err == nil {
		t.Error("config with a non-loopback -target accepted")
	}
}
