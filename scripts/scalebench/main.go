// Command scalebench measures ridgeflank at the grid sizes users hold (global grids at 1′, 30″
// and 15″) and writes a Markdown report. `make bench-scale` runs it after scripts/scale-grids.sh
// has made the SYNTHETIC grids and scripts/bench-scale.sh has imported them (timed with
// /usr/bin/time -v beside `gdal_translate -of COG` of the same file, the peer).
//
// It starts `ridgeflank serve` itself (with --memory-budget when the binary knows the flag), on
// the store holding the imported grids, makes one dataset per size, and drives the HTTP API:
// map tiles at zoom 0–10 (cold: a tile's first request; warm: repeats), EDR position queries,
// an area query of 1000 × 1000 = 1 M output cells and statistics of a stored region of
// 3163 × 3163 = 10 M cells, both at the grid's own resolution (each asked -area-repeats and
// -statistics-repeats times: the first request, whose blocks are not yet read, is reported
// apart from the repeats' p50 and p95), the demo basin's tiles, and a mixed concurrent run, while it samples
// the server's VmRSS and VmHWM from /proc/PID/status. Every request has a time limit, every phase
// a time budget; what failed (status, problem detail, server exit) is written into the report
// rather than stopping the run. Requests go to the loopback address only, and the run ends by
// itself.
//
// Goals (the project's, common practice, no source): peak RSS ≤ 1 GB with a 512 MB budget, import
// ≤ 1 GB peak and ≤ 1.5× the peer's time, tiles ≤ 20 ms warm and ≤ 100 ms cold on 15″, demo
// basin tiles ≤ 5 ms warm, a 1 M-cell area over the 1′ grid ≤ 300 ms, region statistics over
// 10 M cells ≤ 1 s.
package main

import (
	"bufio"
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"math"
	"math/rand/v2"
	"net/http"
	"os"
	"os/exec"
	"path/filepath"
	"runtime"
	"sort"
	"strconv"
	"strings"
	"sync"
	"sync/atomic"
	"syscall"
	"time"
)

// size is one global grid size: cells per degree and the dataset made from its grids.
type size struct {
	Name      string  // 1m, 30s, 15s
	Label     string  // 1′, 30″, 15″
	CellDeg   float64 // cell size in degrees
	NX, NY    int
	Dataset   string            // dataset id in the store
	GridIDs   map[string]string // age, depth, sediment → grid id
	ImportDir string
}

var known = map[string]size{
	"1m":  {Name: "1m", Label: "1′", CellDeg: 1.0 / 60, NX: 21600, NY: 10800},
	"30s": {Name: "30s", Label: "30″", CellDeg: 1.0 / 120, NX: 43200, NY: 21600},
	"15s": {Name: "15s", Label: "15″", CellDeg: 1.0 / 240, NX: 86400, NY: 43200},
}

const demoDataset = "quillon-basin-synthetic"

type config struct {
	bin, data, dir, out, addr, budget, token, param string
	sizes                                           []string
	mixed, phaseBudget, reqTimeout, coldTimeout     time.Duration
	workers, areaReps, statsReps                    int
}

func main() {
	var c config
	var sizes string
	flag.StringVar(&c.bin, "bin", "bin/ridgeflank", "the ridgeflank binary")
	flag.StringVar(&c.data, "data", "build/scale/store", "the embedded store holding the imported grids")
	flag.StringVar(&c.dir, "dir", "build/scale", "where the grids, import timings and the report live")
	flag.StringVar(&c.out, "out", "", "the report (default DIR/report.md)")
	flag.StringVar(&c.addr, "addr", "127.0.0.1:18931", "loopback address for the server")
	flag.StringVar(&c.budget, "memory-budget", "512MB", "the server's --memory-budget (when it knows the flag)")
	flag.StringVar(&c.token, "token", os.Getenv("RIDGEFLANK_SCALE_TOKEN"), "editor token (default: made with `ridgeflank token create`)")
	flag.StringVar(&c.param, "parameter", "residual_depth", "parameter queried (residual depth reads all three grids)")
	flag.StringVar(&sizes, "sizes", "1m,15s", "comma-separated sizes: 1m, 30s, 15s")
	flag.DurationVar(&c.mixed, "mixed", 30*time.Second, "length of the mixed concurrent run per dataset")
	flag.DurationVar(&c.phaseBudget, "phase-budget", 4*time.Minute, "time budget of one phase; what is left is skipped")
	flag.DurationVar(&c.reqTimeout, "request-timeout", time.Minute, "time limit of one request")
	flag.DurationVar(&c.coldTimeout, "cold-timeout", 6*time.Minute, "time limit of a dataset's first request (opens the grids)")
	flag.IntVar(&c.workers, "workers", 4, "concurrent clients in the mixed run")
	flag.IntVar(&c.areaReps, "area-repeats", 21, "requests of the 1 M-cell area (the first reported apart, the rest give p50 and p95)")
	flag.IntVar(&c.statsReps, "statistics-repeats", 11, "requests of the 10 M-cell region statistics (the first reported apart)")
	flag.Parse()
	if c.out == "" {
		c.out = filepath.Join(c.dir, "report.md")
	}
	for _, s := range strings.Split(sizes, ",") {
		if s = strings.TrimSpace(s); s == "" {
			continue
		}
		if _, ok := known[s]; !ok {
			fmt.Fprintf(os.Stderr, "scalebench: unknown size %q: want 1m, 30s or 15s\n", s)
			os.Exit(2)
		}
		c.sizes = append(c.sizes, s)
	}
	r := &report{start: time.Now(), loadAtStart: loadAverage()}
	run(c, r)
	if err := os.WriteFile(c.out, []byte(r.markdown(c)), 0o644); err != nil {
		fmt.Fprintf(os.Stderr, "scalebench: writing the report: %v\n", err)
		os.Exit(1)
	}
	fmt.Printf("scalebench: report written to %s\n", c.out)
}

