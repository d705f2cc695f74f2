package e2etest

import (
	"bytes"
	"encoding/json"
	"fmt"
	"image/png"
	"io"
	"math"
	"net/http"
	"net/url"
	"os"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ridgeflank/colour"
	"ridgeflank/geo"
	"ridgeflank/survey"
)

// postRegion stores a polygon region through the API and returns its id.
func postRegion(t *testing.T, ts *testServer, name string, w, s, e, n float64) string {
	t.Helper()
	body := fmt.Sprintf(`{"type":"Feature","properties":{"name":%q},"geometry":{"type":"Polygon","coordinates":[[[%g,%g],[%g,%g],[%g,%g],[%g,%g],[%g,%g]]]}}`,
		name, w, s, e, s, e, n, w, n, w, s)
	req, _ := http.NewRequest(http.MethodPost, ts.URL+"/api/regions", strings.NewReader(body))
	req.Header.Set("Content-Type", "application/geo+json")
	req.Header.Set("Authorization", "Bearer "+ts.Token)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var r struct {
		ID string `json:"id"`
	}
	_ = json.NewDecoder(res.Body).Decode(&r)
	if res.StatusCode != http.StatusCreated || r.ID == "" {
		t.Fatalf("creating region %s: HTTP %d", name, res.StatusCode)
	}
	return r.ID
}

// postPlan stores a survey plan through the API and returns its id.
func postPlan(t *testing.T, ts *testServer, p survey.Plan) string {
	t.Helper()
	body, _ := json.Marshal(p)
	req, _ := http.NewRequest(http.MethodPost, ts.URL+"/api/plans", bytes.NewReader(body))
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+ts.Token)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	raw, _ := io.ReadAll(res.Body)
	var got survey.Plan
	_ = json.Unmarshal(raw, &got)
	if res.StatusCode != http.StatusCreated || got.ID == "" {
		t.Fatalf("creating plan %s: HTTP %d: %s", p.Name, res.StatusCode, raw)
	}
	return got.ID
}

// regionMean asks the API for a parameter's area-weighted mean over a stored region.
func regionMean(t *testing.T, ts *testServer, region, param, model string) float64 {
	t.Helper()
	u := fmt.Sprintf("%s/api/collections/%s/locations/%s/statistics?parameter-name=%s&model=%s", ts.URL, ts.DatasetID, region, param, model)
	res, err := http.Get(u)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var body struct {
		Statistics map[string]map[string]any `json:"statistics"`
	}
	if err := json.NewDecoder(res.Body).Decode(&body); err != nil || res.StatusCode != 200 {
		t.Fatalf("%s: HTTP %d %v", u, res.StatusCode, err)
	}
	for k, v := range body.Statistics[param] {
		if strings.HasPrefix(k, "mean_") && !strings.HasPrefix(k, "mean_uncertainty") { // the mean itself, not its uncertainty
			if f, ok := v.(float64); ok {
				return f
			}
		}
	}
	t.Fatalf("%s: no mean in %v", u, body.Statistics[param])
	return math.NaN()
}

// legendRange reads the range the legend shows.
func legendRange(b *browser) (float64, float64) {
	r := eval[[]string](b, `[document.getElementById("legend").dataset.min || "", document.getElementById("legend").dataset.max || ""]`)
	lo, err1 := strconv.ParseFloat(r[0], 64)
	hi, err2 := strconv.ParseFloat(r[1], 64)
	if err1 != nil || err2 != nil {
		b.t.Fatalf("legend range %v", r)
	}
	return lo, hi
}

// tileRange reads range=min,max of the data tiles on the page ("" when there is none) and
// the range the service says it drew (its Ridgeflank-Colour-Scale header) for one tile.
func tileRange(b *browser) (query string, drawnMin, drawnMax float64) {
	src := eval[string](b, `document.querySelector(".data-tiles img.leaflet-tile-loaded")?.src || ""`)
	if src == "" {
		b.t.Fatalf("no loaded data tile")
	}
	u, err := url.Parse(src)
	if err != nil {
		b.t.Fatal(err)
	}
	h := eval[string](b, fmt.Sprintf(`fetch(%q).then((r) => r.headers.get("Ridgeflank-Colour-Scale") || "")`, src))
	drawnMin, drawnMax = math.NaN(), math.NaN()
	for _, part := range strings.Split(h, ";") {
		k, v, _ := strings.Cut(strings.TrimSpace(part), "=")
		f, _ := strconv.ParseFloat(v, 64)
		switch k {
		case "min":
			drawnMin = f
		case "max":
			drawnMax = f
		}
	}
	return u.Query().Get("range"), drawnMin, drawnMax
}

