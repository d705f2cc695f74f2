package e2etest

import (
	"bytes"
	"context"
	"encoding/base64"
	"encoding/json"
	"fmt"
	"image"
	"image/png"
	"math"
	"net/http"
	"net/http/httptest"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/runtime"
	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"

	"ridgeflank/demobasin"
	"ridgeflank/jobs"
	"ridgeflank/jobs/queue"
	"ridgeflank/server"
	"ridgeflank/store"
	_ "ridgeflank/store/sqlite" // registers the embedded store
	"ridgeflank/thermal"
	"ridgeflank/web"
)

// chromiumPath is Debian's Chromium; RIDGEFLANK_CHROMIUM overrides it.
func chromiumPath() string {
	if p := os.Getenv("RIDGEFLANK_CHROMIUM"); p != "" {
		return p
	}
	return "/usr/bin/chromium"
}

// requireBrowserAndPage skips the test when Chromium or the built page is
// missing, except when CI is set: then a missing browser or page fails.
func requireBrowserAndPage(t *testing.T) {
	t.Helper()
	missing := ""
	if _, err := os.Stat(chromiumPath()); err != nil {
		missing = fmt.Sprintf("Chromium not found at %s (install the chromium package or set RIDGEFLANK_CHROMIUM)", chromiumPath())
	} else if !web.HasPage() {
		missing = "the page is not built: run `npm ci && npm run build` in web/ before `go test` (make does this)"
	}
	if missing == "" {
		return
	}
	if os.Getenv("CI") != "" {
		t.Fatalf("%s; CI is set, so this fails instead of skipping", missing)
	}
	t.Skip(missing)
}

// screenshotDir is where screenshots go: $RIDGEFLANK_SCREENSHOTS, or a
// temporary directory.
func screenshotDir(t *testing.T) string {
	dir := os.Getenv("RIDGEFLANK_SCREENSHOTS")
	if dir == "" {
		return t.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatalf("screenshot directory: %v", err)
	}
	return dir
}

type testServer struct {
	URL       string
	Store     store.Store
	DatasetID string
	Token     string
}

// startServer runs the real HTTP handler on an embedded SQLite store in a
// temporary directory, with the synthetic demo basin when demo is true.
func startServer(t *testing.T, demo bool) *testServer {
	t.Helper()
	ctx := context.Background()
	dataDir := t.TempDir()
	st, err := store.Open(ctx, store.Config{DataDir: dataDir})
	if err != nil {
		t.Fatalf("open store: %v", err)
	}
	t.Cleanup(func() { st.Close() })
	ts := &testServer{Store: st}
	if demo {
		basin, err := demobasin.Generate(demobasin.Options{})
		if err != nil {
			t.Fatalf("generate the demo basin: %v", err)
		}
		id, err := demobasin.Install(ctx, st, basin)
		if err != nil {
			t.Fatalf("install the demo basin: %v", err)
		}
		ts.DatasetID = id
	}
	_, plain, err := st.CreateToken(ctx, "e2e-editor", store.RoleEditor)
	if err != nil {
		t.Fatalf("create token: %v", err)
	}
	ts.Token = plain
	// The durable job queue (River on the same SQLite file), as `serve` runs it.
	q, err := queue.Open(ctx, st, jobs.Handlers{Import: server.ImportWorker(st, nil)}, queue.Options{Workers: 1, PollInterval: 100 * time.Millisecond})
	if err != nil {
		t.Fatalf("job queue: %v", err)
	}
	t.Cleanup(func() { q.Close() })
	if err := q.Migrate(ctx); err != nil {
		t.Fatalf("job queue migrations: %v", err)
	}
	if err := q.Start(ctx); err != nil {
		t.Fatalf("start the job queue: %v", err)
	}
	t.Cleanup(func() {
		c, cancel := context.WithTimeout(context.Background(), 5*time.Second)
		defer cancel()
		_ = q.Stop(c)
	})
	h := server.New(server.Deps{
		Store:   st,
		Jobs:    q,
		Assets:  web.Assets(),
		Version: "e2e",
		Config:  server.Config{RateLimitPerMinute: -1, UploadDir: filepath.Join(dataDir, "uploads")},
	})
	hs := httptest.NewServer(h)
	t.Cleanup(hs.Close)
	ts.URL = hs.URL
	return ts
}

// browser is one headless Chromium tab with the page's JavaScript problems
// (exceptions and console errors) collected.
type browser struct {
	t        *testing.T
	ctx      context.Context
	shots    string
	mu       sync.Mutex
	problems []string
}

func newBrowser(t *testing.T) *browser {
	t.Helper()
	opts := append(chromedp.DefaultExecAllocatorOptions[:],
		chromedp.ExecPath(chromiumPath()),
		chromedp.UserDataDir(t.TempDir()),
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.Flag("disable-quic", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-sync", true),
	)
	actx, cancelAlloc := chromedp.NewExecAllocator(context.Background(), opts...)
	b := &browser{t: t, shots: screenshotDir(t)}
	ctx, cancel := chromedp.NewContext(actx, chromedp.WithListener(b.listen))
	t.Cleanup(func() {
		cancel()
		cancelAlloc()
	})
	b.ctx = ctx
	// The first action starts the browser: no timeout on it (see chromedp.Run).
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(1400, 1000)); err != nil {
		t.Fatalf("start Chromium: %v", err)
	}
	return b
}

