package main

import (
	"fmt"
	"math"
	"net"
	"net/url"
	"slices"
	"strings"
	"time"
)

// percentile is the nearest-rank percentile of sorted (ascending): the smallest value such that
// at least p per cent of the values are less than or equal to it, i.e. the value of rank
// ⌈p/100 · n⌉ (1-based). p ≤ 0 gives the smallest value; an empty list gives 0.
func percentile(sorted []time.Duration, p float64) time.Duration {
	n := len(sorted)
	if n == 0 {
		return 0
	}
	rank := int(math.Ceil(p / 100 * float64(n)))
	rank = max(1, min(rank, n))
	return sorted[rank-1]
}

// checkLoopback refuses a base URL whose host is not a loopback address: the generator loads
// only servers on this machine. Host names other than "localhost" are refused without looking
// them up (a name can resolve anywhere).
func checkLoopback(base string) error {
	u, err := url.Parse(base)
	if err != nil {
		return fmt.Errorf("target %q is not a URL: %v", base, err)
	}
	if u.Scheme != "http" {
		return fmt.Errorf("target %q: only http:// on a loopback address is loaded", base)
	}
	host := u.Hostname()
	if host == "" {
		return fmt.Errorf("target %q has no host", base)
	}
	if strings.EqualFold(host, "localhost") {
		return nil
	}
	ip := net.ParseIP(host)
	if ip == nil || !ip.IsLoopback() {
		return fmt.Errorf("target %q is not a loopback address (127.0.0.0/8 or ::1): refused", base)
	}
	return nil
}

// kindStats gathers one kind of request.
type kindStats struct {
	Kind     string          `json:"kind"`
	Count    int             `json:"count"`
	Refused  int             `json:"intended_4xx"` // answered with one of the request's intended 4xx statuses
	Limited  int             `json:"rate_limited"` // answered 429
	Errors   int             `json:"errors"`       // any other status, or no answer
	P50Ms    float64         `json:"p50_ms"`       // nearest-rank
	P99Ms    float64         `json:"p99_ms"`       // nearest-rank
	RatePerS float64         `json:"req_per_s"`    // this kind's completed requests per second of the run
	First    []string        `json:"first_errors"` // the first few errors, for the report
	durs     []time.Duration // every latency, for the percentiles
}

func (k *kindStats) add(o outcome) {
	k.Count++
	k.durs = append(k.durs, o.dur)
	switch {
	case o.err == "" && o.refused:
		k.Refused++
	case o.err == "":
	case o.status == 429:
		k.Limited++
	default:
		k.Errors++
		if len(k.First) < 3 {
			k.First = append(k.First, o.err)
		}
	}
}

// finish computes the percentiles and the rate over elapsed.
func (k *kindStats) finish(elapsed time.Duration) {
	slices.Sort(k.durs)
	k.P50Ms = ms(percentile(k.durs, 50))
	k.P99Ms = ms(percentile(k.durs, 99))
	if elapsed > 0 {
		k.RatePerS = float64(k.Count) / elapsed.Seconds()
	}
}

func ms(d time.Duration) float64 { return float64(d.Nanoseconds()) / 1e6 }