// ---- the report ----

// figure is one measured line of the report.
type figure struct {
	Section, Name, Value, Goal, Peer, Ratio, Verdict, Note string
}

type report struct {
	start       time.Time
	loadAtStart string // /proc/loadavg's 1, 5 and 15 minute figures when the run began
	figures     []figure
	failures    []string
	notes       []string
	commands    []string
	mu          sync.Mutex
}

func (r *report) add(f figure) {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.figures = append(r.figures, f)
}

func (r *report) fail(format string, args ...any) {
	r.mu.Lock()
	defer r.mu.Unlock()
	msg := fmt.Sprintf(format, args...)
	r.failures = append(r.failures, msg)
	fmt.Fprintln(os.Stderr, "scalebench: "+msg)
}

func (r *report) note(format string, args ...any) {
	r.mu.Lock()
	defer r.mu.Unlock()
	r.notes = append(r.notes, fmt.Sprintf(format, args...))
}

func verdict(ok bool) string {
	if ok {
		return "met"
	}
	return "**not met**"
}

func (r *report) markdown(c config) string {
	var b strings.Builder
	fmt.Fprintf(&b, "# ridgeflank at global sizes (SYNTHETIC grids)\n\n")
	fmt.Fprintf(&b, "Run %s – %s UTC. Grids: SYNTHETIC fields of a fictional ocean made by `scripts/scale-grids.sh` (GDAL tools); not a real place.\n\n",
		r.start.UTC().Format("2006-01-02 15:04:05"), time.Now().UTC().Format("15:04:05"))
	b.WriteString("## Machine\n\n")
	fmt.Fprintf(&b, "- nproc: %d\n- CPU: %s\n- memory: %s\n- Go runtime of the driver: %s; %s\n", runtime.NumCPU(), cpuModel(), memTotal(), runtime.Version(), gdalVersion())
	fmt.Fprintf(&b, "- load average (1, 5, 15 min; other work on the machine counts too): %s at the start, %s at the end\n\n", r.loadAtStart, loadAverage())
	sections := []string{}
	seen := map[string]bool{}
	for _, f := range r.figures {
		if !seen[f.Section] {
			seen[f.Section] = true
			sections = append(sections, f.Section)
		}
	}
	for _, s := range sections {
		fmt.Fprintf(&b, "## %s\n\n| figure | measured | goal | peer | ratio | verdict | note |\n| --- | --- | --- | --- | --- | --- | --- |\n", s)
		for _, f := range r.figures {
			if f.Section == s {
				fmt.Fprintf(&b, "| %s | %s | %s | %s | %s | %s | %s |\n", f.Name, f.Value, dash(f.Goal), dash(f.Peer), dash(f.Ratio), dash(f.Verdict), esc(f.Note))
			}
		}
		b.WriteString("\n")
	}
	b.WriteString("## What failed\n\n")
	if len(r.failures) == 0 {
		b.WriteString("Nothing.\n\n")
	}
	for _, f := range r.failures {
		fmt.Fprintf(&b, "- %s\n", esc(f))
	}
	if len(r.failures) > 0 {
		b.WriteString("\n")
	}
	if len(r.notes) > 0 {
		b.WriteString("## Notes\n\n")
		for _, n := range r.notes {
			fmt.Fprintf(&b, "- %s\n", n)
		}
		b.WriteString("\n")
	}
	b.WriteString("## Commands\n\n```sh\n")
	for _, cmd := range r.commands {
		b.WriteString(cmd + "\n")
	}
	b.WriteString("```\n")
	return b.String()
}

func dash(s string) string {
	if s == "" {
		return "–"
	}
	return s
}

func esc(s string) string { return strings.ReplaceAll(strings.ReplaceAll(s, "|", "\\|"), "\n", " ") }

func cpuModel() string {
	raw, _ := os.ReadFile("/proc/cpuinfo")
	for _, l := range strings.Split(string(raw), "\n") {
		if k, v, ok := strings.Cut(l, ":"); ok && strings.TrimSpace(k) == "model name" {
			return strings.TrimSpace(v)
		}
	}
	return "unknown"
}

// loadAverage is the 1, 5 and 15 minute load average of /proc/loadavg.
func loadAverage() string {
	raw, err := os.ReadFile("/proc/loadavg")
	if f := strings.Fields(string(raw)); err == nil && len(f) >= 3 {
		return strings.Join(f[:3], ", ")
	}
	return "unknown"
}

func memTotal() string {
	raw, _ := os.ReadFile("/proc/meminfo")
	for _, l := range strings.Split(string(raw), "\n") {
		if strings.HasPrefix(l, "MemTotal:") {
			f := strings.Fields(l)
			if len(f) >= 2 {
				kb, _ := strconv.ParseFloat(f[1], 64)
				return fmt.Sprintf("%.1f GiB", kb/(1<<20))
			}
		}
	}
	return "unknown"
}

func gdalVersion() string {
	out, err := exec.Command("gdalinfo", "--version").Output()
	if err != nil {
		return "GDAL: unknown"
	}
	return strings.TrimSpace(string(out))
}

// ---- import figures (timed by scripts/bench-scale.sh) ----

// timeV is what /usr/bin/time -v reports.
type timeV struct {
	Wall    time.Duration
	PeakKB  int64
	Status  int
	Present bool
	When    time.Time
}