// listen runs on chromedp's reading goroutine: it only records.
func (b *browser) listen(ev any) {
	switch e := ev.(type) {
	case *runtime.EventExceptionThrown:
		d := e.ExceptionDetails
		msg := d.Text
		if d.Exception != nil && d.Exception.Description != "" {
			msg += " " + d.Exception.Description
		}
		b.record("exception: " + msg)
	case *runtime.EventConsoleAPICalled:
		if e.Type == runtime.ConsoleAPICalledTypeError || e.Type == runtime.ConsoleAPICalledTypeAssert {
			var parts []string
			for _, a := range e.Args {
				if len(a.Value) > 0 {
					parts = append(parts, string(a.Value))
				} else {
					parts = append(parts, a.Description)
				}
			}
			b.record("console." + string(e.Type) + ": " + strings.Join(parts, " "))
		}
	}
}

func (b *browser) record(s string) {
	b.mu.Lock()
	defer b.mu.Unlock()
	b.problems = append(b.problems, s)
}

// checkNoProblems fails the test if the page threw or logged an error.
func (b *browser) checkNoProblems() {
	b.t.Helper()
	b.mu.Lock()
	defer b.mu.Unlock()
	for _, p := range b.problems {
		b.t.Errorf("JavaScript problem: %s", p)
	}
}

func (b *browser) do(timeout time.Duration, actions ...chromedp.Action[chromedp.Void]) {
	b.t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, timeout)
	defer cancel()
	if err := chromedp.Do(ctx, actions...); err != nil {
		b.shot("failure")
		b.t.Fatalf("browser action: %v", err)
	}
}

// eval runs a JavaScript expression and decodes its value.
func eval[T any](b *browser, js string) T {
	b.t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, 20*time.Second)
	defer cancel()
	v, err := chromedp.Run(ctx, chromedp.Evaluate[T](js, chromedp.EvalAwaitPromise))
	if err != nil {
		b.t.Fatalf("evaluate %q: %v", js, err)
	}
	return v
}

// waitFor polls a JavaScript predicate until it is true.
func (b *browser) waitFor(what, js string, timeout time.Duration) {
	b.t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, timeout+5*time.Second)
	defer cancel()
	_, err := chromedp.Run(ctx, chromedp.Poll[bool](js, chromedp.WithPollingTimeout(timeout), chromedp.WithPollingInterval(50*time.Millisecond)))
	if err != nil {
		b.shot("failure-" + strings.ReplaceAll(what, " ", "-"))
		b.t.Fatalf("waiting for %s: %v", what, err)
	}
}

// shot saves a viewport screenshot as name.png in the screenshot directory.
func (b *browser) shot(name string) string {
	b.t.Helper()
	ctx, cancel := context.WithTimeout(b.ctx, 20*time.Second)
	defer cancel()
	buf, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	if err != nil {
		b.t.Logf("screenshot %s: %v", name, err)
		return ""
	}
	path := filepath.Join(b.shots, name+".png")
	if err := os.WriteFile(path, buf, 0o644); err != nil {
		b.t.Errorf("write screenshot: %v", err)
	}
	b.t.Logf("screenshot: %s", path)
	return path
}

func (b *browser) readySeq() int {
	return eval[int](b, `Number(document.body.dataset.readySeq || 0)`)
}

// waitReadyAfter waits until the data layer has finished loading after the
// ready sequence number seq.
func (b *browser) waitReadyAfter(seq int) {
	b.t.Helper()
	b.waitFor("the data layer to load", fmt.Sprintf(`document.body.dataset.ready === "true" && Number(document.body.dataset.readySeq || 0) > %d`, seq), 30*time.Second)
}

// choose selects value in a <select> and fires its change event, as a user's choice does.
func (b *browser) choose(id, value string) {
	b.t.Helper()
	ok := eval[bool](b, fmt.Sprintf(`(() => { const s = document.getElementById(%q); s.value = %q; s.dispatchEvent(new Event("change", {bubbles: true})); return s.value === %q; })()`, id, value, value))
	if !ok {
		b.t.Fatalf("select #%s has no option %q", id, value)
	}
}

// screenXY returns the viewport pixel of a longitude/latitude on the map,
// rounded to whole pixels as mouse events are.
func (b *browser) screenXY(lon, lat float64) (float64, float64) {
	xy := eval[[]float64](b, fmt.Sprintf(`(() => { const m = window.ridgeflank.map; const r = m.getContainer().getBoundingClientRect(); const p = m.latLngToContainerPoint([%g, %g]); return [r.left + p.x, r.top + p.y]; })()`, lat, lon))
	return math.Round(xy[0]), math.Round(xy[1])
}

// degreesPerPixel is the longitude span of one screen pixel at the map's
// zoom (web mercator: 360° over 256·2^zoom pixels); a latitude pixel is
// never larger.
func (b *browser) degreesPerPixel() float64 {
	return eval[float64](b, `360 / (256 * Math.pow(2, window.ridgeflank.map.getZoom()))`)
}

// lonLatAt returns the longitude/latitude Leaflet gives a mouse event at a
// viewport pixel (through its own event-to-map conversion, which corrects for
// a fractional container size).
func (b *browser) lonLatAt(x, y float64) (float64, float64) {
	ll := eval[[]float64](b, fmt.Sprintf(`(() => { const p = window.ridgeflank.map.mouseEventToLatLng({clientX: %g, clientY: %g}); return [p.lng, p.lat]; })()`, x, y))
	return ll[0], ll[1]
}

// value reads the full-precision number behind a read-out cell (NaN: no data).
func (b *browser) value(selector string) float64 {
	b.t.Helper()
	s := eval[string](b, fmt.Sprintf(`(document.querySelector(%q)?.dataset.value) ?? ""`, selector))
	if s == "" {
		return math.NaN()
	}
	v, err := strconv.ParseFloat(s, 64)
	if err != nil {
		b.t.Fatalf("%s: data-value %q is not a number", selector, s)
	}
	return v
}

func (b *browser) clickXY(x, y float64) {
	b.do(10*time.Second, chromedp.MouseClickXY(x, y))
}

