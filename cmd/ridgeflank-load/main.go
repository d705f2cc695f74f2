// Command ridgeflank-load drives a mixed workload against ridgeflank on this machine and reports
// requests per second, latency percentiles per kind of request, errors and the server's resident
// memory (`make loadtest`).
//
// For each store it is given (-stores sqlite,postgis) it installs the SYNTHETIC demo basin into a
// fresh store (a temporary data directory; for PostGIS the empty database of -database-url),
// creates an editor token with `ridgeflank token create`, starts `ridgeflank serve` on a free
// port of 127.0.0.1, and then, from this process:
//
//  1. warms up (a few requests of every kind, not counted),
//  2. reads the server's VmRSS from /proc/PID/status,
//  3. runs -workers concurrent clients for -duration or -max-requests requests, whichever comes
//     first: position queries, tiles at zoom 3, 5, 7 and 9, area exports (COG, netCDF-CF, CSV),
//     trajectories, statistics of stored regions, region writes (store and delete, with the
//     token) and requests the server must refuse (bad input: 400; a write without token: 401),
//  4. reads VmRSS again and flags growth beyond -max-rss-growth; the server's CPU time (user +
//     system, /proc/PID/stat) over the run gives its CPU time per request,
//  5. measures position queries alone against a bare chi handler answering a fixed tiny JSON,
//     served by a second process (this program with -serve-bare) on another loopback port and
//     driven by the same client settings, in alternating rounds; the ratio is ridgeflank's rate
//     ÷ the bare rate, and a second ratio compares the two servers' CPU time per request.
//
// With -target it loads an already running server instead (-pid for its memory, -token for
// writes). Only loopback addresses are loaded; any other target is refused. The run is bounded
// in time and count. It exits 1 when any request got an answer it did not intend (anything but
// the expected status, the intended 4xx or 429), when the server failed, or when its memory grew
// beyond the bound; 2 on bad usage.
package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"net"
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

	"github.com/go-chi/chi/v5"
)

type config struct {
	bin, stores, databaseURL, target, token, outJSON, outMD string
	pid                                                     int
	duration, ratioDuration, timeout                        time.Duration
	maxRequests, workers                                    int
	maxRSSGrowthMiB                                         float64
}

// runResult is one store's run.
type runResult struct {
	Store           string       `json:"store"`
	Target          string       `json:"target"`
	Seconds         float64      `json:"seconds"`
	Requests        int          `json:"requests"`
	ReqPerS         float64      `json:"req_per_s"`
	Kinds           []*kindStats `json:"kinds"`
	Errors          int          `json:"errors"`
	RSSBeforeKiB    int64        `json:"rss_before_kib"`
	RSSAfterKiB     int64        `json:"rss_after_kib"`
	HWMKiB          int64        `json:"hwm_kib"`
	RSSGrowthMiB    float64      `json:"rss_growth_mib"`
	RSSBoundMiB     float64      `json:"rss_growth_bound_mib"`
	RSSFlag         bool         `json:"rss_growth_beyond_bound"`
	ServerCPUPerReq float64      `json:"server_cpu_us_per_request"`  // mixed run: the server's user + system CPU time per request
	PositionCPU     float64      `json:"server_cpu_us_per_position"` // position-only rounds
	PositionReqPerS float64      `json:"position_only_req_per_s"`
	BareReqPerS     float64      `json:"bare_chi_req_per_s"`
	BareCPU         float64      `json:"bare_chi_cpu_us_per_request"`
	CPURatio        float64      `json:"bare_to_position_cpu_ratio"` // bare chi's CPU time per request ÷ ridgeflank's per position query
	Ratio           float64      `json:"position_to_bare_ratio"`
	Failures        []string     `json:"failures"`
}

type report struct {
	Date     string       `json:"date"`
	CPU      string       `json:"cpu"`
	Cores    int          `json:"cores"`
	Go       string       `json:"go"`
	Workers  int          `json:"workers"`
	Duration string       `json:"duration"`
	Runs     []*runResult `json:"runs"`
}