// TestPageColourRange: the residual map opens on the default ±1,500 m, labelled at both ends
// and at zero; "Fit to view" narrows it to the values in view, symmetric about zero, and the
// tiles are drawn by the service over that same range; a typed range does the same; the map
// background is the colour document's, clear of the zero colour.
func TestPageColourRange(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	b.waitFor("the page to restore its state", `document.body.dataset.restored === "true"`, 20*time.Second)

	// The residual scale's zero colour against the map's background as the page draws it:
	// WCAG 2.1 contrast ratio (L1 + 0.05)/(L2 + 0.05) with sRGB relative luminance (W3C WCAG
	// 2.1, "contrast ratio" and "relative luminance" definitions), at least 3:1 (SC 1.4.11).
	contrast := eval[float64](b, `(async () => {
		const doc = await (await fetch("/api/colour-scales")).json();
		const ramp = doc.ramps.find((r) => r.id === doc.bindings.find((x) => x.parameter === "residual_depth").ramp);
		const zero = ramp.stops.find((s) => s.position === 0.5).colour;
		const rgb = (c) => c.startsWith("#") ? [1, 3, 5].map((i) => parseInt(c.slice(i, i + 2), 16)) : c.match(/\d+/g).slice(0, 3).map(Number);
		const lum = (c) => { const [r, g, b] = rgb(c).map((v) => { v /= 255; return v <= 0.04045 ? v / 12.92 : ((v + 0.055) / 1.055) ** 2.4; }); return 0.2126 * r + 0.7152 * g + 0.0722 * b; };
		const bg = getComputedStyle(document.querySelector(".leaflet-container")).backgroundColor;
		const [a, c] = [lum(zero), lum(bg)].sort((x, y) => y - x);
		return (a + 0.05) / (c + 0.05);
	})()`)
	t.Logf("zero colour vs map background: %.2f:1", contrast)
	if !(contrast >= 3) { // NaN fails too
		t.Errorf("zero residual colour against the map background: contrast %.2f:1, want at least 3:1 (WCAG 2.1 SC 1.4.11)", contrast)
	}
	lo, hi := legendRange(b)
	if lo != -1500 || hi != 1500 {
		t.Errorf("default residual legend %g to %g, want the colour document's -1500 to 1500", lo, hi)
	}
	ticks := eval[[]string](b, `[...document.querySelectorAll("#legend .legend-ticks span")].map((s) => s.dataset.value)`)
	for _, want := range []string{"-1500", "0", "1500"} {
		if !strings.Contains(","+strings.Join(ticks, ",")+",", ","+want+",") {
			t.Errorf("legend labels %v lack %s", ticks, want)
		}
	}
	if txt := eval[string](b, `document.getElementById("legend").textContent`); !strings.Contains(txt, "(m)") || !strings.Contains(txt, "shallower than the model") || !strings.Contains(txt, "no data in the grid") {
		t.Errorf("legend %q lacks units, sign convention or the no-data entry", txt)
	}
	// The map background is the colour document's; its contrast with the zero colour is
	// WCAG 2.1's ratio (checked against WCAG's worked values in package colour).
	bg := eval[string](b, `getComputedStyle(document.getElementById("map")).backgroundColor`)
	if want := "rgb(102, 113, 125)"; bg != want { // colour.MapBackground #66717d
		t.Errorf("map background %s, want %s", bg, want)
	}
	rr, _ := colour.RampByID("residual")
	bgc, _ := colour.ParseHex(colour.MapBackground)
	if c := colour.ContrastRatio(rr.At(0.5), bgc); c < 3 {
		t.Errorf("zero colour against the page's background %.2f:1, want ≥ 3:1 (WCAG 2.1 SC 1.4.11)", c)
	}
	if q, _, _ := tileRange(b); q != "" {
		t.Errorf("default tiles carry range=%s", q)
	}
	b.shot("map-01-residual-default-range")

	// Fit to view.
	seq := b.readySeq()
	b.do(10*time.Second, chromedp.Click(chromedp.CSS("#range-fit")))
	b.waitFor("the fitted legend", `document.getElementById("legend").dataset.max !== "1500"`, 30*time.Second)
	b.waitReadyAfter(seq)
	lo, hi = legendRange(b)
	if !(hi > 0 && hi < 1500 && lo == -hi) {
		t.Errorf("fitted residual range %g to %g: want symmetric about 0 and narrower than ±1500", lo, hi)
	}
	// The demo's injected swell is +400 m at its centre (demobasin.SwellAmplitudeM), a small
	// part of the area: a 2–98 % range lies within ±1000 m and above ±50 m (the synthetic
	// residuals' spread, demobasin's noise and relief; common practice, no source).
	if hi > 1000 || hi < 50 {
		t.Errorf("fitted half-range %g m outside 50 to 1000 m", hi)
	}
	q, dmin, dmax := tileRange(b)
	if q != fmt.Sprintf("%g,%g", lo, hi) || dmin != lo || dmax != hi {
		t.Errorf("tiles range=%q drawn %g to %g; legend %g to %g", q, dmin, dmax, lo, hi)
	}
	if !strings.Contains(eval[string](b, `document.getElementById("legend-range").textContent`), "fitted to 2–98 %") {
		t.Errorf("legend does not say the range was fitted: %q", eval[string](b, `document.getElementById("legend-range").textContent`))
	}
	b.shot("map-02-residual-fitted-to-view")

	// A typed range, lopsided: drawn symmetric.
	seq = b.readySeq()
	b.do(10*time.Second,
		chromedp.SetValue(chromedp.CSS("#range-min"), "-100"),
		chromedp.SetValue(chromedp.CSS("#range-max"), "300"),
		chromedp.Click(chromedp.CSS("#range-apply")))
	b.waitReadyAfter(seq)
	if lo, hi = legendRange(b); lo != -300 || hi != 300 {
		t.Errorf("typed -100 to 300 on a diverging scale: legend %g to %g, want -300 to 300", lo, hi)
	}
	if q, dmin, dmax = tileRange(b); q != "-300,300" || dmin != -300 || dmax != 300 {
		t.Errorf("typed range: tiles range=%q drawn %g to %g", q, dmin, dmax)
	}
	// A bad one is refused with a message, the range kept.
	b.do(10*time.Second, chromedp.SetValue(chromedp.CSS("#range-min"), "9"), chromedp.SetValue(chromedp.CSS("#range-max"), "2"), chromedp.Click(chromedp.CSS("#range-apply")))
	if msg := eval[string](b, `document.getElementById("range-status").textContent`); !strings.Contains(msg, "less than") {
		t.Errorf("reversed range message %q", msg)
	}
	// Another layer starts on its own default.
	seq = b.readySeq()
	b.choose("layer-select", "heat_flow")
	b.waitReadyAfter(seq)
	if q, _, _ := tileRange(b); q != "" {
		t.Errorf("heat flow tiles kept the residual range %q", q)
	}
	b.checkNoProblems()
}

