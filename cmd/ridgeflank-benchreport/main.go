// Command ridgeflank-benchreport writes the benchmark report docs/benchmarks.md (`make bench`) from
// the output of `go test -bench` (the chosen benchmarks of scripts/bench.sh), the load test's
// Markdown section (cmd/ridgeflank-load) and, when it exists, the import figures of
// `make bench-scale` (build/scale/report.md). Every ratio in the report is of two figures
// measured in the same run on the same machine, which the report names.
package main

import (
	"bufio"
	"flag"
	"fmt"
	"io"
	"os"
	"os/exec"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"time"
)

// result is one line of `go test -bench` output.
type result struct {
	Pkg     string
	Name    string // without the "Benchmark" prefix and the -GOMAXPROCS suffix
	Procs   int    // GOMAXPROCS (the -cpu value); 1 when the line has no suffix
	N       int
	Metrics map[string]float64 // unit → value: ns/op, B/op, allocs/op and custom metrics
	Order   int
}

// parseBench reads `go test -bench` output: "pkg: PATH" lines name the package of the lines
// after them; a result line is "BenchmarkName[-P] N value unit [value unit]...".
func parseBench(r io.Reader) ([]result, error) {
	var out []result
	pkg := ""
	sc := bufio.NewScanner(r)
	sc.Buffer(make([]byte, 1<<20), 1<<20)
	for sc.Scan() {
		line := strings.TrimSpace(sc.Text())
		if p, ok := strings.CutPrefix(line, "pkg: "); ok {
			pkg = strings.TrimSpace(p)
			continue
		}
		if !strings.HasPrefix(line, "Benchmark") {
			continue
		}
		f := strings.Fields(line)
		if len(f) < 4 || len(f)%2 != 0 {
			continue // a name alone (a benchmark that printed before its result) or a log line
		}
		n, err := strconv.Atoi(f[1])
		if err != nil {
			continue
		}
		res := result{Pkg: pkg, Name: strings.TrimPrefix(f[0], "Benchmark"), Procs: 1, N: n, Metrics: map[string]float64{}, Order: len(out)}
		if i := strings.LastIndexByte(res.Name, '-'); i > 0 {
			if p, err := strconv.Atoi(res.Name[i+1:]); err == nil {
				res.Name, res.Procs = res.Name[:i], p
			}
		}
		for i := 2; i+1 < len(f); i += 2 {
			v, err := strconv.ParseFloat(f[i], 64)
			if err != nil {
				return nil, fmt.Errorf("bad value %q in %q", f[i], line)
			}
			res.Metrics[f[i+1]] = v
		}
		out = append(out, res)
	}
	return out, sc.Err()
}

type results []result

// get is the result named name (full name with sub-benchmarks) at procs; procs 0 takes the
// highest GOMAXPROCS measured.
func (rs results) get(name string, procs int) (result, bool) {
	var best result
	found := false
	for _, r := range rs {
		if r.Name != name || (procs > 0 && r.Procs != procs) {
			continue
		}
		if !found || r.Procs > best.Procs {
			best, found = r, true
		}
	}
	return best, found
}

func (rs results) metric(name string, procs int, unit string) (float64, bool) {
	r, ok := rs.get(name, procs)
	if !ok {
		return 0, false
	}
	v, ok := r.Metrics[unit]
	return v, ok
}

func main() {
	benchPath := flag.String("bench", "build/bench/go-bench.txt", "output of go test -bench")
	loadPath := flag.String("load", "build/load/load.md", "the load test's Markdown section (skipped when missing)")
	loadStatus := flag.String("load-status", "", "how the load test ended, when it did not pass (written into the report)")
	scalePath := flag.String("scale", "build/scale/report.md", "the reports of make bench-scale, comma-separated (import and serving figures; missing ones skipped)")
	outPath := flag.String("out", "docs/benchmarks.md", "the report to write")
	command := flag.String("command", "make bench", "the command that made the figures")
	flag.Parse()
	f, err := os.Open(*benchPath)
	if err != nil {
		fmt.Fprintln(os.Stderr, "ridgeflank-benchreport: "+err.Error())
		os.Exit(1)
	}
	rs, err := parseBench(f)
	f.Close()
	if err != nil {
		fmt.Fprintln(os.Stderr, "ridgeflank-benchreport: "+err.Error())
		os.Exit(1)
	}
	if len(rs) == 0 {
		fmt.Fprintf(os.Stderr, "ridgeflank-benchreport: no benchmark results in %s\n", *benchPath)
		os.Exit(1)
	}
	load, _ := os.ReadFile(*loadPath)
	var scales []scaleReport
	for _, p := range strings.Split(*scalePath, ",") {
		if text, err := os.ReadFile(strings.TrimSpace(p)); err == nil {
			scales = append(scales, scaleReport{path: strings.TrimSpace(p), text: string(text)})
		}
	}
	md := render(results(rs), machine(), string(load), *loadStatus, scales, *command)
	if err := os.WriteFile(*outPath, []byte(md), 0o644); err != nil {
		fmt.Fprintln(os.Stderr, "ridgeflank-benchreport: "+err.Error())
		os.Exit(1)
	}
	fmt.Printf("ridgeflank-benchreport: wrote %s (%d benchmark results)\n", *outPath, len(rs))
}

