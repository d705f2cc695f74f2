package main

import (
	"strings"
	"testing"
)

// TestParseBench reads lines in the benchmark format of Go's testing package ("BenchmarkName-P
// N value unit ...", as documented in golang.org/x/perf's benchfmt and printed by go test).
func TestParseBench(t *testing.T) {
	out := `goos: linux
pkg: ridgeflank/evaluate
cpu: AMD EPYC
BenchmarkTileResidual/warm-z10-2        	     232	   5463403 ns/op	  276028 B/op	      88 allocs/op
BenchmarkCheckPlan/check-2                         	       3	 450564039 ns/op	 110332667 cpu-ns/op	      9994 km	     99944 samples	27097805 B/op	    9402 allocs/op
BenchmarkStatistics10M/statistics
    bench_test.go:12: a log line
PASS
pkg: ridgeflank/geo
BenchmarkResidualGlobal/workers=2-2     	       3	 400000000 ns/op	         3.5 ns/cell	         2.5 stream-ns/cell	         1.4 x-stream	       0 B/op	       0 allocs/op
BenchmarkNoSuffix 	 10	 100 ns/op
`
	rs, err := parseBench(strings.NewReader(out))
	if err != nil {
		t.Fatal(err)
	}
	if len(rs) != 4 {
		t.Fatalf("%d results, want 4: %+v", len(rs), rs)
	}
	r, ok := results(rs).get("TileResidual/warm-z10", 2)
	if !ok || r.Pkg != "ridgeflank/evaluate" || r.N != 232 || r.Metrics["ns/op"] != 5463403 || r.Metrics["allocs/op"] != 88 {
		t.Errorf("tile: %+v", r)
	}
	if v, ok := results(rs).metric("CheckPlan/check", 0, "cpu-ns/op"); !ok || v != 110332667 {
		t.Errorf("cpu-ns/op %v %v", v, ok)
	}
	if v, ok := results(rs).metric("ResidualGlobal/workers=2", 2, "x-stream"); !ok || v != 1.4 {
		t.Errorf("x-stream %v %v", v, ok)
	}
	if r, ok := results(rs).get("ResidualGlobal/workers=2", 2); !ok || r.Pkg != "ridgeflank/geo" {
		t.Errorf("package of the geo line: %+v", r)
	}
	if r, ok := results(rs).get("NoSuffix", 1); !ok || r.Procs != 1 || r.Metrics["ns/op"] != 100 {
		t.Errorf("a line without -P: %+v", r)
	}
}

// serveRows takes from the scale report (the Markdown tables scripts/scalebench writes) the
// served figures that have a goal, and nothing about imports or without a goal.
func TestServeRows(t *testing.T) {
	scale := "- load average (1, 5, 15 min; other work on the machine counts too): 1.0, 2.0, 3.0 at the start, 1.5, 2.0, 3.0 at the end\n" +
		"## Import (15″, 86400 × 43200 Float32)\n" +
		"| `ridgeflank import` age: wall time | 41.6s | ≤ 1.5× peer | x | 1.3× | met | |\n" +
		"## Demo basin\n" +
		"| tiles warm (5 repeats of each) | p50 0.4 ms | any ≤ 5.0 ms | – | – | met |  |\n" +
		"| tiles warm (5 repeats of each) | p50 3.0 ms | – | – | – | – |  |\n" +
		"| position queries (one POINT each) | p50 0.4 ms | – | – | – | – |  |\n" +
		"| area query, 1000 × 1000 = 1.0 M output cells: 20 repeats | p50 90 ms | any ≤ 300.0 ms | – | – | met |  |\n" +
		"| region statistics, 3163 × 3163 = 10.0 M cells: first request | p50 900 ms | any ≤ 1000.0 ms | – | – | met |  |\n" +
		"## Server memory (VmRSS sampled every 100 ms from /proc/PID/status)\n" +
		"| max VmRSS during start-up | 0.07 GiB | – | – | – | – |  |\n" +
		"| VmHWM (peak RSS) at the last sample | 0.71 GiB | ≤ 1 GB (512 MB budget) | – | – | met |  |\n"
	rows := serveRows(scale)
	if len(rows) != 4 || !strings.HasPrefix(rows[3], "| Server memory") || !strings.HasPrefix(rows[0], "| Demo basin | tiles warm") || !strings.Contains(rows[1], "area query") || !strings.Contains(rows[2], "region statistics") {
		t.Errorf("rows %q", rows)
	}
	if imp := importRows(scale); len(imp) != 1 || !strings.HasPrefix(imp[0], "| Import (15″, 86400 × 43200 Float32) | `ridgeflank import`") {
		t.Errorf("import rows %q", imp)
	}
	if l := scaleLoad(scale); !strings.HasPrefix(l, "load average") || !strings.HasSuffix(l, "at the end") {
		t.Errorf("load line %q", l)
	}
}

// TestRenderGridAgainstCalc: the paired grid ÷ gdal_calc.py result (its custom metrics, as
// testing.B's ReportMetric prints them) becomes a sentence with both times, the ratio and the
// verdict against the goal (≤ 0.5); a run without it says it was not measured.
func TestRenderGridAgainstCalc(t *testing.T) {
	for _, tc := range []struct {
		name, line string
		want       []string
	}{
		{"met", "BenchmarkGridResidual/paired-in-place-vs-gdal_calc-2 \t 4\t 2900000000 ns/op\t 0.5 grid-s/op\t 2.4 gdal_calc-s/op\t 0.2083 ratio\t 100 B/op\t 1 allocs/op",
			[]string{"grid 500.00 ms, gdal_calc.py 2.40 s per run, ratio 0.21 (goal ≤ 0.5: met)", "4 iterations"}},
		{"not met", "BenchmarkGridResidual/paired-in-place-vs-gdal_calc-2 \t 2\t 2900000000 ns/op\t 1.2 grid-s/op\t 1.2 gdal_calc-s/op\t 1 ratio",
			[]string{"ratio 1.00 (goal ≤ 0.5: **not met**)"}},
		{"absent", "BenchmarkNoSuffix 10 100 ns/op", []string{"Not measured in this run (`gdal_calc.py`"}},
	} {
		t.Run(tc.name, func(t *testing.T) {
			rs, err := parseBench(strings.NewReader("pkg: ridgeflank/cmd/ridgeflank\n" + tc.line + "\n"))
			if err != nil {
				t.Fatal(err)
			}
			out := render(rs, machineInfo{}, "", "", nil, "make bench")
			for _, w := range tc.want {
				if !strings.Contains(out, w) {
					t.Errorf("report lacks %q:\n%s", w, out)
				}
			}
		})
	}
}