func readTimeV(path string) timeV {
	var t timeV
	f, err := os.Open(path)
	if err != nil {
		return t
	}
	defer f.Close()
	if st, err := f.Stat(); err == nil {
		t.When = st.ModTime()
	}
	t.Present = true
	sc := bufio.NewScanner(f)
	for sc.Scan() {
		l := strings.TrimSpace(sc.Text())
		k, v, ok := strings.Cut(l, ": ")
		if !ok {
			continue
		}
		switch {
		case strings.HasPrefix(k, "Elapsed (wall clock) time"):
			t.Wall = parseClock(v)
		case k == "Maximum resident set size (kbytes)":
			t.PeakKB, _ = strconv.ParseInt(v, 10, 64)
		case k == "Exit status":
			t.Status, _ = strconv.Atoi(v)
		}
	}
	return t
}

// parseClock reads h:mm:ss or m:ss.ss.
func parseClock(v string) time.Duration {
	parts := strings.Split(strings.TrimSpace(v), ":")
	var sec float64
	for _, p := range parts {
		x, _ := strconv.ParseFloat(p, 64)
		sec = sec*60 + x
	}
	return time.Duration(sec * float64(time.Second))
}

func importFigures(c config, r *report, s *size) {
	sec := "Import (" + s.Label + ", " + fmt.Sprintf("%d × %d", s.NX, s.NY) + " Float32)"
	peer := readTimeV(filepath.Join(s.ImportDir, "time-cog-age.txt"))
	for _, g := range []string{"age", "depth", "sediment"} {
		t := readTimeV(filepath.Join(s.ImportDir, "time-import-"+g+".txt"))
		if !t.Present {
			r.note("%s %s grid: not imported in this or an earlier run (no timing file)", s.Label, g)
			continue
		}
		if t.Status != 0 {
			r.fail("%s %s import exited with status %d (see %s)", s.Label, g, t.Status, filepath.Join(s.ImportDir, "import-"+g+".log"))
		}
		when := "measured " + t.When.UTC().Format("2006-01-02 15:04") + " UTC"
		rss := float64(t.PeakKB) / (1 << 20)
		r.add(figure{Section: sec, Name: "`ridgeflank import` " + g + ": peak RSS", Value: fmt.Sprintf("%.2f GiB", rss),
			Goal: "≤ 1 GB", Verdict: verdict(float64(t.PeakKB)*1024 <= 1e9), Note: when,
			Peer: peerRSS(peer, g), Ratio: ratioIf(peer.Present && g == "age", float64(t.PeakKB), float64(peer.PeakKB))})
		f := figure{Section: sec, Name: "`ridgeflank import` " + g + ": wall time", Value: t.Wall.Round(100 * time.Millisecond).String(), Note: when}
		if g == "age" && peer.Present {
			f.Peer = "`gdal_translate -of COG` " + peer.Wall.Round(100*time.Millisecond).String()
			q := t.Wall.Seconds() / peer.Wall.Seconds()
			f.Ratio = fmt.Sprintf("%.2f×", q)
			f.Goal = "≤ 1.5× peer"
			f.Verdict = verdict(q <= 1.5)
		}
		r.add(f)
	}
}

func peerRSS(p timeV, g string) string {
	if !p.Present || g != "age" {
		return ""
	}
	return fmt.Sprintf("`gdal_translate -of COG` %.2f GiB", float64(p.PeakKB)/(1<<20))
}

func ratioIf(ok bool, a, b float64) string {
	if !ok || b == 0 {
		return ""
	}
	return fmt.Sprintf("%.2f×", a/b)
}

// ---- the server ----

type serverProc struct {
	cmd     *exec.Cmd
	pid     int
	exited  atomic.Bool
	exitErr atomic.Value // string
	done    chan struct{}

	mu                 sync.Mutex
	phase              string
	phaseMaxRSS        map[string]int64 // kB
	order              []string
	lastHWM, maxRSS    int64
	samples, sampleErr int
}

func (p *serverProc) setPhase(name string) {
	p.mu.Lock()
	defer p.mu.Unlock()
	p.phase = name
	if _, ok := p.phaseMaxRSS[name]; !ok {
		p.phaseMaxRSS[name] = 0
		p.order = append(p.order, name)
	}
}

// sample reads VmRSS and VmHWM (kB) of the server every interval until it exits.
func (p *serverProc) sample(interval time.Duration) {
	t := time.NewTicker(interval)
	defer t.Stop()
	for {
		select {
		case <-p.done:
			return
		case <-t.C:
		}
		raw, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", p.pid))
		p.mu.Lock()
		if err != nil {
			p.sampleErr++
			p.mu.Unlock()
			continue
		}
		p.samples++
		for _, l := range strings.Split(string(raw), "\n") {
			f := strings.Fields(l)
			if len(f) < 2 {
				continue
			}
			v, _ := strconv.ParseInt(f[1], 10, 64)
			switch f[0] {
			case "VmRSS:":
				if v > p.phaseMaxRSS[p.phase] {
					p.phaseMaxRSS[p.phase] = v
				}
				if v > p.maxRSS {
					p.maxRSS = v
				}
			case "VmHWM:":
				p.lastHWM = v
			}
		}
		p.mu.Unlock()
	}
}