// machineInfo names the machine the figures come from.
type machineInfo struct {
	Date, CPU, Memory, Go, GDAL, Kernel, Load string
	Cores                                     int
}

func machine() machineInfo {
	m := machineInfo{Date: time.Now().UTC().Format("2006-01-02 15:04 UTC"), CPU: "unknown", Memory: "unknown",
		Cores: runtime.NumCPU(), Go: runtime.Version(), GDAL: "unknown", Kernel: "unknown"}
	if raw, err := os.ReadFile("/proc/cpuinfo"); err == nil {
		for _, l := range strings.Split(string(raw), "\n") {
			if k, v, ok := strings.Cut(l, ":"); ok && strings.TrimSpace(k) == "model name" {
				m.CPU = strings.TrimSpace(v)
				break
			}
		}
	}
	if raw, err := os.ReadFile("/proc/meminfo"); err == nil {
		for _, l := range strings.Split(string(raw), "\n") {
			if f := strings.Fields(l); len(f) >= 2 && f[0] == "MemTotal:" {
				kb, _ := strconv.ParseFloat(f[1], 64)
				m.Memory = fmt.Sprintf("%.1f GiB", kb/(1<<20))
			}
		}
	}
	if out, err := exec.Command("go", "version").Output(); err == nil {
		m.Go = strings.TrimPrefix(strings.TrimSpace(string(out)), "go version ")
	}
	if out, err := exec.Command("gdal-config", "--version").Output(); err == nil {
		m.GDAL = strings.TrimSpace(string(out))
	}
	if raw, err := os.ReadFile("/proc/loadavg"); err == nil {
		if f := strings.Fields(string(raw)); len(f) >= 3 {
			m.Load = strings.Join(f[:3], ", ")
		}
	}
	if raw, err := os.ReadFile("/proc/sys/kernel/osrelease"); err == nil {
		m.Kernel = "Linux " + strings.TrimSpace(string(raw))
	}
	return m
}

func fmtDur(ns float64) string {
	switch {
	case ns >= 1e9:
		return fmt.Sprintf("%.2f s", ns/1e9)
	case ns >= 1e6:
		return fmt.Sprintf("%.2f ms", ns/1e6)
	case ns >= 1e3:
		return fmt.Sprintf("%.1f µs", ns/1e3)
	}
	return fmt.Sprintf("%.0f ns", ns)
}

func verdict(ok bool) string {
	if ok {
		return "met"
	}
	return "**not met**"
}

// scaleReport is one report of make bench-scale: its path and text.
type scaleReport struct{ path, text string }

// scaleTables writes, for each report with rows, its introduction and a table of its rows (each
// led by its grid size), or missing when no report has any.
func scaleTables(b *strings.Builder, scales []scaleReport, rowsOf func(string) []string, intro func(scaleReport) string, missing string) {
	const header = "| grid | figure | measured | goal | peer | ratio | verdict | note |\n| --- | --- | --- | --- | --- | --- | --- | --- |\n"
	found := false
	for _, sr := range scales {
		rows := rowsOf(sr.text)
		if len(rows) == 0 {
			continue
		}
		found = true
		b.WriteString(intro(sr) + ":\n\n" + header + strings.Join(rows, "\n") + "\n\n")
	}
	if !found {
		b.WriteString(missing + "\n\n")
	}
}