func (b *browser) doubleClickXY(x, y float64) {
	b.do(10*time.Second, chromedp.MouseClickXY(x, y), chromedp.MouseClickXY(x, y, chromedp.ClickCount(2)))
}

// check is one numeric comparison with the source of its expected value.
type check struct {
	name   string
	got    float64
	want   float64
	tol    float64
	source string
}

func runChecks(t *testing.T, checks []check) {
	t.Helper()
	for _, c := range checks {
		t.Run(c.name, func(t *testing.T) {
			if math.IsNaN(c.got) || math.IsNaN(c.want) || math.Abs(c.got-c.want) > c.tol {
				t.Errorf("got %.4f, want %.4f ± %g (%s)", c.got, c.want, c.tol, c.source)
			}
		})
	}
}

// collectionBBox asks the API for the dataset's extent [w, s, e, n].
func collectionBBox(t *testing.T, ts *testServer) [4]float64 {
	t.Helper()
	res, err := http.Get(ts.URL + "/api/collections/" + ts.DatasetID)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var c struct {
		Extent struct {
			Spatial struct {
				BBox [][]float64 `json:"bbox"`
			} `json:"spatial"`
		} `json:"extent"`
	}
	if err := json.NewDecoder(res.Body).Decode(&c); err != nil || len(c.Extent.Spatial.BBox) == 0 || len(c.Extent.Spatial.BBox[0]) < 4 {
		t.Fatalf("collection %s has no bbox (status %d, err %v)", ts.DatasetID, res.StatusCode, err)
	}
	bb := c.Extent.Spatial.BBox[0]
	return [4]float64{bb[0], bb[1], bb[2], bb[3]}
}

// Half-space cooling: depth d(t) = d_r + 2 ρm α ΔT / (ρm − ρw) · √(κ t / π)
// and surface heat flow q(t) = k ΔT / √(π κ t) (Turcotte & Schubert,
// Geodynamics, 2nd ed. 2002, eqs. 4.209 and 4.127; equation numbers from memory).
func halfSpaceDepthM(p thermal.Params, ageMa float64) float64 {
	t := ageMa * 1e6 * 365.25 * 86400
	k := p.EffectiveDiffusivityM2s()
	dT := p.MantleTemperatureC - p.SurfaceTemperatureC
	return p.RidgeDepthM + 2*p.MantleDensityKgM3*p.ExpansivityPerK*dT/(p.MantleDensityKgM3-p.WaterDensityKgM3)*math.Sqrt(k*t/math.Pi)
}

func halfSpaceHeatFlowMWm2(p thermal.Params, ageMa float64) float64 {
	t := ageMa * 1e6 * 365.25 * 86400
	k := p.EffectiveDiffusivityM2s()
	dT := p.MantleTemperatureC - p.SurfaceTemperatureC
	return 1000 * p.ConductivityWmK * dT / math.Sqrt(math.Pi*k*t)
}

// GDH1 closed-form fits: depth 2600 + 365 √t (t < 20 Ma), 5651 − 2473
// exp(−0.0278 t) (t ≥ 20 Ma); heat flow 510 / √t (t ≤ 55 Ma), 48 + 96
// exp(−0.0278 t) (t > 55 Ma) (Stein & Stein 1992, Nature 359, 123–129;
// coefficients from memory).
func gdh1FitDepthM(t float64) float64 {
	if t < 20 {
		return 2600 + 365*math.Sqrt(t)
	}
	return 5651 - 2473*math.Exp(-0.0278*t)
}

func gdh1FitHeatFlowMWm2(t float64) float64 {
	if t <= 55 {
		return 510 / math.Sqrt(t)
	}
	return 48 + 96*math.Exp(-0.0278*t)
}