func startServer(c config, r *report) (*serverProc, error) {
	help, _ := exec.Command(c.bin, "serve", "--help").CombinedOutput()
	args := []string{"serve", "--data", c.data, "--addr", c.addr, "--no-demo", "--rate-limit", "-1",
		"--request-timeout", c.coldTimeout.String(), "--log-level", "warn"}
	if bytes.Contains(help, []byte("memory-budget")) {
		args = append(args, "--memory-budget", c.budget)
		r.note("the server ran with --memory-budget %s", c.budget)
	} else {
		r.note("this binary's `serve` has no --memory-budget flag yet: the server ran without a memory budget")
		r.fail("server ran without --memory-budget (flag unknown to this binary): RSS figures are without a budget")
	}
	r.commands = append(r.commands, c.bin+" "+strings.Join(args, " "))
	logf, err := os.Create(filepath.Join(c.dir, "serve.log"))
	if err != nil {
		return nil, err
	}
	cmd := exec.Command(c.bin, args...)
	cmd.Stdout, cmd.Stderr = logf, logf
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	if err := cmd.Start(); err != nil {
		logf.Close()
		return nil, err
	}
	p := &serverProc{cmd: cmd, pid: cmd.Process.Pid, done: make(chan struct{}), phaseMaxRSS: map[string]int64{}}
	p.setPhase("start-up")
	go func() {
		err := cmd.Wait()
		if err != nil {
			p.exitErr.Store(err.Error())
		} else {
			p.exitErr.Store("exit status 0")
		}
		p.exited.Store(true)
		logf.Close()
		close(p.done)
	}()
	go p.sample(100 * time.Millisecond)
	deadline := time.Now().Add(5 * time.Minute)
	for time.Now().Before(deadline) {
		if p.exited.Load() {
			return p, fmt.Errorf("the server exited during start-up (%v); see %s", p.exitErr.Load(), filepath.Join(c.dir, "serve.log"))
		}
		resp, err := http.Get("http://" + c.addr + "/readyz")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return p, nil
			}
		}
		time.Sleep(200 * time.Millisecond)
	}
	return p, errors.New("the server was not ready within 5 minutes")
}

// stop ends the server (SIGTERM to its process group, then SIGKILL after 30 s).
func (p *serverProc) stop() {
	if p == nil || p.exited.Load() {
		return
	}
	_ = syscall.Kill(-p.pid, syscall.SIGTERM)
	select {
	case <-p.done:
	case <-time.After(30 * time.Second):
		_ = syscall.Kill(-p.pid, syscall.SIGKILL)
		<-p.done
	}
}

// ---- HTTP ----

type client struct {
	base  string
	token string
	http  *http.Client
}

// result is one request's outcome.
type result struct {
	Status int
	Dur    time.Duration
	Bytes  int64
	Err    string // transport error or problem detail
}

func (cl *client) do(ctx context.Context, method, path string, body []byte, timeout time.Duration, hdr map[string]string) result {
	ctx, cancel := context.WithTimeout(ctx, timeout)
	defer cancel()
	var rd io.Reader
	if body != nil {
		rd = bytes.NewReader(body)
	}
	req, err := http.NewRequestWithContext(ctx, method, cl.base+path, rd)
	if err != nil {
		return result{Err: err.Error()}
	}
	if body != nil {
		req.Header.Set("Content-Type", "application/json")
	}
	if cl.token != "" {
		req.Header.Set("Authorization", "Bearer "+cl.token)
	}
	for k, v := range hdr {
		req.Header.Set(k, v)
	}
	t0 := time.Now()
	resp, err := cl.http.Do(req)
	if err != nil {
		return result{Dur: time.Since(t0), Err: err.Error()}
	}
	defer resp.Body.Close()
	var buf bytes.Buffer
	var n int64
	if resp.StatusCode >= 300 {
		n, err = io.Copy(&buf, io.LimitReader(resp.Body, 1<<16))
	} else {
		n, err = io.Copy(io.Discard, resp.Body)
	}
	res := result{Status: resp.StatusCode, Dur: time.Since(t0), Bytes: n}
	if err != nil {
		res.Err = err.Error()
	} else if resp.StatusCode >= 300 {
		var pb struct{ Title, Detail, Code string }
		if json.Unmarshal(buf.Bytes(), &pb) == nil && pb.Detail != "" {
			res.Err = fmt.Sprintf("%d %s: %s", resp.StatusCode, pb.Code, pb.Detail)
		} else {
			res.Err = fmt.Sprintf("%d %s", resp.StatusCode, strings.TrimSpace(buf.String()))
		}
	}
	return res
}

func (cl *client) getJSON(ctx context.Context, path string, out any) (int, error) {
	ctx, cancel := context.WithTimeout(ctx, time.Minute)
	defer cancel()
	req, _ := http.NewRequestWithContext(ctx, http.MethodGet, cl.base+path, nil)
	if cl.token != "" {
		req.Header.Set("Authorization", "Bearer "+cl.token)
	}
	resp, err := cl.http.Do(req)
	if err != nil {
		return 0, err
	}
	defer resp.Body.Close()
	raw, err := io.ReadAll(resp.Body)
	if err != nil {
		return resp.StatusCode, err
	}
	if resp.StatusCode != http.StatusOK {
		return resp.StatusCode, fmt.Errorf("GET %s: %d %s", path, resp.StatusCode, strings.TrimSpace(string(raw)))
	}
	return resp.StatusCode, json.Unmarshal(raw, out)
}

// ---- statistics ----

type series struct {
	durs   []time.Duration
	errs   int
	first  string
	status map[int]int
}

func (s *series) add(res result) {
	if s.status == nil {
		s.status = map[int]int{}
	}
	s.status[res.Status]++
	if res.Err != "" || res.Status != http.StatusOK {
		s.errs++
		if s.first == "" {
			s.first = res.Err
		}
		return
	}
	s.durs = append(s.durs, res.Dur)
}

// pct is the nearest-rank percentile p (0–100) of the successful durations.
func (s *series) pct(p float64) time.Duration {
	if len(s.durs) == 0 {
		return 0
	}
	d := append([]time.Duration(nil), s.durs...)
	sort.Slice(d, func(i, j int) bool { return d[i] < d[j] })
	k := int(math.Ceil(p/100*float64(len(d)))) - 1
	if k < 0 {
		k = 0
	}
	return d[k]
}

func ms(d time.Duration) string { return fmt.Sprintf("%.1f ms", float64(d)/float64(time.Millisecond)) }

// describe writes "p50 … p95 … max … (n ok, e errors)".
func (s *series) describe() string {
	if len(s.durs) == 0 {
		return fmt.Sprintf("no successful request (%d failed)", s.errs)
	}
	out := fmt.Sprintf("p50 %s, p95 %s, max %s (%d ok", ms(s.pct(50)), ms(s.pct(95)), ms(s.pct(100)), len(s.durs))
	if s.errs > 0 {
		out += fmt.Sprintf(", %d failed", s.errs)
	}
	return out + ")"
}