func main() {
	var c config
	flag.StringVar(&c.bin, "bin", "bin/ridgeflank", "the ridgeflank binary to serve with")
	flag.StringVar(&c.stores, "stores", "sqlite,postgis", "stores to serve in turn: sqlite (a temporary data directory), postgis (-database-url)")
	flag.StringVar(&c.databaseURL, "database-url", "", "an empty PostgreSQL/PostGIS database for the postgis run (it is migrated and filled)")
	flag.StringVar(&c.target, "target", "", "load this running server instead (http://127.0.0.1:PORT; loopback only)")
	flag.StringVar(&c.token, "token", "", "editor token for the region writes with -target")
	flag.IntVar(&c.pid, "pid", 0, "process id of the -target server, for its resident memory")
	flag.DurationVar(&c.duration, "duration", 20*time.Second, "length of the mixed run per store (at most 10m)")
	flag.IntVar(&c.maxRequests, "max-requests", 100000, "at most this many requests in the mixed run per store")
	flag.IntVar(&c.workers, "workers", 4, "concurrent clients")
	flag.DurationVar(&c.ratioDuration, "ratio-duration", 6*time.Second, "time of position-only and of bare chi requests each, for the ratio")
	flag.DurationVar(&c.timeout, "request-timeout", 30*time.Second, "time limit of one request")
	flag.Float64Var(&c.maxRSSGrowthMiB, "max-rss-growth", 256, "flag resident memory growth (MiB) of the server over the mixed run beyond this")
	flag.StringVar(&c.outJSON, "json", "build/load/load.json", "write the results as JSON here (empty: not written)")
	flag.StringVar(&c.outMD, "md", "build/load/load.md", "write the results as Markdown here (empty: not written)")
	serveBare := flag.String("serve-bare", "", "internal: serve only the bare chi handler on this loopback address (the second process of the ratio)")
	flag.Parse()
	if *serveBare != "" {
		if err := runBare(*serveBare); err != nil {
			fmt.Fprintln(os.Stderr, "ridgeflank-load: "+err.Error())
			os.Exit(1)
		}
		return
	}
	if err := c.check(); err != nil {
		fmt.Fprintln(os.Stderr, "ridgeflank-load: "+err.Error())
		os.Exit(2)
	}
	rep := &report{Date: time.Now().UTC().Format("2006-01-02 15:04 UTC"), CPU: cpuModel(), Cores: runtime.NumCPU(),
		Go: runtime.Version(), Workers: c.workers, Duration: c.duration.String()}
	ctx := context.Background()
	failed := false
	if c.target != "" {
		rr := &runResult{Store: "given server", Target: c.target}
		drive(ctx, c, rr, c.target, c.token, c.pid)
		rep.Runs = append(rep.Runs, rr)
	} else {
		for _, st := range strings.Split(c.stores, ",") {
			rr := &runResult{Store: strings.TrimSpace(st)}
			rep.Runs = append(rep.Runs, rr)
			if err := serveAndDrive(ctx, c, rr); err != nil {
				rr.Failures = append(rr.Failures, err.Error())
			}
		}
	}
	for _, rr := range rep.Runs {
		printRun(os.Stdout, rr)
		if len(rr.Failures) > 0 || rr.Errors > 0 || rr.RSSFlag {
			failed = true
		}
	}
	if err := rep.write(c); err != nil {
		fmt.Fprintln(os.Stderr, "ridgeflank-load: "+err.Error())
		os.Exit(1)
	}
	if failed {
		fmt.Fprintln(os.Stderr, "ridgeflank-load: FAILED: unintended answers, a server failure or memory growth beyond the bound (see above)")
		os.Exit(1)
	}
}

func (c *config) check() error {
	switch {
	case c.duration <= 0 || c.duration > 10*time.Minute:
		return fmt.Errorf("-duration %v: want more than 0 and at most 10m", c.duration)
	case c.ratioDuration <= 0 || c.ratioDuration > 2*time.Minute:
		return fmt.Errorf("-ratio-duration %v: want more than 0 and at most 2m", c.ratioDuration)
	case c.maxRequests <= 0:
		return fmt.Errorf("-max-requests %d: want at least 1", c.maxRequests)
	case c.workers < 1 || c.workers > 64:
		return fmt.Errorf("-workers %d: want 1 to 64", c.workers)
	}
	if c.target != "" {
		return checkLoopback(c.target)
	}
	for _, st := range strings.Split(c.stores, ",") {
		switch strings.TrimSpace(st) {
		case "sqlite":
		case "postgis":
			if c.databaseURL == "" {
				return errors.New("the postgis run needs -database-url (an empty database)")
			}
			if err := checkLoopbackDB(c.databaseURL); err != nil {
				return err
			}
		default:
			return fmt.Errorf("-stores: unknown store %q (sqlite or postgis)", st)
		}
	}
	return nil
}