// TestPageURLState: the URL keeps dataset, layer, model, colour range, view, pinned point,
// region and survey plan; opening that URL in a fresh tab restores them, and the graticule labels stay clear of
// the zoom control.
func TestPageURLState(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	bb := collectionBBox(t, ts)
	w, s, e, n := bb[0], bb[1], bb[2], bb[3]
	region := postRegion(t, ts, "URL test box (SYNTHETIC)", w+0.3*(e-w), s+0.3*(n-s), w+0.5*(e-w), s+0.5*(n-s))
	plan := postPlan(t, ts, survey.Plan{Name: "URL test plan (SYNTHETIC)", Lines: []survey.Line{{Name: "L1", Waypoints: []geo.Waypoint{
		{Lon: w + 0.6*(e-w), Lat: s + 0.6*(n-s)}, {Lon: w + 0.7*(e-w), Lat: s + 0.7*(n-s)}}}}, Settings: survey.Settings{Dataset: ts.DatasetID}})
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	b.waitFor("the page to restore its state", `document.body.dataset.restored === "true"`, 20*time.Second)

	seq := b.readySeq()
	b.choose("layer-select", "predicted_depth")
	b.waitReadyAfter(seq)
	seq = b.readySeq()
	b.choose("model-select", "psm")
	b.waitReadyAfter(seq)
	b.do(10*time.Second, chromedp.SetValue(chromedp.CSS("#range-min"), "3000"), chromedp.SetValue(chromedp.CSS("#range-max"), "6000"), chromedp.Click(chromedp.CSS("#range-apply")))
	b.waitFor("the stored plans", fmt.Sprintf(`[...document.querySelectorAll("option")].some((o) => o.value === %q)`, plan), 10*time.Second)
	b.do(10*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`window.ridgeflank.plans.openStored(%q)`, plan), chromedp.EvalAwaitPromise))
	b.do(10*time.Second, chromedp.Click(chromedp.CSS(fmt.Sprintf(`.region-item[data-region-id=%q]`, region))))
	b.waitFor("the region's statistics", `document.getElementById("region-stats").dataset.state === "done"`, 30*time.Second)
	cLat, cLon := s+0.42*(n-s), w+0.37*(e-w)
	eval[bool](b, fmt.Sprintf(`(window.ridgeflank.map.setView([%g, %g], 6, {animate: false}), true)`, cLat, cLon))
	pLat, pLon := s+0.4*(n-s), w+0.4*(e-w)
	x, y := b.screenXY(pLon, pLat)
	b.clickXY(x, y)
	b.waitFor("the pinned read-out", `document.getElementById("readout").dataset.pinned === "true"`, 10*time.Second)
	b.waitFor("the URL to follow", `location.hash.includes("pin=")`, 5*time.Second)
	// A drawn track (two waypoints inside the basin) goes into the link too.
	tw := [][2]float64{{w + 0.2*(e-w), s + 0.8*(n-s)}, {w + 0.35*(e-w), s + 0.75*(n-s)}}
	b.do(30*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`window.ridgeflank.tracks.useWaypoints([[%g, %g], [%g, %g]], false)`, tw[0][0], tw[0][1], tw[1][0], tw[1][1]), chromedp.EvalAwaitPromise))
	b.waitFor("the URL to keep the track", `location.hash.includes("track=")`, 5*time.Second)
	// The profile panel under the map resizes it, which may move its centre: the link holds
	// the view as it is now.
	centre := eval[[]float64](b, `(() => { const c = window.ridgeflank.map.getCenter(); return [c.lat, c.lng]; })()`)
	cLat, cLon = centre[0], centre[1]
	link := eval[string](b, `location.href`)
	t.Logf("link: %s", link)
	for _, want := range []string{"dataset=" + ts.DatasetID, "layer=predicted_depth", "model=psm", "range=3000,6000", "view=", "pin=", "region=" + region, "plan=" + plan, "track="} {
		if !strings.Contains(link, want) {
			t.Errorf("the link %s lacks %s", link, want)
		}
	}
	b.shot("url-01-before")

	// A fresh tab on the link.
	b2 := newBrowser(t)
	b2.do(30*time.Second, chromedp.Navigate(link))
	b2.waitReadyAfter(0)
	b2.waitFor("the page to restore its state", `document.body.dataset.restored === "true"`, 30*time.Second)
	got := eval[map[string]any](b2, `(() => { const m = window.ridgeflank.map, c = m.getCenter(); return {dataset: document.body.dataset.dataset, layer: document.body.dataset.layer, model: document.body.dataset.model, lat: c.lat, lon: c.lng, zoom: m.getZoom(), pinned: document.getElementById("readout").dataset.pinned, plan: document.getElementById("plans").dataset.planId, region: document.getElementById("region-selected-name").textContent, min: document.getElementById("legend").dataset.min, max: document.getElementById("legend").dataset.max}; })()`)
	checks := []struct {
		what      string
		got, want any
	}{
		{"dataset", got["dataset"], ts.DatasetID},
		{"layer", got["layer"], "predicted_depth"},
		{"model", got["model"], "psm"},
		{"zoom", got["zoom"], 6.0},
		{"pinned", got["pinned"], "true"},
		{"region", got["region"], "URL test box (SYNTHETIC)"},
		{"plan", got["plan"], plan},
		{"range min", got["min"], "3000"},
		{"range max", got["max"], "6000"},
	}
	for _, c := range checks {
		if c.got != c.want {
			t.Errorf("restored %s = %v, want %v", c.what, c.got, c.want)
		}
	}
	b2.waitFor("the drawn track's profile", `document.getElementById("profile").dataset.state === "done" && document.getElementById("profile").dataset.waypoints === "2"`, 30*time.Second)
	// The centre to 1e-4° (the link keeps 5 decimals; common practice, no source).
	if math.Abs(got["lat"].(float64)-cLat) > 1e-4 || math.Abs(got["lon"].(float64)-cLon) > 1e-4 {
		t.Errorf("restored centre %v, %v, want %g, %g", got["lat"], got["lon"], cLat, cLon)
	}
	if q, _, _ := tileRange(b2); q != "3000,6000" {
		t.Errorf("restored tiles range=%q, want 3000,6000", q)
	}
	// Graticule labels clear of the zoom control.
	overlaps := eval[int](b2, `(() => { const z = document.querySelector(".leaflet-control-zoom").getBoundingClientRect(); return [...document.querySelectorAll(".grat-label")].filter((l) => { const r = l.getBoundingClientRect(); return r.left < z.right && r.right > z.left && r.top < z.bottom && r.bottom > z.top; }).length; })()`)
	if overlaps != 0 {
		t.Errorf("%d graticule labels lie under the zoom control", overlaps)
	}
	b2.shot("url-02-restored")
	b.checkNoProblems()
	b2.checkNoProblems()
}