// goalFigure adds a latency figure whose goal is a bound on the worst (max) request.
func goalFigure(r *report, sec, name string, s *series, goal time.Duration, hasGoal bool) {
	f := figure{Section: sec, Name: name, Value: s.describe()}
	if s.errs > 0 {
		f.Note = "first failure: " + s.first
	}
	if hasGoal {
		f.Goal = "any ≤ " + ms(goal)
		f.Verdict = verdict(len(s.durs) > 0 && s.errs == 0 && s.pct(100) <= goal)
	}
	r.add(f)
}

// ---- the load ----

type tileAddr struct{ z, x, y int }

func tileOf(lon, lat float64, z int) tileAddr {
	n := math.Exp2(float64(z))
	x := int(math.Floor((lon + 180) / 360 * n))
	lr := lat * math.Pi / 180
	y := int(math.Floor((1 - math.Log(math.Tan(lr)+1/math.Cos(lr))/math.Pi) / 2 * n))
	clamp := func(v int) int { return max(0, min(int(n)-1, v)) }
	return tileAddr{z, clamp(x), clamp(y)}
}

// oceanPoints are places in the synthetic ocean (away from its invented continents).
var oceanPoints = [][2]float64{{-25, 0}, {-40, -30}, {-10, 40}, {150, 0}, {-150, 20}, {170, -40}}

func tileSet(points [][2]float64, zmin, zmax int) []tileAddr {
	var out []tileAddr
	seen := map[tileAddr]bool{}
	for z := zmin; z <= zmax; z++ {
		for _, p := range points {
			t := tileOf(p[0], p[1], z)
			if !seen[t] {
				seen[t] = true
				out = append(out, t)
			}
		}
	}
	return out
}

type bench struct {
	c   config
	r   *report
	cl  *client
	srv *serverProc
}

func (b *bench) alive(what string) bool {
	if b.srv.exited.Load() {
		b.r.fail("%s: skipped, the server is no longer running (%v)", what, b.srv.exitErr.Load())
		return false
	}
	return true
}

func (b *bench) tilePath(ds string, t tileAddr) string {
	return fmt.Sprintf("/tiles/%s/%s/%d/%d/%d.png", ds, b.c.param, t.z, t.x, t.y)
}

// tiles requests each tile once (cold), then warmReps times (warm), by zoom.
func (b *bench) tiles(ctx context.Context, sec, ds string, tiles []tileAddr, warmReps int, coldGoal, warmGoal time.Duration, hasGoal bool) {
	b.srv.setPhase(sec + ": tiles")
	deadline := time.Now().Add(b.c.phaseBudget)
	cold, warm := &series{}, &series{}
	byZoomCold, byZoomWarm := map[int]*series{}, map[int]*series{}
	skipped := 0
	for i, t := range tiles {
		if time.Now().After(deadline) || b.srv.exited.Load() {
			skipped = len(tiles) - i
			break
		}
		to := b.c.reqTimeout
		if i == 0 {
			to = b.c.coldTimeout
		}
		res := b.cl.do(ctx, http.MethodGet, b.tilePath(ds, t), nil, to, nil)
		if i == 0 {
			f := figure{Section: sec, Name: "first tile request (opens the grids)", Value: ms(res.Dur)}
			if res.Err != "" {
				f.Note = "failed: " + res.Err
			}
			b.r.add(f)
		}
		cold.add(res)
		if byZoomCold[t.z] == nil {
			byZoomCold[t.z], byZoomWarm[t.z] = &series{}, &series{}
		}
		byZoomCold[t.z].add(res)
		for k := 0; k < warmReps; k++ {
			res := b.cl.do(ctx, http.MethodGet, b.tilePath(ds, t), nil, b.c.reqTimeout, nil)
			warm.add(res)
			byZoomWarm[t.z].add(res)
		}
	}
	goalFigure(b.r, sec, fmt.Sprintf("tiles cold (%s, first request of each of %d tiles, zoom %d–%d)", b.c.param, len(tiles)-skipped, tiles[0].z, tiles[len(tiles)-1].z), cold, coldGoal, hasGoal && coldGoal > 0)
	goalFigure(b.r, sec, fmt.Sprintf("tiles warm (%d repeats of each)", warmReps), warm, warmGoal, hasGoal)
	var zs []int
	for z := range byZoomCold {
		zs = append(zs, z)
	}
	sort.Ints(zs)
	var parts []string
	for _, z := range zs {
		parts = append(parts, fmt.Sprintf("z%d cold max %s / warm p95 %s", z, ms(byZoomCold[z].pct(100)), ms(byZoomWarm[z].pct(95))))
	}
	b.r.add(figure{Section: sec, Name: "tiles by zoom", Value: strings.Join(parts, "; ")})
	if skipped > 0 {
		b.r.fail("%s tiles: %d tiles skipped after the phase budget of %s", sec, skipped, b.c.phaseBudget)
	}
	if cold.errs+warm.errs > 0 {
		b.r.fail("%s tiles: %d requests failed; first: %s", sec, cold.errs+warm.errs, firstOf(cold, warm))
	}
}

func firstOf(ss ...*series) string {
	for _, s := range ss {
		if s.first != "" {
			return s.first
		}
	}
	return ""
}