func mustModel(t *testing.T, id string) thermal.Model {
	t.Helper()
	m, err := thermal.Builtin(id)
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestPageDemoBasin walks through the review page against the demo basin:
// layer and model switches, the point read-out, a region drawn, saved,
// edited and deleted, a track profile, a map export, and a bad file.
func TestPageDemoBasin(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	b := newBrowser(t)
	bb := collectionBBox(t, ts)
	w, s, e, n := bb[0], bb[1], bb[2], bb[3]

	// 1. Load: the page draws the default layer and sets the ready marker.
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	if got := eval[string](b, `document.body.dataset.dataset`); got != ts.DatasetID {
		t.Fatalf("page shows dataset %q, want %q", got, ts.DatasetID)
	}
	if !strings.Contains(eval[string](b, `document.getElementById("legend").textContent`), "shallower than the model") {
		t.Errorf("the residual legend does not state the sign convention")
	}
	if !strings.Contains(eval[string](b, `document.getElementById("caution").textContent`), "not for navigation") {
		t.Errorf("the caution is missing from the page")
	}
	tiles := eval[int](b, `document.querySelectorAll(".data-tiles img.leaflet-tile-loaded").length`)
	if tiles == 0 {
		t.Errorf("no data tiles loaded")
	}
	b.shot("01-residual-depth-gdh1")

	// 2. Switch the layer, then the model: each redraws and sets the marker again.
	seq := b.readySeq()
	b.choose("layer-select", "seafloor_age")
	b.waitReadyAfter(seq)
	if src := eval[string](b, `document.querySelector(".data-tiles img").src`); !strings.Contains(src, "/seafloor_age/") {
		t.Errorf("after the layer switch the tiles are %s", src)
	}
	b.shot("02-seafloor-age")
	seq = b.readySeq()
	b.choose("layer-select", "predicted_depth")
	b.waitReadyAfter(seq)
	seq = b.readySeq()
	b.choose("model-select", "halfspace")
	b.waitReadyAfter(seq)
	if src := eval[string](b, `document.querySelector(".data-tiles img").src`); !strings.Contains(src, "/predicted_depth/") || !strings.Contains(src, "model=halfspace") {
		t.Errorf("after the model switch the tiles are %s", src)
	}
	b.shot("03-predicted-depth-halfspace")

	// 3a. Hovering the map fills the read-out without pinning a point.
	hx0, hy0 := b.screenXY(w+0.4*(e-w), s+0.5*(n-s))
	b.do(5*time.Second, chromedp.MouseEvent(chromedp.MouseMoved, hx0-5, hy0), chromedp.MouseEvent(chromedp.MouseMoved, hx0, hy0))
	b.waitFor("the hover read-out", `(() => { const r = document.getElementById("readout"); return r.dataset.state === "done" && r.dataset.pinned !== "true" && r.querySelector('td[data-param="seafloor_age"]').dataset.value !== ""; })()`, 10*time.Second)

	// 3. Click the map: the read-out shows the values at that point. Try a
	// few points until one has data (the basin has land-free margins, but
	// its edge cells may be empty).
	var age float64
	var clickLon, clickLat float64
	for _, f := range [][2]float64{{0.3, 0.6}, {0.7, 0.4}, {0.5, 0.5}, {0.25, 0.25}, {0.75, 0.75}} {
		x, y := b.screenXY(w+f[0]*(e-w), s+f[1]*(n-s))
		clickLon, clickLat = b.lonLatAt(x, y)
		b.clickXY(x, y)
		b.waitFor("the read-out", fmt.Sprintf(`(() => { const r = document.getElementById("readout"); return r.dataset.state === "done" && r.dataset.pinned === "true" && Math.abs(Number(r.dataset.lon) - %g) < 0.05; })()`, clickLon), 20*time.Second)
		age = b.value(`#readout td[data-param="seafloor_age"]`)
		if !math.IsNaN(age) && age > 0 {
			break
		}
	}
	if math.IsNaN(age) || age <= 0 {
		t.Fatalf("no clicked point had a seafloor age")
	}
	px := b.degreesPerPixel()
	gotLon := eval[float64](b, `Number(document.getElementById("readout").dataset.lon)`)
	gotLat := eval[float64](b, `Number(document.getElementById("readout").dataset.lat)`)
	hs := mustModel(t, "halfspace")
	predHS := b.value(`#readout td[data-param="predicted_depth"]`)
	heatHS := b.value(`#readout td[data-param="heat_flow"]`)
	observed := b.value(`#readout td[data-param="observed_depth"]`)
	corrected := b.value(`#readout td[data-param="corrected_depth"]`)
	residual := b.value(`#readout td[data-param="residual_depth"]`)
	t.Logf("read-out at %.4f, %.4f: age %.3f Ma, observed %.1f m, corrected %.1f m, predicted (half-space) %.1f m, residual %.1f m, heat flow %.2f mW/m²",
		gotLon, gotLat, age, observed, corrected, predHS, residual, heatHS)
	b.shot("04-readout-halfspace")
	runChecks(t, []check{
		{"click longitude", gotLon, clickLon, px, "the map point under the clicked pixel; one pixel of tolerance"},
		{"click latitude", gotLat, clickLat, px, "the map point under the clicked pixel; one pixel of tolerance"},
		{"half-space depth vs thermal package", predHS, hs.DepthM(age), 2, "thermal.Builtin(halfspace).DepthM at the read-out's age; 2 m allows the server's lookup table"},
		{"half-space depth vs closed form", predHS, halfSpaceDepthM(hs.Params(), age), 2, "Turcotte & Schubert 2002 half-space depth with the model's parameters"},
		{"half-space heat flow vs closed form", heatHS, halfSpaceHeatFlowMWm2(hs.Params(), age), 0.01 * halfSpaceHeatFlowMWm2(hs.Params(), age), "Turcotte & Schubert 2002 surface heat flow; 1 % allows the lookup table"},
		{"residual = predicted − corrected", residual, predHS - corrected, 0.5, "the definition of residual depth (positive = shallower than the model); 0.5 m for float32 grids"},
	})
	if corrected < observed-0.5 {
		t.Errorf("corrected depth %.1f m is shallower than observed %.1f m: unloading sediment deepens basement (Sclater & Christie 1980)", corrected, observed)
	}

	// 4. Switch the model with a point pinned: the read-out follows at once.
	seq = b.readySeq()
	b.choose("model-select", "gdh1")
	b.waitReadyAfter(seq)
	b.waitFor("the read-out for GDH1", `document.getElementById("readout").dataset.state === "done" && document.getElementById("readout").dataset.model === "gdh1"`, 20*time.Second)
	gdh1 := mustModel(t, "gdh1")
	predG := b.value(`#readout td[data-param="predicted_depth"]`)
	heatG := b.value(`#readout td[data-param="heat_flow"]`)
	ageG := b.value(`#readout td[data-param="seafloor_age"]`)
	runChecks(t, []check{
		{"same age after the model switch", ageG, age, 1e-9, "seafloor age does not depend on the model"},
		{"GDH1 depth vs thermal package", predG, gdh1.DepthM(age), 2, "thermal.Builtin(gdh1).DepthM at the read-out's age"},
		{"GDH1 depth vs published fit", predG, gdh1FitDepthM(age), 60, "Stein & Stein 1992 closed-form fit; the fit departs from the series by tens of metres"},
		{"GDH1 heat flow vs thermal package", heatG, gdh1.HeatFlowMWm2(age), 0.01 * gdh1.HeatFlowMWm2(age), "thermal.Builtin(gdh1).HeatFlowMWm2; 1 % allows the lookup table"},
		{"GDH1 heat flow vs published fit", heatG, gdh1FitHeatFlowMWm2(age), 0.1 * gdh1FitHeatFlowMWm2(age), "Stein & Stein 1992 closed-form fit; 10 % (the fit is approximate near its 55 Ma join)"},
	})
	b.do(5*time.Second, chromedp.KeyEvent(kb.Escape)) // Escape releases the pinned point

	// 5. Draw a region, save it (the page asks for the token once), then
	// check it through the store.
	regionsBefore := eval[int](b, `Number(document.getElementById("regions").dataset.count || 0)`)
	seq = b.readySeq()
	b.choose("layer-select", "residual_depth")
	b.waitReadyAfter(seq)
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#region-draw")))
	cx, cy := b.screenXY(w+0.5*(e-w), s+0.5*(n-s))
	corners := [][2]float64{{cx - 120, cy - 90}, {cx + 110, cy - 100}, {cx + 130, cy + 80}, {cx - 100, cy + 95}} // whole pixels
	var want [][2]float64
	for _, c := range corners {
		lon, lat := b.lonLatAt(c[0], c[1])
		want = append(want, [2]float64{lon, lat})
	}
	for i, c := range corners {
		if i == len(corners)-1 {
			b.doubleClickXY(c[0], c[1])
		} else {
			b.clickXY(c[0], c[1])
		}
	}
	b.waitFor("the region name field", `document.getElementById("regions").dataset.mode === "naming"`, 10*time.Second)
	const regionName = "E2E region (SYNTHETIC)"
	b.do(10*time.Second,
		chromedp.SetValue(chromedp.CSS("#region-name"), regionName),
		chromedp.Click(chromedp.CSS("#region-save")),
	)
	b.waitFor("the token dialog", `document.getElementById("token-dialog").open`, 10*time.Second)
	b.shot("05-token-dialog")
	b.do(10*time.Second,
		chromedp.SendKeys(chromedp.CSS("#token-input"), ts.Token),
		chromedp.Click(chromedp.CSS(`#token-dialog button[value="save"]`)),
	)
	b.waitFor("the region to be saved", `document.body.dataset.regionSaved === "1"`, 20*time.Second)
	regions, err := ts.Store.ListRegions(context.Background(), store.RegionFilter{})
	if err != nil {
		t.Fatal(err)
	}
	var saved *store.Region
	for i := range regions {
		if regions[i].Name == regionName {
			saved = &regions[i]
		}
	}
	if saved == nil {
		t.Fatalf("the store has no region named %q (has %d regions)", regionName, len(regions))
	}
	if len(saved.Geometry) != 1 || len(saved.Geometry[0]) == 0 || len(saved.Geometry[0][0]) != len(want)+1 {
		t.Fatalf("saved geometry %v, want one ring of %d corners closed", saved.Geometry, len(want))
	}
	for i, c := range want {
		found := false
		for _, p := range saved.Geometry[0][0] {
			if math.Abs(p[0]-c[0]) < 1e-4 && math.Abs(p[1]-c[1]) < 1e-4 {
				found = true
			}
		}
		if !found {
			t.Errorf("corner %d (%.5f, %.5f) is not in the saved ring %v", i, c[0], c[1], saved.Geometry[0][0])
		}
	}
	if got := eval[string](b, `localStorage.getItem("ridgeflank.writeToken") || ""`); got != ts.Token {
		t.Errorf("the token was not kept in localStorage")
	}
	b.waitFor("the region statistics", `["done", "error"].includes(document.getElementById("region-stats").dataset.state)`, 30*time.Second)
	if st := eval[string](b, `document.getElementById("region-stats").dataset.state`); st != "done" {
		t.Errorf("region statistics: %s", eval[string](b, `document.getElementById("region-stats").textContent`))
	} else {
		if c := eval[int](b, `Number(document.getElementById("region-stats").dataset.count || 0)`); c <= 0 {
			t.Errorf("region statistics count %d, want > 0 (the region lies inside the basin)", c)
		}
		if bins := eval[int](b, `Number(document.getElementById("region-histogram").dataset.bins || 0)`); bins <= 0 {
			t.Errorf("the histogram has no bins")
		}
		// The page read the service's unit-suffixed statistics (mean_m, median_m, p05_m…):
		// no row says "no data", and the histogram is the service's, not binned in the browser.
		if txt := eval[string](b, `document.getElementById("region-stats-table").textContent`); strings.Contains(txt, "no data") {
			t.Errorf("region statistics table has a missing value: %s", txt)
		}
		if txt := eval[string](b, `document.getElementById("region-histogram").textContent`); strings.Contains(txt, "binned in the browser") {
			t.Errorf("the histogram was binned in the browser, so the service's was not read: %s", txt)
		}
	}
	links := eval[[]string](b, `[...document.querySelectorAll("#region-downloads a")].map(a => a.dataset.format)`)
	if strings.Join(links, ",") != "COG,netCDF,CSV,PNG" {
		t.Errorf("download links %v", links)
	}
	b.shot("06-region-saved")
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#region-histogram")))
	b.shot("06b-region-statistics")

	// 6. Edit the region: drag one corner and save; the store's version goes up.
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#region-edit")))
	handle := eval[[]float64](b, `(() => { const r = document.querySelector(".vertex-handle").getBoundingClientRect(); return [r.left + r.width / 2, r.top + r.height / 2]; })()`)
	hx, hy := handle[0], handle[1]
	drag := []chromedp.Action[chromedp.Void]{chromedp.MouseEvent(chromedp.MousePressed, hx, hy, chromedp.ButtonLeft)}
	for i := 1; i <= 8; i++ {
		drag = append(drag, chromedp.MouseEvent(chromedp.MouseMoved, hx-float64(5*i), hy-float64(4*i), chromedp.ButtonLeft))
	}
	drag = append(drag, chromedp.MouseEvent(chromedp.MouseReleased, hx-40, hy-32, chromedp.ButtonLeft))
	b.do(10*time.Second, drag...)
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#region-save")))
	b.waitFor("the edited region to be saved", `document.body.dataset.regionSaved === "2"`, 20*time.Second)
	edited, err := ts.Store.GetRegion(context.Background(), saved.ID)
	if err != nil {
		t.Fatal(err)
	}
	if edited.Version != saved.Version+1 {
		t.Errorf("after the edit the region's version is %d, want %d", edited.Version, saved.Version+1)
	}
	if fmt.Sprint(edited.Geometry) == fmt.Sprint(saved.Geometry) {
		t.Errorf("the edit did not change the stored geometry")
	}

	// 7. A track from a GeoJSON file: the profile is drawn and hovering it
	// marks the point and fills the profile read-out.
	trackPath := filepath.Join(t.TempDir(), "line.geojson")
	track := fmt.Sprintf(`{"type":"Feature","properties":{"name":"E2E line (SYNTHETIC)"},"geometry":{"type":"LineString","coordinates":[[%g,%g],[%g,%g],[%g,%g]]}}`,
		w+0.15*(e-w), s+0.2*(n-s), w+0.5*(e-w), s+0.55*(n-s), w+0.85*(e-w), s+0.75*(n-s))
	if err := os.WriteFile(trackPath, []byte(track), 0o644); err != nil {
		t.Fatal(err)
	}
	b.do(10*time.Second, chromedp.SetUploadFiles(chromedp.CSS("#track-file"), []string{trackPath}))
	b.waitFor("the profile", `["done", "error"].includes(document.getElementById("profile").dataset.state)`, 30*time.Second)
	if st := eval[string](b, `document.getElementById("profile").dataset.state`); st != "done" {
		t.Fatalf("profile: %s", eval[string](b, `document.getElementById("profile-status").textContent`))
	}
	points := eval[int](b, `Number(document.getElementById("profile-chart").dataset.points || 0)`)
	if points <= 0 {
		t.Fatalf("the profile has %d points", points)
	}
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#profile-chart")))
	over := eval[[]float64](b, `(() => { const r = document.querySelector("#profile-chart .u-over").getBoundingClientRect(); return [r.left, r.top, r.width, r.height]; })()`)
	mx, my := over[0]+0.5*over[2], over[1]+0.5*over[3]
	b.do(5*time.Second, chromedp.MouseEvent(chromedp.MouseMoved, mx-10, my), chromedp.MouseEvent(chromedp.MouseMoved, mx, my))
	b.waitFor("the profile read-out", `document.getElementById("profile-readout").dataset.index !== "" && document.getElementById("profile-readout").dataset.index !== undefined`, 10*time.Second)
	dist := b.value(`#profile-readout [data-param="distance"]`)
	pAge := b.value(`#profile-readout [data-param="seafloor_age"]`)
	pPred := b.value(`#profile-readout [data-param="predicted_depth"]`)
	mLon := eval[float64](b, `Number(document.getElementById("profile-readout").dataset.markerLon)`)
	mLat := eval[float64](b, `Number(document.getElementById("profile-readout").dataset.markerLat)`)
	t.Logf("profile: %d points; at the cursor %.1f km, %.4f, %.4f: age %.2f Ma, predicted %.1f m", points, dist, mLon, mLat, pAge, pPred)
	if !(dist > 0) {
		t.Errorf("distance at the chart's middle is %v, want > 0", dist)
	}
	if mLon < w || mLon > e || mLat < s || mLat > n {
		t.Errorf("the map marker (%.4f, %.4f) is outside the basin", mLon, mLat)
	}
	// The track lies wholly inside the basin, whose age grid has no gaps, so
	// the sample under the cursor must have an age (a NaN here would
	// otherwise skip the check below silently).
	if math.IsNaN(pAge) {
		t.Errorf("the profile read-out has no seafloor age at the chart's middle")
	}
	runChecks(t, []check{
		{"profile GDH1 depth vs thermal package", pPred, gdh1.DepthM(pAge), 2, "thermal.Builtin(gdh1).DepthM at the sample's age"},
	})
	b.shot("07-track-profile")

	// 7b. The same line as GPX 1.1 track points gives a profile too.
	gpxPath := filepath.Join(t.TempDir(), "line.gpx")
	gpx := fmt.Sprintf(`<?xml version="1.0" encoding="UTF-8"?>
<gpx version="1.1" creator="ridgeflank e2e (SYNTHETIC)" xmlns="http://www.topografix.com/GPX/1/1">
 <trk><name>E2E line (SYNTHETIC)</name><trkseg>
  <trkpt lat="%g" lon="%g"/><trkpt lat="%g" lon="%g"/>
 </trkseg></trk>
</gpx>`, s+0.3*(n-s), w+0.2*(e-w), s+0.7*(n-s), w+0.8*(e-w))
	if err := os.WriteFile(gpxPath, []byte(gpx), 0o644); err != nil {
		t.Fatal(err)
	}
	b.do(10*time.Second, chromedp.SetUploadFiles(chromedp.CSS("#track-file"), []string{gpxPath}))
	b.waitFor("the GPX profile", `document.getElementById("profile").dataset.state === "done" && document.getElementById("profile-status").textContent.startsWith("line.gpx")`, 30*time.Second)
	if p := eval[int](b, `Number(document.getElementById("profile-chart").dataset.points || 0)`); p <= 0 {
		t.Errorf("the GPX track's profile has %d points", p)
	}

	// 8. The map export is a PNG of the view with the footer.
	dataURL := eval[string](b, `window.ridgeflank.snapshotDataURL()`)
	raw, err := base64.StdEncoding.DecodeString(strings.TrimPrefix(dataURL, "data:image/png;base64,"))
	if err != nil {
		t.Fatalf("map export is not base64 PNG: %v", err)
	}
	img, err := png.Decode(bytes.NewReader(raw))
	if err != nil {
		t.Fatalf("map export is not a PNG: %v", err)
	}
	if err := os.WriteFile(filepath.Join(b.shots, "08-map-export.png"), raw, 0o644); err != nil {
		t.Error(err)
	}
	// At least 50 distinct colours where the colour-mapped layer is drawn
	// (threshold common practice, no source).
	if colours := distinctColours(img, image.Rect(0, 0, img.Bounds().Dx(), img.Bounds().Dy()-80)); colours < 50 {
		t.Errorf("the map export has %d distinct colours in the map area: the data layer is missing", colours)
	}

	// 9. A bad file gives the service's own message (problem details), not a
	// script error: the page parses no track file itself.
	badPath := filepath.Join(t.TempDir(), "bad.csv")
	badCSV := []byte("x1,x2\n1,2\n3,4\n")
	if err := os.WriteFile(badPath, badCSV, 0o644); err != nil {
		t.Fatal(err)
	}
	badProblem := postTrack(t, ts, badCSV, "text/csv")
	if badProblem.Status < 400 || badProblem.Detail == "" {
		t.Fatalf("the service accepted a CSV without coordinate columns (HTTP %d)", badProblem.Status)
	}
	b.do(10*time.Second, chromedp.SetUploadFiles(chromedp.CSS("#track-file"), []string{badPath}))
	b.waitFor("the service's message", fmt.Sprintf(`[...document.querySelectorAll("#messages .msg-error")].some(li => li.textContent.includes(%q))`, badProblem.Detail), 10*time.Second)

	// 10. Delete the region.
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](`window.confirm = () => true`))
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#region-delete")))
	b.waitFor("the region to leave the list", fmt.Sprintf(`document.getElementById("regions").dataset.count === "%d"`, regionsBefore), 10*time.Second)
	if _, err := ts.Store.GetRegion(context.Background(), saved.ID); err == nil {
		t.Errorf("the deleted region is still in the store")
	}
	b.shot("09-after-delete")

	// 11. A region outside the basin: choosing it must say there is no data
	// (or give the service's message), not break the page.
	far := fmt.Sprintf(`{"type":"Feature","properties":{"name":"Outside the basin (SYNTHETIC)"},"geometry":{"type":"Polygon","coordinates":[[[%g,%g],[%g,%g],[%g,%g],[%g,%g],[%g,%g]]]}}`,
		e+5, s, e+8, s, e+8, s+3, e+5, s+3, e+5, s)
	req, _ := http.NewRequest(http.MethodPost, ts.URL+"/api/regions", strings.NewReader(far))
	req.Header.Set("Content-Type", "application/geo+json")
	req.Header.Set("Authorization", "Bearer "+ts.Token)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	var farRegion struct {
		ID string `json:"id"`
	}
	_ = json.NewDecoder(res.Body).Decode(&farRegion)
	res.Body.Close()
	if res.StatusCode != http.StatusCreated || farRegion.ID == "" {
		t.Fatalf("creating a region through the API: HTTP %d", res.StatusCode)
	}
	b.do(10*time.Second, chromedp.Reload())
	b.waitReadyAfter(0)
	b.waitFor("the region list", fmt.Sprintf(`!!document.querySelector('.region-item[data-region-id=%q]')`, farRegion.ID), 10*time.Second)
	b.do(5*time.Second, chromedp.Click(chromedp.CSS(fmt.Sprintf(`.region-item[data-region-id=%q]`, farRegion.ID))))
	b.waitFor("the statistics of the empty region", `["done", "error"].includes(document.getElementById("region-stats").dataset.state)`, 20*time.Second)
	statsText := eval[string](b, `document.getElementById("region-stats").textContent`)
	t.Logf("region outside the basin: %s", strings.Join(strings.Fields(statsText), " "))
	if !strings.Contains(statsText, "no residual depth data") {
		t.Errorf("a region outside the basin does not say it has no data: %q", statsText)
	}
	b.shot("11-region-outside-basin")
	b.checkNoProblems()
}