// TestPageStatisticsFollowLayer: a region's statistics are those of the layer on the map,
// with its histogram, and a side-by-side table of the cooling models whose means are the API's.
func TestPageStatisticsFollowLayer(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	bb := collectionBBox(t, ts)
	w, s, e, n := bb[0], bb[1], bb[2], bb[3]
	region := postRegion(t, ts, "Statistics box (SYNTHETIC)", w+0.2*(e-w), s+0.2*(n-s), w+0.45*(e-w), s+0.45*(n-s))
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/#region="+region))
	b.waitReadyAfter(0)
	b.waitFor("the region's statistics", `document.getElementById("region-stats").dataset.state === "done" && document.getElementById("region-stats").dataset.parameter === "residual_depth"`, 30*time.Second)
	seq := b.readySeq()
	b.choose("layer-select", "heat_flow")
	b.waitReadyAfter(seq)
	b.waitFor("heat-flow statistics", `document.getElementById("region-stats").dataset.parameter === "heat_flow" && document.getElementById("region-stats").dataset.state === "done" && !!document.getElementById("region-compare-table")`, 30*time.Second)
	if title := eval[string](b, `document.getElementById("region-stats-title").textContent`); !strings.Contains(strings.ToLower(title), "heat flow") {
		t.Errorf("statistics title %q does not name heat flow", title)
	}
	if bins := eval[string](b, `document.getElementById("region-histogram").dataset.bins || ""`); bins == "" || bins == "0" {
		t.Errorf("no histogram bins (%q)", bins)
	}
	if txt := eval[string](b, `document.getElementById("region-stats").textContent`); !strings.Contains(txt, "mW") {
		t.Errorf("heat-flow statistics without their unit: %q", strings.Join(strings.Fields(txt), " "))
	}
	rows := eval[map[string]float64](b, `Object.fromEntries([...document.querySelectorAll("#region-compare-table tr[data-model]")].map((tr) => [tr.dataset.model, Number(tr.querySelector("td").dataset.value)]))`)
	for _, m := range []string{"psm", "gdh1", "halfspace"} {
		v, ok := rows[m]
		if !ok {
			t.Errorf("model comparison lacks %s: %v", m, rows)
			continue
		}
		// Against the API's own answer for the same region and model (1e-9 relative: the
		// page shows the number it was sent).
		if want := regionMean(t, ts, region, "heat_flow", m); math.Abs(v-want) > 1e-9*math.Abs(want) {
			t.Errorf("%s mean heat flow on the page %g, API %g", m, v, want)
		}
	}
	if rows["psm"] == rows["halfspace"] {
		t.Errorf("PSM and half-space give the same mean heat flow %g", rows["psm"])
	}
	b.shot("stats-01-heat-flow-map")
	eval[bool](b, `(document.getElementById("region-stats").scrollIntoView(), true)`)
	b.shot("stats-02-heat-flow-by-model")
	b.checkNoProblems()
}