func (b *bench) positions(ctx context.Context, sec, ds string, n int) {
	b.srv.setPhase(sec + ": positions")
	rng := rand.New(rand.NewPCG(7, 11))
	deadline := time.Now().Add(b.c.phaseBudget)
	s := &series{}
	for i := 0; i < n && time.Now().Before(deadline) && !b.srv.exited.Load(); i++ {
		p := oceanPoints[rng.IntN(len(oceanPoints))] // near an ocean point, off the invented continents
		lon, lat := p[0]-5+10*rng.Float64(), p[1]-5+10*rng.Float64()
		path := fmt.Sprintf("/api/collections/%s/position?coords=POINT(%.4f%%20%.4f)&parameter-name=%s", ds, lon, lat, b.c.param)
		s.add(b.cl.do(ctx, http.MethodGet, path, nil, b.c.reqTimeout, nil))
	}
	goalFigure(b.r, sec, "position queries (one POINT each, random places in the ocean)", s, 0, false)
	if s.errs > 0 {
		b.r.fail("%s positions: %d failed; first: %s", sec, s.errs, s.first)
	}
}

// box is a WKT polygon of the square with its south-west corner at (lon, lat), side deg.
func box(lon, lat, side float64) string {
	e, n := lon+side, lat+side
	return fmt.Sprintf("POLYGON((%.6f %.6f,%.6f %.6f,%.6f %.6f,%.6f %.6f,%.6f %.6f))", lon, lat, e, lat, e, n, lon, n, lon, lat)
}

func wkt(s string) string { return strings.ReplaceAll(strings.ReplaceAll(s, " ", "%20"), ",", "%2C") }

// area asks for a square of cells×cells output cells at the grid's own resolution.
func (b *bench) area(ctx context.Context, sec, ds string, sz size, cells, reps int, goal time.Duration, hasGoal bool) {
	b.srv.setPhase(sec + ": area")
	side := float64(cells) * sz.CellDeg
	path := fmt.Sprintf("/api/collections/%s/area?coords=%s&parameter-name=%s", ds, wkt(box(-45, -20, side)), b.c.param)
	first, s := &series{}, &series{}
	var bytesOut int64
	var shape string
	for i := 0; i < reps && !b.srv.exited.Load(); i++ {
		res := b.cl.do(ctx, http.MethodGet, path, nil, b.c.reqTimeout, nil)
		if i == 0 {
			first.add(res)
			shape = b.areaShape(ctx, path)
		} else {
			s.add(res)
		}
		bytesOut = res.Bytes
	}
	name := fmt.Sprintf("area query, %d × %d = %.1f M output cells asked (answer %s; CoverageJSON, %.1f MB)", cells, cells, float64(cells*cells)/1e6, shape, float64(bytesOut)/1e6)
	goalFigure(b.r, sec, name+": first request (its blocks not yet read)", first, goal, hasGoal)
	goalFigure(b.r, sec, fmt.Sprintf("%s: %d repeats", name, reps-1), s, goal, hasGoal)
	if s.errs+first.errs > 0 {
		b.r.fail("%s area: %d of %d failed; first: %s", sec, s.errs+first.errs, reps, firstOf(first, s))
	}
}

// areaShape asks path once more and reads the answer's lattice (domain axes' num) and how many
// of its cells hold a value, so the report states what was answered, not only what was asked.
func (b *bench) areaShape(ctx context.Context, path string) string {
	var cov struct {
		Domain struct {
			Axes map[string]struct {
				Num int `json:"num"`
			} `json:"axes"`
		} `json:"domain"`
		Ranges map[string]struct {
			Values []*float64 `json:"values"`
		} `json:"ranges"`
	}
	if _, err := b.cl.getJSON(ctx, path, &cov); err != nil {
		return "unknown: " + err.Error()
	}
	nx, ny := cov.Domain.Axes["x"].Num, cov.Domain.Axes["y"].Num
	valued := 0
	for _, r := range cov.Ranges {
		for _, v := range r.Values {
			if v != nil {
				valued++
			}
		}
		break
	}
	return fmt.Sprintf("%d × %d lattice, %d cells with a value", nx, ny, valued)
}

// regionStats stores a square region of about cells×cells grid cells and asks for its statistics
// at the grid's own resolution through the statistics query (no gridded values, so the answer
// is not bounded by max_area_cells).
func (b *bench) regionStats(ctx context.Context, sec, ds string, sz size, cells, reps int, goal time.Duration) {
	b.srv.setPhase(sec + ": region statistics")
	id := "scale-bench-" + sz.Name
	side := float64(cells) * sz.CellDeg
	lon, lat := -45.0, -25.0
	feat := map[string]any{
		"type": "Feature", "id": id,
		"properties": map[string]any{"name": fmt.Sprintf("SYNTHETIC scale benchmark region (%s, %d × %d cells)", sz.Label, cells, cells)},
		"geometry": map[string]any{"type": "Polygon", "coordinates": [][][2]float64{{
			{lon, lat}, {lon + side, lat}, {lon + side, lat + side}, {lon, lat + side}, {lon, lat}}}},
	}
	body, _ := json.Marshal(feat)
	_ = b.cl.do(ctx, http.MethodDelete, "/api/regions/"+id, nil, b.c.reqTimeout, nil)
	res := b.cl.do(ctx, http.MethodPost, "/api/regions", body, b.c.reqTimeout, nil)
	if res.Status != http.StatusCreated {
		b.r.fail("%s: storing region %s failed: %s", sec, id, res.Err)
		return
	}
	path := fmt.Sprintf("/api/collections/%s/locations/%s/statistics?parameter-name=%s", ds, id, b.c.param)
	first, s := &series{}, &series{}
	counted := ""
	for i := 0; i < reps && !b.srv.exited.Load(); i++ {
		res := b.cl.do(ctx, http.MethodGet, path, nil, b.c.reqTimeout, nil)
		if i == 0 {
			first.add(res)
			var ans struct {
				Cells int64 `json:"cells"`
			}
			if _, err := b.cl.getJSON(ctx, path, &ans); err == nil {
				counted = fmt.Sprintf("; the answer counts %d cells", ans.Cells)
			}
		} else {
			s.add(res)
		}
	}
	name := fmt.Sprintf("region statistics, %d × %d = %.1f M cells at full resolution%s", cells, cells, float64(cells*cells)/1e6, counted)
	goalFigure(b.r, sec, name+": first request", first, goal, true)
	goalFigure(b.r, sec, fmt.Sprintf("%s: %d repeats", name, reps-1), s, goal, true)
	if s.errs+first.errs > 0 {
		b.r.fail("%s region statistics: %d of %d failed; first: %s", sec, s.errs+first.errs, reps, firstOf(first, s))
	}
}