// TestPageEmptyStore loads the page against a store with no dataset: it must
// say so, set the ready marker and throw nothing.
func TestPageEmptyStore(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, false)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	if got := eval[string](b, `document.body.dataset.readyReason || ""`); got != "no-dataset" {
		t.Errorf("ready reason %q, want no-dataset", got)
	}
	if txt := eval[string](b, `document.getElementById("dataset-info").textContent`); !strings.Contains(txt, "No dataset") {
		t.Errorf("dataset info %q does not say there is no dataset", txt)
	}
	x, y := b.screenXY(0, 0)
	b.clickXY(x, y)
	b.waitFor("the read-out's note", `document.getElementById("readout-status").textContent.includes("No dataset")`, 5*time.Second)

	// Draw a track with the keyboard only: focus the map, Space adds the
	// centre, arrow keys pan, Enter finishes. With no dataset the profile
	// says so instead of failing.
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#track-draw")))
	b.do(5*time.Second, chromedp.Focus(chromedp.CSS("#map")))
	b.do(10*time.Second,
		chromedp.KeyEvent(" "),
		chromedp.KeyEvent(kb.ArrowRight+kb.ArrowRight+kb.ArrowDown),
		chromedp.Sleep(400*time.Millisecond),
		chromedp.KeyEvent(" "),
	)
	if n := eval[string](b, `document.body.dataset.drawVertices || ""`); n != "2" {
		t.Errorf("keyboard drawing placed %q vertices, want 2", n)
	}
	b.do(5*time.Second, chromedp.KeyEvent(kb.Enter))
	b.waitFor("the empty profile", `document.getElementById("profile").dataset.state === "empty"`, 10*time.Second)
	if txt := eval[string](b, `document.getElementById("profile-status").textContent`); !strings.Contains(txt, "dataset") {
		t.Errorf("profile status %q does not say a dataset is needed", txt)
	}
	b.shot("10-empty-store")
	b.checkNoProblems()
}

