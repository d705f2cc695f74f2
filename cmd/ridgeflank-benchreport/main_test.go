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