func render(rs results, m machineInfo, load, loadStatus string, scales []scaleReport, command string) string {
	var b strings.Builder
	b.WriteString("# Benchmarks\n\n")
	fmt.Fprintf(&b, "Written by `%s` on %s. Figures from different machines or runs are not comparable; the ratios below compare two figures measured in the same run.\n\n", command, m.Date)
	b.WriteString("## Machine\n\n")
	fmt.Fprintf(&b, "- CPU: %s, %d cores seen by Go\n- memory: %s\n- %s\n- Go: %s\n- GDAL: %s\n", m.CPU, m.Cores, m.Memory, m.Kernel, m.Go, m.GDAL)
	if m.Load != "" {
		fmt.Fprintf(&b, "- load average (1, 5, 15 min) when the report was written: %s (other work on the machine inflates wall times; CPU-time figures and same-run ratios suffer less)\n", m.Load)
	}
	b.WriteString("\n")

	// Residual kernel against the plain streaming pass.
	b.WriteString("## Residual-depth kernel against a streaming pass\n\n")
	b.WriteString("`geo` BenchmarkResidualGlobal: residual depth of a 10800 × 5400 grid (age, elevation and sediment in, residual out) beside a plain pass reading the same three arrays and writing one, in the same loop. Goal: ratio ≤ 1.5.\n\n")
	b.WriteString("| workers | GOMAXPROCS | kernel ns/cell | stream ns/cell | ratio | verdict |\n| ---: | ---: | ---: | ---: | ---: | --- |\n")
	for _, w := range []int{1, 2} {
		for _, p := range []int{1, 2} {
			name := fmt.Sprintf("ResidualGlobal/workers=%d", w)
			r, ok := rs.get(name, p)
			if !ok {
				continue
			}
			fmt.Fprintf(&b, "| %d | %d | %.2f | %.2f | %.2f | %s |\n", w, p, r.Metrics["ns/cell"], r.Metrics["stream-ns/cell"], r.Metrics["x-stream"], verdict(r.Metrics["x-stream"] <= 1.5))
		}
	}
	b.WriteString("\n")

	// Core scaling.
	b.WriteString("## Scaling with cores\n\n")
	b.WriteString("Time on one core ÷ time on two (`-cpu 1,2`); 2.0 would be perfect scaling.\n\n| what | 1 core | 2 cores | speed-up |\n| --- | ---: | ---: | ---: |\n")
	if one, ok1 := rs.metric("ResidualGlobal/workers=1", 1, "ns/cell"); ok1 {
		if two, ok2 := rs.metric("ResidualGlobal/workers=2", 2, "ns/cell"); ok2 {
			fmt.Fprintf(&b, "| residual kernel, ns/cell (1 worker on 1 core; 2 workers on 2) | %.2f | %.2f | %.2f× |\n", one, two, one/two)
		}
	}
	for _, name := range []string{"Statistics10M/statistics", "Statistics10M/peer-one-read-pass"} {
		one, ok1 := rs.metric(name, 1, "ns/op")
		two, ok2 := rs.metric(name, 2, "ns/op")
		if ok1 && ok2 {
			fmt.Fprintf(&b, "| `evaluate` %s | %s | %s | %.2f× |\n", name, fmtDur(one), fmtDur(two), one/two)
		}
	}
	b.WriteString("\n")

	// Tiles.
	b.WriteString("## Tiles\n\n")
	b.WriteString("`evaluate` BenchmarkTileResidual: one 256 × 256 residual-depth tile (window, residual, colours, PNG) of a SYNTHETIC 3′ globe (7200 × 3600), warm: its blocks in the cache; cold: a new service for every tile. `server` BenchmarkResidualTile: a zoom-6 tile of the demo basin through the whole HTTP stack.\n\n")
	b.WriteString("| tile | time | allocations |\n| --- | ---: | ---: |\n")
	tileRows := []struct{ name, label string }{
		{"TileResidual/warm-z0", "zoom 0, warm"}, {"TileResidual/warm-z3", "zoom 3, warm"}, {"TileResidual/warm-z6", "zoom 6, warm"},
		{"TileResidual/warm-z8", "zoom 8, warm"}, {"TileResidual/warm-z10", "zoom 10, warm"},
		{"TileResidual/warm", "zoom 0–10 in turn, warm"}, {"TileResidual/cold", "zoom 0–10 in turn, cold"},
		{"ResidualTile", "demo basin zoom 6 over HTTP (`server`)"},
	}
	for _, t := range tileRows {
		if r, ok := rs.get(t.name, 0); ok {
			fmt.Fprintf(&b, "| %s | %s | %.0f allocs, %.0f kB |\n", t.label, fmtDur(r.Metrics["ns/op"]), r.Metrics["allocs/op"], r.Metrics["B/op"]/1e3)
		}
	}
	b.WriteString("\n")

	// Areas and statistics against a plain read.
	b.WriteString("## Areas and statistics against a plain read\n\n| query | time | peer (same run) | peer time | ratio |\n| --- | ---: | --- | ---: | ---: |\n")
	pairs := []struct{ a, peer, label, peerLabel string }{
		{"AreaMillionCells/area", "AreaMillionCells/peer-read-only", "area, 0.67 M output cells, residual depth", "reading the age window only"},
		{"Statistics10M/statistics", "Statistics10M/peer-one-read-pass", "statistics over 8.8 M cells", "one streaming read of the age cells"},
	}
	for _, p := range pairs {
		a, ok1 := rs.metric(p.a, 0, "ns/op")
		pe, ok2 := rs.metric(p.peer, 0, "ns/op")
		if ok1 && ok2 {
			fmt.Fprintf(&b, "| %s | %s | %s | %s | %.2f× |\n", p.label, fmtDur(a), p.peerLabel, fmtDur(pe), a/pe)
		}
	}
	b.WriteString("\n")

	// Plan check.
	if r, ok := rs.get("CheckPlan/check", 0); ok {
		b.WriteString("## Survey plan check\n\n")
		cpu := r.Metrics["cpu-ns/op"]
		fmt.Fprintf(&b, "`evaluate` BenchmarkCheckPlan: a plan of %.0f km, %.0f samples: %s wall, %s CPU per check (goal ≤ 100 ms on one core: %s).",
			r.Metrics["km"], r.Metrics["samples"], fmtDur(r.Metrics["ns/op"]), fmtDur(cpu), verdict(cpu <= 100e6))
		if t, ok := rs.get("CheckPlan/track", 0); ok && t.Metrics["cpu-ns/op"] > 0 {
			fmt.Fprintf(&b, " Sampling the same lines as plain tracks (every parameter): %s CPU; check ÷ tracks = %.2f.", fmtDur(t.Metrics["cpu-ns/op"]), cpu/t.Metrics["cpu-ns/op"])
		}
		b.WriteString("\n\n")
	}

	// Position path.
	if r, ok := rs.get("Position", 0); ok {
		b.WriteString("## Position queries against a bare chi handler\n\n")
		fmt.Fprintf(&b, "`server` BenchmarkPosition (in process, no network: the handler and the whole middleware stack): %.0f position queries/s, a bare chi handler writing a small JSON body %.0f/s: ratio %.2f; %.0f allocations, %.1f kB per query. Over loopback HTTP, where both pay for connections and parsing, the load test below measures the same ratio against its goal (≥ 0.5).\n\n",
			r.Metrics["position_req/s"], r.Metrics["bare_chi_req/s"], r.Metrics["position/bare"], r.Metrics["allocs/op"], r.Metrics["B/op"]/1e3)
	}

	// The grid command against a raster calculator.
	b.WriteString("## `ridgeflank grid` against `gdal_calc.py`\n\n")
	if r, ok := rs.get("GridResidual/paired-in-place-vs-gdal_calc", 0); ok {
		ratio := r.Metrics["ratio"]
		fmt.Fprintf(&b, "`cmd/ridgeflank` BenchmarkGridResidual: residual depth over a SYNTHETIC 10800 × 5400 global set (three uncompressed GeoTIFF inputs read and checked under import's rules, plate series through the lookup tables, sediment unloading, an uncompressed COG without overviews written in place) against `gdal_calc.py` computing the GDH1 fit residual (no series, no sediment; Stein & Stein 1992) from two of the files, each a process of its own (program start counts), alternating in each of %d iterations: grid %s, gdal_calc.py %s per run, ratio %.2f (goal ≤ 0.5: %s).\n\n",
			r.N, fmtDur(r.Metrics["grid-s/op"]*1e9), fmtDur(r.Metrics["gdal_calc-s/op"]*1e9), ratio, verdict(ratio <= 0.5))
	} else {
		b.WriteString("Not measured in this run (`gdal_calc.py` needs Debian's python3-gdal and python3-numpy).\n\n")
	}

	// Import against gdal_translate.
	b.WriteString("## Import against `gdal_translate -of COG`\n\n")
	scaleTables(&b, scales, importRows, func(sr scaleReport) string {
		return fmt.Sprintf("From `make bench-scale` (%s, SYNTHETIC global grids; its own run and date)", sr.path)
	}, "Not measured: no report of `make bench-scale` (build/scale/report.md; it needs tens of GB and much time, so `make bench` does not run it).")

	// Serving at global sizes: the figures of make bench-scale with goals (area, statistics,
	// tiles, peak memory).
	b.WriteString("## Serving at global sizes (`make bench-scale`)\n\n")
	scaleTables(&b, scales, serveRows, func(sr scaleReport) string {
		intro := fmt.Sprintf("From %s (SYNTHETIC global grids, HTTP on 127.0.0.1, its own run and date", sr.path)
		if l := scaleLoad(sr.text); l != "" {
			intro += "; " + l
		}
		return intro + ")"
	}, "Not measured: no report of `make bench-scale` with served figures.")

	// Load test.
	b.WriteString("## Load test (`make loadtest`)\n\n")
	if loadStatus != "" {
		fmt.Fprintf(&b, "**%s**\n\n", loadStatus)
	}
	if strings.TrimSpace(load) == "" {
		b.WriteString("Not run.\n\n")
	} else {
		b.WriteString(strings.TrimSpace(load) + "\n\n")
	}

	// Everything measured.
	b.WriteString("## Every result\n\n| package | benchmark | GOMAXPROCS | iterations | time/op | B/op | allocs/op | other |\n| --- | --- | ---: | ---: | ---: | ---: | ---: | --- |\n")
	sorted := append(results(nil), rs...)
	sort.SliceStable(sorted, func(i, j int) bool { return sorted[i].Order < sorted[j].Order })
	for _, r := range sorted {
		var other []string
		for _, u := range sortedUnits(r.Metrics) {
			switch u {
			case "ns/op", "B/op", "allocs/op":
				continue
			}
			other = append(other, fmt.Sprintf("%s %s", strconv.FormatFloat(r.Metrics[u], 'g', 4, 64), u))
		}
		fmt.Fprintf(&b, "| %s | %s | %d | %d | %s | %.0f | %.0f | %s |\n", strings.TrimPrefix(r.Pkg, "ridgeflank/"), r.Name, r.Procs, r.N,
			fmtDur(r.Metrics["ns/op"]), r.Metrics["B/op"], r.Metrics["allocs/op"], strings.Join(other, ", "))
	}
	return b.String()
}