// TestPageUploadAndDataset uploads a grid through the page, follows the
// import job to the end, makes a dataset of it and switches the map to it.
func TestPageUploadAndDataset(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	// A coarser basin than the demo's, so its age grid is new content.
	agePath := demoAgeFile(t, 0.25)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	// The token as if entered earlier: it lives in localStorage.
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`localStorage.setItem("ridgeflank.writeToken", %q)`, ts.Token)))

	b.do(10*time.Second,
		chromedp.Click(chromedp.CSS(`#imports details:first-of-type summary`)),
		chromedp.SetUploadFiles(chromedp.CSS("#upload-file"), []string{agePath}),
		chromedp.SetValue(chromedp.CSS("#upload-name"), "E2E coarse age (SYNTHETIC)"),
		chromedp.Click(chromedp.CSS(`#upload-form button[type="submit"]`)),
	)
	b.waitFor("the import job to end", `!!document.querySelector('#job-list li[data-state="succeeded"], #job-list li[data-state="failed"], #job-list li[data-state="cancelled"], #job-list li[data-state="error"]')`, 60*time.Second)
	if st := eval[string](b, `document.querySelector("#job-list li").dataset.state`); st != "succeeded" {
		t.Fatalf("import job: %s", eval[string](b, `document.querySelector("#job-list li").textContent`))
	}
	if v := eval[float64](b, `document.querySelector("#job-list progress").value`); v != 1 {
		t.Errorf("progress bar at %v after success, want 1", v)
	}
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#job-list")))
	b.shot("12-import-job")

	b.do(10*time.Second, chromedp.Click(chromedp.CSS(`#dataset-details summary`)))
	b.waitFor("the grid list", `[...document.querySelectorAll("#ds-age option")].some(o => o.textContent.includes("E2E coarse age"))`, 10*time.Second)
	gridID := eval[string](b, `[...document.querySelectorAll("#ds-age option")].find(o => o.textContent.includes("E2E coarse age")).value`)
	seq := b.readySeq()
	b.do(10*time.Second,
		chromedp.SetValue(chromedp.CSS("#ds-name"), "E2E coarse basin (SYNTHETIC)"),
		chromedp.SetValue(chromedp.CSS("#ds-age"), gridID),
		chromedp.Click(chromedp.CSS(`#dataset-form button[type="submit"]`)),
	)
	b.waitFor("the new dataset on the map", fmt.Sprintf(`document.body.dataset.dataset !== %q && document.body.dataset.ready === "true" && Number(document.body.dataset.readySeq) > %d`, ts.DatasetID, seq), 30*time.Second)
	newID := eval[string](b, `document.body.dataset.dataset`)
	ds, err := ts.Store.GetDataset(context.Background(), newID)
	if err != nil {
		t.Fatalf("the page shows dataset %q, which the store lacks: %v", newID, err)
	}
	if ds.AgeGridID != gridID || ds.Name != "E2E coarse basin (SYNTHETIC)" {
		t.Errorf("stored dataset %+v, want age grid %s and the name typed", ds, gridID)
	}
	// An age-only dataset has no residual depth: the page falls back to age.
	if got := eval[string](b, `document.body.dataset.layer`); got != "seafloor_age" {
		t.Errorf("layer %q on an age-only dataset, want seafloor_age", got)
	}
	// The layer choices are the new collection's parameters, nothing more.
	if eval[bool](b, `!!document.querySelector('#layer-select option[value="residual_depth"]')`) {
		t.Errorf("residual depth is still offered for an age-only dataset")
	}
	if got, want := eval[[]string](b, `[...document.querySelectorAll("#layer-select option")].map(o => o.value).sort()`), collectionParameterIDs(t, ts, newID); strings.Join(got, ",") != strings.Join(want, ",") {
		t.Errorf("layer choices %v, want the collection's parameters %v", got, want)
	}
	b.shot("13-new-dataset")
	b.checkNoProblems()
}