// checkLoopbackDB refuses a database URL whose host is not on this machine.
func checkLoopbackDB(raw string) error {
	i := strings.Index(raw, "://")
	if i < 0 {
		return errors.New("-database-url: want postgres://USER@127.0.0.1:PORT/DB")
	}
	if err := checkLoopback("http" + raw[i:]); err != nil {
		return fmt.Errorf("-database-url: the database must be on this machine: %w", err)
	}
	return nil
}

// ---- serving ----

type serverProc struct {
	cmd  *exec.Cmd
	done chan struct{}
	err  error
}

func (p *serverProc) exited() bool {
	select {
	case <-p.done:
		return true
	default:
		return false
	}
}

func (p *serverProc) stop() {
	if p.exited() {
		return
	}
	_ = syscall.Kill(-p.cmd.Process.Pid, syscall.SIGTERM)
	select {
	case <-p.done:
	case <-time.After(30 * time.Second):
		_ = syscall.Kill(-p.cmd.Process.Pid, syscall.SIGKILL)
		<-p.done
	}
}

// freeLoopbackAddr asks the kernel for a free port on 127.0.0.1.
func freeLoopbackAddr() (string, error) {
	ln, err := net.Listen("tcp", "127.0.0.1:0")
	if err != nil {
		return "", err
	}
	addr := ln.Addr().String()
	return addr, ln.Close()
}

func serveAndDrive(ctx context.Context, c config, rr *runResult) error {
	dir, err := os.MkdirTemp("", "ridgeflank-load-")
	if err != nil {
		return err
	}
	defer os.RemoveAll(dir)
	storeFlags := []string{"--data", filepath.Join(dir, "data")}
	if rr.Store == "postgis" {
		storeFlags = append(storeFlags, "--database-url", c.databaseURL)
	}
	if out, err := exec.Command(c.bin, append([]string{"demo", "--install"}, storeFlags...)...).CombinedOutput(); err != nil {
		return fmt.Errorf("%s: installing the demo basin: %v: %s", rr.Store, err, lastLine(out))
	}
	out, err := exec.Command(c.bin, append([]string{"token", "create", "--role", "editor", "--name", "load test"}, storeFlags...)...).Output()
	if err != nil {
		return fmt.Errorf("%s: creating a token: %v", rr.Store, err)
	}
	token := strings.TrimSpace(string(out))
	addr, err := freeLoopbackAddr()
	if err != nil {
		return err
	}
	args := append([]string{"serve", "--addr", addr, "--no-demo", "--rate-limit", "-1", "--log-level", "warn"}, storeFlags...)
	logPath := filepath.Join(dir, "serve.log")
	logf, err := os.Create(logPath)
	if err != nil {
		return err
	}
	cmd := exec.Command(c.bin, args...)
	cmd.Stdout, cmd.Stderr = logf, logf
	cmd.SysProcAttr = &syscall.SysProcAttr{Setpgid: true}
	if err := cmd.Start(); err != nil {
		logf.Close()
		return err
	}
	p := &serverProc{cmd: cmd, done: make(chan struct{})}
	go func() { p.err = cmd.Wait(); logf.Close(); close(p.done) }()
	defer p.stop()
	base := "http://" + addr
	rr.Target = base
	if err := waitReady(base, p, time.Minute); err != nil {
		log, _ := os.ReadFile(logPath)
		return fmt.Errorf("%s: %v: %s", rr.Store, err, lastLine(log))
	}
	drive(ctx, c, rr, base, token, cmd.Process.Pid)
	if p.exited() {
		log, _ := os.ReadFile(logPath)
		rr.Failures = append(rr.Failures, fmt.Sprintf("the server exited during the run (%v): %s", p.err, lastLine(log)))
	}
	return nil
}

