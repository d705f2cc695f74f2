package evaluate

import (
	"context"
	"syscall"
	"testing"
	"time"

	"ridgeflank/demobasin"
	"ridgeflank/geo"
	"ridgeflank/survey"
)

// benchPlan is a plan of six east–west lines zig-zagging across the SYNTHETIC demo basin,
// 0.1 km sample spacing, about 10,000 km in all (about 100,000 samples).
func benchPlan() survey.Plan {
	p := survey.Plan{Name: "bench zig-zag (SYNTHETIC)", Settings: survey.Settings{Dataset: demobasin.DatasetID, SpacingKm: 0.1}}
	const west, east = -146.0, -128.4
	for k := range 6 {
		lat := -40 + 3.5*float64(k)
		a, b := geo.Waypoint{Lon: west, Lat: lat}, geo.Waypoint{Lon: east, Lat: lat}
		if k%2 == 1 {
			a, b = b, a
		}
		p.Lines = append(p.Lines, survey.Line{Waypoints: []geo.Waypoint{a, b}})
	}
	return p
}

// BenchmarkCheckPlan checks benchPlan (goal: ≤ 100 ms on one core), beside "track": a plain
// Service.Track of the same lines at the same spacing (the same samples, every parameter),
// for the ratio. Besides ns/op (wall time) each reports cpu-ns/op, the process's CPU time per
// check (getrusage: user + system, all threads), which a machine shared with other work does not
// inflate as it does wall time.
func BenchmarkCheckPlan(b *testing.B) {
	s := checkService(b, Limits{})
	ctx := context.Background()
	p := benchPlan()
	chk, err := s.CheckPlan(ctx, p, nil)
	if err != nil {
		b.Fatal(err)
	}
	n := 0
	for _, l := range chk.Lines {
		n += len(l.Samples.Lon)
	}
	b.Run("check", func(b *testing.B) {
		b.ReportAllocs()
		c0 := cpuTime(b)
		for b.Loop() {
			if _, err := s.CheckPlan(ctx, p, nil); err != nil {
				b.Fatal(err)
			}
		}
		b.ReportMetric(float64(cpuTime(b)-c0)/float64(b.N), "cpu-ns/op")
		b.ReportMetric(chk.Totals.LengthKm, "km")
		b.ReportMetric(float64(n), "samples")
	})
	b.Run("track", func(b *testing.B) {
		b.ReportAllocs()
		c0 := cpuTime(b)
		for b.Loop() {
			for _, l := range p.Lines {
				if _, err := s.Track(ctx, p.Settings.Dataset, Options{}, l.Waypoints, p.Settings.SpacingKm); err != nil {
					b.Fatal(err)
				}
			}
		}
		b.ReportMetric(float64(cpuTime(b)-c0)/float64(b.N), "cpu-ns/op")
		b.ReportMetric(float64(n), "samples")
	})
}

// cpuTime is the process's user + system CPU time so far.
func cpuTime(b *testing.B) time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		b.Fatal(err)
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