func sortedUnits(m map[string]float64) []string {
	var u []string
	for k := range m {
		u = append(u, k)
	}
	sort.Strings(u)
	return u
}

// serveRows are the table rows of the scale report with a goal about serving: the area query,
// the region statistics and the tiles.
func serveRows(scale string) []string {
	return sectionRows(scale, func(l string) bool {
		return !strings.Contains(l, "`ridgeflank import`") &&
			(strings.Contains(l, "| area query") || strings.Contains(l, "| region statistics") || strings.Contains(l, "| tiles warm") ||
				strings.Contains(l, "| tiles cold") || strings.Contains(l, "| max VmRSS of the run") || strings.Contains(l, "| VmHWM")) &&
			strings.Contains(l, "≤")
	})
}

// sectionRows are the table rows of the scale report that keep takes, each with the heading of
// its section (the grid size or the demo basin) as a first cell.
func sectionRows(scale string, keep func(line string) bool) []string {
	var rows []string
	section := ""
	for _, l := range strings.Split(scale, "\n") {
		if h, ok := strings.CutPrefix(l, "## "); ok {
			section = strings.TrimSpace(h)
		}
		if strings.HasPrefix(l, "| ") && keep(l) {
			rows = append(rows, "| "+section+" "+l)
		}
	}
	return rows
}

// scaleLoad is the scale report's line on the machine's load average, without its dash.
func scaleLoad(scale string) string {
	for _, l := range strings.Split(scale, "\n") {
		if strings.HasPrefix(l, "- load average") {
			return strings.TrimPrefix(l, "- ")
		}
	}
	return ""
}

// importRows are the table rows of the scale report about imports (`ridgeflank import` beside
// `gdal_translate -of COG`).
func importRows(scale string) []string {
	return sectionRows(scale, func(l string) bool { return strings.Contains(l, "`ridgeflank import`") })
}