func waitReady(base string, p *serverProc, limit time.Duration) error {
	deadline := time.Now().Add(limit)
	for time.Now().Before(deadline) {
		if p.exited() {
			return fmt.Errorf("the server exited during start-up (%v)", p.err)
		}
		resp, err := http.Get(base + "/readyz")
		if err == nil {
			resp.Body.Close()
			if resp.StatusCode == http.StatusOK {
				return nil
			}
		}
		time.Sleep(100 * time.Millisecond)
	}
	return fmt.Errorf("the server was not ready within %v", limit)
}

func lastLine(b []byte) string {
	s := strings.TrimSpace(string(b))
	if i := strings.LastIndexByte(s, '\n'); i >= 0 {
		s = s[i+1:]
	}
	return s
}

// ---- the run ----

func drive(ctx context.Context, c config, rr *runResult, base, token string, pid int) {
	rr.RSSBoundMiB = c.maxRSSGrowthMiB
	cl := &client{base: base, token: token, http: newHTTPClient(c.workers), timeout: c.timeout}
	// Warm-up: every kind a few times (grids opened, tables built, connections made).
	w := newWorker(cl, 1, fmt.Sprintf("load-warm-%d", time.Now().UnixNano()%1e9))
	for range 60 {
		if o := w.one(ctx); o.err != "" && o.status != 429 {
			rr.Failures = append(rr.Failures, "warm-up: "+o.err)
			return
		}
	}
	if pid > 0 {
		rr.RSSBeforeKiB, _ = procStatus(pid, "VmRSS")
	}
	cpu0 := procCPU(pid)
	mixed(ctx, c, rr, cl)
	if cpu := procCPU(pid) - cpu0; pid > 0 && rr.Requests > 0 {
		rr.ServerCPUPerReq = float64(cpu.Microseconds()) / float64(rr.Requests)
	}
	if pid > 0 {
		rr.RSSAfterKiB, _ = procStatus(pid, "VmRSS")
		rr.HWMKiB, _ = procStatus(pid, "VmHWM")
		rr.RSSGrowthMiB = float64(rr.RSSAfterKiB-rr.RSSBeforeKiB) / 1024
		rr.RSSFlag = rr.RSSGrowthMiB > c.maxRSSGrowthMiB
	}
	ratio(ctx, c, rr, cl, pid)
}

// mixed runs c.workers clients over the mix until the time or the count runs out.
func mixed(ctx context.Context, c config, rr *runResult, cl *client) {
	var issued atomic.Int64
	var mu sync.Mutex
	kinds := map[string]*kindStats{}
	end := time.Now().Add(c.duration)
	run := fmt.Sprintf("load-%s-%d", strings.ReplaceAll(rr.Store, " ", "-"), time.Now().UnixNano()%1e9)
	var wg sync.WaitGroup
	t0 := time.Now()
	for i := range c.workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := newWorker(cl, uint64(i+2), fmt.Sprintf("%s-w%d", run, i))
			for time.Now().Before(end) && issued.Add(1) <= int64(c.maxRequests) {
				o := w.one(ctx)
				mu.Lock()
				k := kinds[o.kind]
				if k == nil {
					k = &kindStats{Kind: o.kind}
					kinds[o.kind] = k
				}
				k.add(o)
				mu.Unlock()
			}
		}()
	}
	wg.Wait()
	elapsed := time.Since(t0)
	rr.Seconds = elapsed.Seconds()
	for _, k := range kinds {
		k.finish(elapsed)
		rr.Requests += k.Count
		rr.Errors += k.Errors
		rr.Kinds = append(rr.Kinds, k)
	}
	sort.Slice(rr.Kinds, func(i, j int) bool { return rr.Kinds[i].Kind < rr.Kinds[j].Kind })
	rr.ReqPerS = float64(rr.Requests) / elapsed.Seconds()
}

// bareRouter answers the position route with a fixed tiny JSON.
func bareRouter() http.Handler {
	r := chi.NewRouter()
	r.Get("/api/collections/{datasetId}/position", func(w http.ResponseWriter, _ *http.Request) {
		w.Header().Set("Content-Type", "application/json")
		_, _ = w.Write([]byte(`{"ok":true}` + "\n"))
	})
	return r
}