// mixed runs workers concurrent clients for d: 60% warm tiles, 30% positions, 10% small areas.
func (b *bench) mixed(ctx context.Context, sec, ds string, sz size, tiles []tileAddr) {
	b.srv.setPhase(sec + ": mixed")
	var mu sync.Mutex
	kinds := map[string]*series{"tile": {}, "position": {}, "area 200×200": {}}
	end := time.Now().Add(b.c.mixed)
	var wg sync.WaitGroup
	for w := 0; w < b.c.workers; w++ {
		wg.Add(1)
		go func(seed uint64) {
			defer wg.Done()
			rng := rand.New(rand.NewPCG(seed, 3))
			for time.Now().Before(end) && !b.srv.exited.Load() {
				var kind, path string
				switch x := rng.Float64(); {
				case x < 0.6:
					kind, path = "tile", b.tilePath(ds, tiles[rng.IntN(len(tiles))])
				case x < 0.9:
					kind = "position"
					p := oceanPoints[rng.IntN(len(oceanPoints))]
					path = fmt.Sprintf("/api/collections/%s/position?coords=POINT(%.4f%%20%.4f)&parameter-name=%s", ds, p[0]-5+10*rng.Float64(), p[1]-5+10*rng.Float64(), b.c.param)
				default:
					kind = "area 200×200"
					side := 200 * sz.CellDeg
					path = fmt.Sprintf("/api/collections/%s/area?coords=%s&parameter-name=%s", ds, wkt(box(-60+100*rng.Float64(), -50+90*rng.Float64(), side)), b.c.param)
				}
				res := b.cl.do(ctx, http.MethodGet, path, nil, b.c.reqTimeout, nil)
				mu.Lock()
				kinds[kind].add(res)
				mu.Unlock()
			}
		}(uint64(w + 1))
	}
	wg.Wait()
	total := 0
	for _, k := range []string{"tile", "position", "area 200×200"} {
		s := kinds[k]
		total += len(s.durs) + s.errs
		goalFigure(b.r, sec, fmt.Sprintf("mixed run, %d clients, %s: %s", b.c.workers, b.c.mixed, k), s, 0, false)
		if s.errs > 0 {
			b.r.fail("%s mixed %s: %d failed; first: %s", sec, k, s.errs, s.first)
		}
	}
	b.r.add(figure{Section: sec, Name: "mixed run throughput", Value: fmt.Sprintf("%.1f requests/s (every kind, failed ones included)", float64(total)/b.c.mixed.Seconds())})
}

// ---- datasets ----

func readID(path string) string {
	raw, err := os.ReadFile(path)
	if err != nil {
		return ""
	}
	return strings.TrimSpace(string(raw))
}

// ensureDataset makes (or keeps) the dataset of size sz from its imported grids.
func (b *bench) ensureDataset(ctx context.Context, sz *size) error {
	var cur struct {
		AgeGridID      string `json:"age_grid_id"`
		DepthGridID    string `json:"depth_grid_id"`
		SedimentGridID string `json:"sediment_grid_id"`
	}
	st, err := b.cl.getJSON(ctx, "/api/datasets/"+sz.Dataset, &cur)
	if err == nil && cur.AgeGridID == sz.GridIDs["age"] && cur.DepthGridID == sz.GridIDs["depth"] && cur.SedimentGridID == sz.GridIDs["sediment"] {
		return nil
	}
	if st == http.StatusOK {
		_ = b.cl.do(ctx, http.MethodDelete, "/api/datasets/"+sz.Dataset, nil, b.c.reqTimeout, nil)
	}
	body, _ := json.Marshal(map[string]string{
		"id": sz.Dataset, "name": "SYNTHETIC global " + sz.Label + " (scale benchmark)",
		"description": "SYNTHETIC fields of a fictional ocean made by scripts/scale-grids.sh; not a real place",
		"age_grid_id": sz.GridIDs["age"], "depth_grid_id": sz.GridIDs["depth"], "sediment_grid_id": sz.GridIDs["sediment"],
	})
	res := b.cl.do(ctx, http.MethodPost, "/api/datasets", body, b.c.reqTimeout, nil)
	if res.Status != http.StatusCreated {
		return fmt.Errorf("creating dataset %s: %s", sz.Dataset, res.Err)
	}
	return nil
}

func makeToken(c config) (string, error) {
	out, err := exec.Command(c.bin, "token", "create", "--role", "editor", "--name",
		"scale benchmark "+time.Now().UTC().Format("2006-01-02T15:04:05"), "--data", c.data).Output()
	if err != nil {
		var ee *exec.ExitError
		if errors.As(err, &ee) {
			return "", fmt.Errorf("ridgeflank token create: %v: %s", err, strings.TrimSpace(string(ee.Stderr)))
		}
		return "", err
	}
	return strings.TrimSpace(string(out)), nil
}

// ---- the run ----