// distinctColours counts the distinct RGB colours in r (capped at 1000).
func distinctColours(img image.Image, r image.Rectangle) int {
	seen := map[[3]uint32]bool{}
	for y := r.Min.Y; y < r.Max.Y; y += 3 {
		for x := r.Min.X; x < r.Max.X; x += 3 {
			cr, cg, cb, _ := img.At(x, y).RGBA()
			seen[[3]uint32{cr >> 8, cg >> 8, cb >> 8}] = true
			if len(seen) >= 1000 {
				return len(seen)
			}
		}
	}
	return len(seen)
}

// demoAgeFile writes the files of a synthetic basin at cellDeg degrees (as `ridgeflank demo
// --out` does) and returns the path of its age GeoTIFF.
func demoAgeFile(t *testing.T, cellDeg float64) string {
	t.Helper()
	basin, err := demobasin.Generate(demobasin.Options{CellDeg: cellDeg})
	if err != nil {
		t.Fatal(err)
	}
	files, err := demobasin.WriteFiles(t.TempDir(), basin)
	if err != nil {
		t.Fatal(err)
	}
	for _, f := range files {
		if strings.HasSuffix(f, "-age.tif") {
			return f
		}
	}
	t.Fatalf("no age GeoTIFF among %v", files)
	return ""
}