// runBare serves bareRouter on addr (loopback only) until stdin closes or the process is ended.
func runBare(addr string) error {
	if err := checkLoopback("http://" + addr); err != nil {
		return err
	}
	ln, err := net.Listen("tcp", addr)
	if err != nil {
		return err
	}
	srv := &http.Server{Handler: bareRouter(), ReadHeaderTimeout: 10 * time.Second}
	go func() {
		_, _ = io.Copy(io.Discard, os.Stdin) // the parent holds stdin open while it needs us
		_ = srv.Close()
	}()
	if err := srv.Serve(ln); !errors.Is(err, http.ErrServerClosed) {
		return err
	}
	return nil
}

// bareChi starts the bare chi server as a second process (this program with -serve-bare) on a
// free loopback port, so that its CPU time can be read like the server's.
func bareChi() (base string, pid int, stop func(), err error) {
	self, err := os.Executable()
	if err != nil {
		return "", 0, nil, err
	}
	addr, err := freeLoopbackAddr()
	if err != nil {
		return "", 0, nil, err
	}
	cmd := exec.Command(self, "-serve-bare", addr)
	stdin, err := cmd.StdinPipe()
	if err != nil {
		return "", 0, nil, err
	}
	cmd.Stderr = os.Stderr
	if err := cmd.Start(); err != nil {
		return "", 0, nil, err
	}
	stop = func() {
		stdin.Close()
		done := make(chan struct{})
		go func() { _ = cmd.Wait(); close(done) }()
		select {
		case <-done:
		case <-time.After(5 * time.Second):
			_ = cmd.Process.Kill()
			<-done
		}
	}
	base = "http://" + addr
	for deadline := time.Now().Add(10 * time.Second); time.Now().Before(deadline); time.Sleep(20 * time.Millisecond) {
		resp, err := http.Get(base + "/api/collections/x/position")
		if err == nil {
			resp.Body.Close()
			return base, cmd.Process.Pid, stop, nil
		}
	}
	stop()
	return "", 0, nil, errors.New("the bare chi server did not start")
}

// ratio drives position queries alone against ridgeflank and the same requests against the bare
// chi server, in alternating rounds (so a machine shared with other work slows both alike).
func ratio(ctx context.Context, c config, rr *runResult, cl *client, pid int) {
	bareBase, barePID, stop, err := bareChi()
	if err != nil {
		rr.Failures = append(rr.Failures, "bare chi server: "+err.Error())
		return
	}
	defer stop()
	bare := &client{base: bareBase, http: newHTTPClient(c.workers), timeout: c.timeout}
	const rounds = 6
	slice := c.ratioDuration / rounds
	var nPos, nBare int
	var tPos, tBare, cpuPos, cpuBare time.Duration
	for r := range rounds {
		cpu0 := procCPU(pid)
		n, d, errs := closedLoop(ctx, cl, c.workers, slice, uint64(100+r))
		cpuPos += procCPU(pid) - cpu0
		nPos, tPos = nPos+n, tPos+d
		if errs != "" {
			rr.Failures = append(rr.Failures, "position-only run: "+errs)
			rr.Errors++
		}
		cpu0 = procCPU(barePID)
		n, d, errs = closedLoop(ctx, bare, c.workers, slice, uint64(100+r))
		cpuBare += procCPU(barePID) - cpu0
		nBare, tBare = nBare+n, tBare+d
		if errs != "" {
			rr.Failures = append(rr.Failures, "bare chi run: "+errs)
		}
	}
	rr.PositionReqPerS = float64(nPos) / tPos.Seconds()
	if pid > 0 && nPos > 0 {
		rr.PositionCPU = float64(cpuPos.Microseconds()) / float64(nPos)
	}
	if nBare > 0 {
		rr.BareCPU = float64(cpuBare.Microseconds()) / float64(nBare)
	}
	if rr.PositionCPU > 0 {
		rr.CPURatio = rr.BareCPU / rr.PositionCPU
	}
	rr.BareReqPerS = float64(nBare) / tBare.Seconds()
	if rr.BareReqPerS > 0 {
		rr.Ratio = rr.PositionReqPerS / rr.BareReqPerS
	}
}