func run(c config, r *report) {
	r.commands = append(r.commands, "make bench-scale SCALE_SIZES="+strings.Join(c.sizes, ","))
	var sizes []*size
	for _, name := range c.sizes {
		sz := known[name]
		sz.Dataset = "scale-global-" + name
		sz.ImportDir = filepath.Join(c.dir, name)
		sz.GridIDs = map[string]string{}
		for _, g := range []string{"age", "depth", "sediment"} {
			sz.GridIDs[g] = readID(filepath.Join(sz.ImportDir, "import-"+g+".id"))
		}
		importFigures(c, r, &sz)
		sizes = append(sizes, &sz)
	}
	if c.token == "" {
		tok, err := makeToken(c)
		if err != nil {
			r.fail("no editor token, regions and datasets cannot be stored: %v", err)
		}
		c.token = tok
	}
	srv, err := startServer(c, r)
	defer srv.stop()
	if err != nil {
		r.fail("serve: %v", err)
		return
	}
	cl := &client{base: "http://" + c.addr, token: c.token, http: &http.Client{Transport: &http.Transport{MaxIdleConnsPerHost: 2 * c.workers}}}
	b := &bench{c: c, r: r, cl: cl, srv: srv}
	ctx := context.Background()

	// The demo basin: small, so its warm tiles have a tight goal.
	if b.alive("demo basin") {
		var col struct {
			Extent struct {
				Spatial struct {
					BBox [][4]float64 `json:"bbox"`
				} `json:"spatial"`
			} `json:"extent"`
		}
		if _, err := cl.getJSON(ctx, "/api/collections/"+demoDataset, &col); err != nil || len(col.Extent.Spatial.BBox) == 0 {
			r.fail("demo basin: dataset %s not found (install it with `ridgeflank demo --install`): %v", demoDataset, err)
		} else {
			bb := col.Extent.Spatial.BBox[0]
			cx, cy := (bb[0]+bb[2])/2, (bb[1]+bb[3])/2
			pts := [][2]float64{{cx, cy}, {bb[0] + (bb[2]-bb[0])/4, bb[1] + (bb[3]-bb[1])/4}, {bb[0] + 3*(bb[2]-bb[0])/4, bb[1] + 3*(bb[3]-bb[1])/4}}
			b.tiles(ctx, "Demo basin (SYNTHETIC Quillon Basin)", demoDataset, tileSet(pts, 0, 10), 5, 0, 5*time.Millisecond, true)
		}
	}
	for _, sz := range sizes {
		sec := fmt.Sprintf("Serve: global %s (%d × %d)", sz.Label, sz.NX, sz.NY)
		if sz.GridIDs["age"] == "" {
			r.fail("%s: no imported age grid (%s), skipped", sec, filepath.Join(sz.ImportDir, "import-age.id"))
			continue
		}
		if !b.alive(sec) {
			continue
		}
		if err := b.ensureDataset(ctx, sz); err != nil {
			r.fail("%s: %v", sec, err)
			continue
		}
		ds := sz.Dataset
		b.c.param = c.param
		if sz.GridIDs["depth"] == "" {
			b.c.param = "predicted_depth" // residual depth needs observed depth
			r.note("%s: no depth grid imported, so its queries ask for predicted_depth (age only)", sec)
		}
		is15 := sz.Name == "15s"
		b.tiles(ctx, sec, ds, tileSet(oceanPoints, 0, 10), 5, 100*time.Millisecond, 20*time.Millisecond, is15)
		if b.alive(sec + " positions") {
			b.positions(ctx, sec, ds, 200)
		}
		if b.alive(sec + " area") {
			b.area(ctx, sec, ds, *sz, 1000, b.c.areaReps, 300*time.Millisecond, sz.Name == "1m")
		}
		if b.alive(sec + " region statistics") {
			b.regionStats(ctx, sec, ds, *sz, 3163, b.c.statsReps, time.Second)
		}
		if b.alive(sec + " mixed") {
			b.mixed(ctx, sec, ds, *sz, tileSet(oceanPoints, 0, 10))
		}
	}
	memoryFigures(r, srv)
	srv.stop()
	serverErrors(r, filepath.Join(c.dir, "serve.log"))
}

func memoryFigures(r *report, p *serverProc) {
	p.mu.Lock()
	defer p.mu.Unlock()
	sec := "Server memory (VmRSS sampled every 100 ms from /proc/PID/status)"
	for _, ph := range p.order {
		r.figures = append(r.figures, figure{Section: sec, Name: "max VmRSS during " + ph, Value: phaseRSS(p.phaseMaxRSS[ph])})
	}
	r.figures = append(r.figures, figure{Section: sec, Name: "max VmRSS of the run", Value: gib(p.maxRSS), Goal: "≤ 1 GB (512 MB budget)",
		Verdict: verdict(p.maxRSS*1024 <= 1e9), Note: fmt.Sprintf("%d samples", p.samples)})
	r.figures = append(r.figures, figure{Section: sec, Name: "VmHWM (peak RSS) at the last sample", Value: gib(p.lastHWM), Goal: "≤ 1 GB (512 MB budget)",
		Verdict: verdict(p.lastHWM*1024 <= 1e9)})
	if p.exited.Load() {
		r.failures = append(r.failures, fmt.Sprintf("the server exited during the run (%v); see serve.log", p.exitErr.Load()))
	}
}

func gib(kb int64) string { return fmt.Sprintf("%.2f GiB", float64(kb)/(1<<20)) }

// serverErrors adds the distinct errors the server logged (its answers say only "internal error"),
// at most five, to the report's failures.
func serverErrors(r *report, logPath string) {
	raw, err := os.ReadFile(logPath)
	if err != nil {
		return
	}
	seen := map[string]bool{}
	for _, l := range strings.Split(string(raw), "\n") {
		_, e, ok := strings.Cut(l, ` err="`)
		if !ok {
			continue
		}
		e, _, _ = strings.Cut(e, `"`)
		if !seen[e] && len(seen) < 5 {
			seen[e] = true
			r.fail("the server logged: %s", e)
		}
	}
}

func phaseRSS(kb int64) string {
	if kb == 0 {
		return "no sample (the phase was shorter than the 100 ms sampling interval)"
	}
	return gib(kb)
}