// TestPageNoTileSeam: tiles of one uniform colour (an age range far above every age, so all
// cells take the ramp's first colour) must meet without a visible line, at device-pixel ratios
// 1, 1.25 and 1.5. Every device pixel along the tile edges in view is compared with the tiles'
// interior colour (tolerance 6 of 255 per channel for resampling; common practice, no source).
func TestPageNoTileSeam(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	bb := collectionBBox(t, ts)
	w, s, e, n := bb[0], bb[1], bb[2], bb[3]
	for _, dpr := range []float64{1, 1.25, 1.5} {
		t.Run(fmt.Sprintf("dpr-%g", dpr), func(t *testing.T) {
			b := newBrowser(t)
			b.do(10*time.Second, chromedp.EmulateViewport(1400, 1000, chromedp.EmulateScale(dpr)))
			b.do(30*time.Second, chromedp.Navigate(ts.URL+"/#layer=seafloor_age&range=1000,1001&view=-30,-137,5"))
			b.waitReadyAfter(0)
			b.waitFor("the page to restore its state", `document.body.dataset.restored === "true"`, 20*time.Second)
			// Only the data tiles: no graticule, no overlays (the swell outline), no land.
			eval[bool](b, `(document.querySelectorAll(".leaflet-graticule-pane, .leaflet-overlay-pane").forEach((p) => (p.style.display = "none")), document.getElementById("land-toggle").checked && document.getElementById("land-toggle").click(), true)`)
			time.Sleep(300 * time.Millisecond)
			if top := eval[float64](b, `document.getElementById("map").getBoundingClientRect().top`); top != math.Round(top) {
				t.Errorf("the map starts at %g px, between pixels", top)
			}
			// Tile rectangles (CSS px) inside both the map and the dataset's extent.
			rects := eval[[][]float64](b, fmt.Sprintf(`(() => { const map = window.ridgeflank.map, m = map.getContainer().getBoundingClientRect();
				const nw = map.latLngToContainerPoint([%g, %g]), se = map.latLngToContainerPoint([%g, %g]);
				const d = [m.left + nw.x, m.top + nw.y, m.left + se.x, m.top + se.y];
				return [...document.querySelectorAll(".data-tiles img.leaflet-tile-loaded")].map((i) => { const r = i.getBoundingClientRect(); return [r.left, r.top, r.right, r.bottom]; })
					.filter((r) => r[0] >= Math.max(m.left, d[0]) && r[2] <= Math.min(m.right, d[2]) && r[1] >= Math.max(m.top, d[1]) && r[3] <= Math.min(m.bottom, d[3])); })()`, n, w, s, e))
			path := b.shot(fmt.Sprintf("seam-dpr-%g", dpr))
			raw, err := os.ReadFile(path)
			if err != nil {
				t.Fatal(err)
			}
			img, err := png.Decode(bytes.NewReader(raw))
			if err != nil {
				t.Fatal(err)
			}
			// The interior colour: the most common colour at the tiles' centres.
			count := map[[3]uint32]int{}
			for _, r := range rects {
				c := img.At(int((r[0]+r[2])/2*dpr), int((r[1]+r[3])/2*dpr))
				cr, cg, cb, _ := c.RGBA()
				count[[3]uint32{cr >> 8, cg >> 8, cb >> 8}]++
			}
			var ref [3]uint32
			for c, n := range count {
				if n > count[ref] {
					ref = c
				}
			}
			bad, checked := 0, 0
			var where []string
			differs := func(x, y int) bool {
				cr, cg, cb, _ := img.At(x, y).RGBA()
				d := func(a, b uint32) bool { return math.Abs(float64(a>>8)-float64(b)) > 6 }
				if d(cr, ref[0]) || d(cg, ref[1]) || d(cb, ref[2]) {
					if len(where) < 4 {
						where = append(where, fmt.Sprintf("(%d,%d) %02x%02x%02x", x, y, cr>>8, cg>>8, cb>>8))
					}
					return true
				}
				return false
			}
			// Edges shared by two tiles of the list: the right edge of one at the left of another.
			for _, a := range rects {
				for _, c := range rects {
					if a[2] == c[0] && a[1] == c[1] { // vertical edge
						x := a[2] * dpr
						for y := int(a[1]*dpr) + 2; y < int(a[3]*dpr)-2; y++ {
							for _, xi := range []int{int(math.Floor(x)) - 1, int(math.Floor(x)), int(math.Ceil(x))} {
								checked++
								if differs(xi, y) {
									bad++
								}
							}
						}
					}
					if a[3] == c[1] && a[0] == c[0] { // horizontal edge
						y := a[3] * dpr
						for x := int(a[0]*dpr) + 2; x < int(a[2]*dpr)-2; x++ {
							for _, yi := range []int{int(math.Floor(y)) - 1, int(math.Floor(y)), int(math.Ceil(y))} {
								checked++
								if differs(x, yi) {
									bad++
								}
							}
						}
					}
				}
			}
			if checked == 0 {
				t.Fatalf("no shared tile edges in view (%d tiles)", len(rects))
			}
			if bad > 0 {
				t.Errorf("%d of %d device pixels along tile edges differ from the tiles' colour %v, e.g. %v", bad, checked, ref, where)
			}
			t.Logf("dpr %g: %d tiles, %d edge pixels checked, colour %v", dpr, len(rects), checked, ref)
			b.checkNoProblems()
		})
	}
}