// closedLoop runs workers clients sending position queries for d; it answers the requests
// completed, the time taken and the first error.
func closedLoop(ctx context.Context, cl *client, workers int, d time.Duration, seed uint64) (int, time.Duration, string) {
	var n atomic.Int64
	var first atomic.Value
	end := time.Now().Add(d)
	t0 := time.Now()
	var wg sync.WaitGroup
	for i := range workers {
		wg.Add(1)
		go func() {
			defer wg.Done()
			w := newWorker(cl, seed*1000+uint64(i), "")
			for time.Now().Before(end) {
				o, _ := cl.do(ctx, "position", http.MethodGet, w.positionPath(), nil, false, 200)
				if o.err != "" {
					first.CompareAndSwap(nil, o.err)
					continue
				}
				n.Add(1)
			}
		}()
	}
	wg.Wait()
	errs, _ := first.Load().(string)
	return int(n.Load()), time.Since(t0), errs
}

// procStatus reads one field (in kB) of /proc/PID/status.
func procStatus(pid int, field string) (int64, error) {
	raw, err := os.ReadFile(fmt.Sprintf("/proc/%d/status", pid))
	if err != nil {
		return 0, err
	}
	for _, l := range strings.Split(string(raw), "\n") {
		if k, v, ok := strings.Cut(l, ":"); ok && k == field {
			f := strings.Fields(v)
			if len(f) > 0 {
				return strconv.ParseInt(f[0], 10, 64)
			}
		}
	}
	return 0, fmt.Errorf("no %s in /proc/%d/status", field, pid)
}

// procCPU is the user + system CPU time of process pid so far (0 when pid is 0 or unreadable),
// from fields 14 and 15 of /proc/PID/stat, in clock ticks of 1/100 s (USER_HZ on Linux).
func procCPU(pid int) time.Duration {
	if pid <= 0 {
		return 0
	}
	raw, err := os.ReadFile(fmt.Sprintf("/proc/%d/stat", pid))
	if err != nil {
		return 0
	}
	// The command name (field 2) is in parentheses and may hold spaces: count from after it.
	s := string(raw)
	i := strings.LastIndexByte(s, ')')
	if i < 0 {
		return 0
	}
	f := strings.Fields(s[i+1:]) // f[0] is field 3 (state)
	if len(f) < 13 {
		return 0
	}
	ut, _ := strconv.ParseInt(f[11], 10, 64)
	st, _ := strconv.ParseInt(f[12], 10, 64)
	return time.Duration(ut+st) * 10 * time.Millisecond
}

func cpuModel() string {
	raw, _ := os.ReadFile("/proc/cpuinfo")
	for _, l := range strings.Split(string(raw), "\n") {
		if k, v, ok := strings.Cut(l, ":"); ok && strings.TrimSpace(k) == "model name" {
			return strings.TrimSpace(v)
		}
	}
	return "unknown"
}

// ---- output ----

func printRun(w *os.File, rr *runResult) {
	fmt.Fprintf(w, "\n== %s (%s): %d requests in %.1f s, %.0f req/s, %d errors; server CPU %.0f µs per request\n", rr.Store, rr.Target, rr.Requests, rr.Seconds, rr.ReqPerS, rr.Errors, rr.ServerCPUPerReq)
	fmt.Fprintf(w, "%-24s %7s %8s %8s %9s %6s %6s %6s\n", "kind", "count", "req/s", "p50 ms", "p99 ms", "4xx", "429", "errors")
	for _, k := range rr.Kinds {
		fmt.Fprintf(w, "%-24s %7d %8.1f %8.2f %9.2f %6d %6d %6d\n", k.Kind, k.Count, k.RatePerS, k.P50Ms, k.P99Ms, k.Refused, k.Limited, k.Errors)
		for _, e := range k.First {
			fmt.Fprintf(w, "    error: %s\n", e)
		}
	}
	if rr.RSSBeforeKiB > 0 {
		flag := "within"
		if rr.RSSFlag {
			flag = "BEYOND"
		}
		fmt.Fprintf(w, "server VmRSS %.1f MiB before, %.1f MiB after (%+.1f MiB, %s the bound of %.0f MiB); VmHWM %.1f MiB\n",
			float64(rr.RSSBeforeKiB)/1024, float64(rr.RSSAfterKiB)/1024, rr.RSSGrowthMiB, flag, rr.RSSBoundMiB, float64(rr.HWMKiB)/1024)
	}
	if rr.BareReqPerS > 0 {
		fmt.Fprintf(w, "position only %.0f req/s (server CPU %.0f µs each), bare chi %.0f req/s (%.0f µs each): ratio %.2f (goal ≥ 0.5); by CPU time %.2f\n",
			rr.PositionReqPerS, rr.PositionCPU, rr.BareReqPerS, rr.BareCPU, rr.Ratio, rr.CPURatio)
	}
	for _, f := range rr.Failures {
		fmt.Fprintf(w, "FAILED: %s\n", f)
	}
}

func (rep *report) write(c config) error {
	if c.outJSON != "" {
		b, err := json.MarshalIndent(rep, "", " ")
		if err != nil {
			return err
		}
		if err := writeFile(c.outJSON, append(b, '\n')); err != nil {
			return err
		}
	}
	if c.outMD != "" {
		return writeFile(c.outMD, []byte(rep.markdown()))
	}
	return nil
}

func writeFile(path string, b []byte) error {
	if err := os.MkdirAll(filepath.Dir(path), 0o755); err != nil {
		return err
	}
	return os.WriteFile(path, b, 0o644)
}

// markdown is the run as a report section (used by make bench in docs/benchmarks.md).
func (rep *report) markdown() string {
	var b strings.Builder
	fmt.Fprintf(&b, "Load test of %s: %d concurrent clients for %s per store (or until the request cap), the SYNTHETIC demo basin, parameter `%s`, server on 127.0.0.1 with `--rate-limit -1`; the generator on the same machine (%d cores, %s).\n\n",
		rep.Date, rep.Workers, rep.Duration, parameter, rep.Cores, rep.CPU)
	for _, rr := range rep.Runs {
		fmt.Fprintf(&b, "### Load test: %s\n\n", rr.Store)
		fmt.Fprintf(&b, "%d requests in %.1f s: **%.0f requests/s**, %d unintended answers; the server's CPU time (user + system) %.0f µs per request.\n\n", rr.Requests, rr.Seconds, rr.ReqPerS, rr.Errors, rr.ServerCPUPerReq)
		b.WriteString("| kind | requests | req/s | p50 ms | p99 ms | intended 4xx | 429 | errors |\n| --- | ---: | ---: | ---: | ---: | ---: | ---: | ---: |\n")
		for _, k := range rr.Kinds {
			fmt.Fprintf(&b, "| %s | %d | %.1f | %.2f | %.2f | %d | %d | %d |\n", k.Kind, k.Count, k.RatePerS, k.P50Ms, k.P99Ms, k.Refused, k.Limited, k.Errors)
		}
		b.WriteString("\n")
		if rr.RSSBeforeKiB > 0 {
			verdict := "within"
			if rr.RSSFlag {
				verdict = "**beyond**"
			}
			fmt.Fprintf(&b, "Server resident memory (VmRSS): %.1f MiB before the mixed run, %.1f MiB after (%+.1f MiB, %s the bound of %.0f MiB); peak (VmHWM) %.1f MiB.\n\n",
				float64(rr.RSSBeforeKiB)/1024, float64(rr.RSSAfterKiB)/1024, rr.RSSGrowthMiB, verdict, rr.RSSBoundMiB, float64(rr.HWMKiB)/1024)
		}
		if rr.BareReqPerS > 0 {
			verdict := "met"
			if rr.Ratio < 0.5 {
				verdict = "**not met**"
			}
			fmt.Fprintf(&b, "Position queries alone: %.0f req/s (server CPU %.0f µs each); a bare chi handler answering a fixed tiny JSON in a second process, same client settings, in alternating rounds: %.0f req/s (%.0f µs each); **ratio %.2f** (goal ≥ 0.5: %s). By server CPU time per request, which other work on the machine disturbs less: bare ÷ position = %.2f.\n\n",
				rr.PositionReqPerS, rr.PositionCPU, rr.BareReqPerS, rr.BareCPU, rr.Ratio, verdict, rr.CPURatio)
		}
		for _, f := range rr.Failures {
			fmt.Fprintf(&b, "- failed: %s\n", strings.ReplaceAll(f, "|", "\\|"))
		}
		if len(rr.Failures) > 0 {
			b.WriteString("\n")
		}
	}
	return b.String()
}
