package e2etest

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ridgeflank/geo/gdal"
)

// typeLine makes a new plan line by typing its waypoints into the table, as
// a planner does: each (latitude, longitude) pair goes into the blank last
// row, as written (decimal degrees or degrees and decimal minutes).
func (b *browser) typeLine(pairs [][2]string) {
	b.t.Helper()
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-line-type")))
	for i, p := range pairs {
		b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`(() => {
			const row = document.querySelector("#plan-waypoints tr.new-row");
			for (const [cls, v] of [["wp-lat", %q], ["wp-lon", %q]]) {
				const input = row.querySelector("input." + cls);
				input.value = v;
				input.dispatchEvent(new Event("change", {bubbles: true}));
			}
		})()`, p[0], p[1])))
		b.waitFor(fmt.Sprintf("waypoint %d to be taken", i+1), fmt.Sprintf(`document.querySelectorAll("#plan-waypoints tbody tr:not(.new-row)").length === %d`, i+1), 5*time.Second)
	}
}

// planWaypoints reads the waypoints of plan line i from the page: [lon, lat].
func (b *browser) planWaypoints(i int) [][]float64 {
	return eval[[][]float64](b, fmt.Sprintf(`window.ridgeflank.plans.plan.lines[%d].waypoints.map(w => [w.lon, w.lat])`, i))
}

// trajectorySamples asks the service (as the page's track panel does) for the positions it
// samples along the waypoints [lon, lat], spacingKm apart.
func trajectorySamples(t *testing.T, ts *testServer, wps [][]float64, spacingKm float64) [][]float64 {
	t.Helper()
	line, _ := json.Marshal(map[string]any{"type": "LineString", "coordinates": wps})
	url := fmt.Sprintf("%s/api/collections/%s/trajectory?spacing-km=%g", ts.URL, ts.DatasetID, spacingKm)
	req, _ := http.NewRequest(http.MethodPost, url, bytes.NewReader(line))
	req.Header.Set("Content-Type", "application/geo+json")
	req.Header.Set("Accept", "application/vnd.cov+json")
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(res.Body)
	res.Body.Close()
	var ans trajectoryAnswer
	if err := json.Unmarshal(body, &ans); err != nil || res.StatusCode != http.StatusOK {
		t.Fatalf("trajectory: HTTP %d, %v: %.300s", res.StatusCode, err, body)
	}
	return ans.Domain.Axes.Composite.Values
}

// screenDistanceJS measures, in the page, how far the given positions [lon, lat] lie from the
// plan's lines as drawn: each position is projected to the map's pixel plane at the current
// zoom (unrounded) and its distance taken to the nearest segment of the polylines' drawn parts
// (Leaflet's _parts: the whole-pixel points handed to the canvas after clipping). Only
// positions at least 10 px inside the map are measured. It also measures the distance to the
// straight Web-Mercator legs between the waypoints, which is what a page drawing no geodesics
// would show. Answers [worst drawn px, positions measured, segments, worst straight px].
const screenDistanceJS = `(async (samples, wps) => {
	await new Promise((r) => requestAnimationFrame(() => requestAnimationFrame(r)));
	const m = window.ridgeflank.map;
	const z = m.getZoom();
	const origin = m.getPixelOrigin();
	const size = m.getSize();
	const layerPt = ([lon, lat]) => m.project([lat, lon], z).subtract(origin);
	const segs = [];
	for (const s of window.ridgeflank.plans.planMap.shapes) for (const part of s._parts || []) for (let i = 1; i < part.length; i++) segs.push([part[i - 1], part[i]]);
	const straight = [];
	for (let i = 1; i < wps.length; i++) straight.push([layerPt(wps[i - 1]), layerPt(wps[i])]);
	const dist = (p, a, b) => {
		const dx = b.x - a.x, dy = b.y - a.y, l2 = dx * dx + dy * dy;
		const t = l2 > 0 ? Math.max(0, Math.min(1, ((p.x - a.x) * dx + (p.y - a.y) * dy) / l2)) : 0;
		return Math.hypot(p.x - a.x - t * dx, p.y - a.y - t * dy);
	};
	let worst = 0, worstStraight = 0, n = 0;
	for (const s of samples) {
		const p = layerPt(s);
		const c = m.layerPointToContainerPoint(p);
		if (c.x < 10 || c.y < 10 || c.x > size.x - 10 || c.y > size.y - 10) continue;
		n++;
		let best = Infinity;
		for (const [a, b] of segs) best = Math.min(best, dist(p, a, b));
		worst = Math.max(worst, best);
		let bestS = Infinity;
		for (const [a, b] of straight) bestS = Math.min(bestS, dist(p, a, b));
		worstStraight = Math.max(worstStraight, bestS);
	}
	return [worst, n, segs.length, worstStraight];
})`

// TestPageGeodesicLineMatchesSamples types two long survey lines (two legs and 3,800 km in
// degrees and decimal minutes; one leg of 2,900 km across the antimeridian) and checks at
// several zooms that every position the service samples along them (the trajectory query,
// WGS84 geodesics through PROJ) lies within one screen pixel of the line the page draws, and
// that the straight Mercator legs would not.
func TestPageGeodesicLineMatchesSamples(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)

	b.typeLine([][2]string{{"38°00.000′S", "152°00.000′W"}, {"-26.5", "-131.25"}, {"20 15.5 S", "118 30.0 W"}})
	wps := b.planWaypoints(0)
	want := [][]float64{{-152, -38}, {-131.25, -26.5}, {-(118 + 30.0/60), -(20 + 15.5/60)}}
	for i, w := range want {
		runChecks(t, []check{
			{fmt.Sprintf("typed waypoint %d longitude", i+1), wps[i][0], w[0], 1e-12, "degrees and decimal minutes, d + m/60 (a minute of arc is 1/60 degree)"},
			{fmt.Sprintf("typed waypoint %d latitude", i+1), wps[i][1], w[1], 1e-12, "degrees and decimal minutes, d + m/60"},
		})
	}
	g := gdal.WGS84()
	// The second line: one leg of 2,900 km from 40°S 165°E at azimuth 70° (its end by PROJ's
	// direct solution), across the antimeridian, typed in decimal degrees.
	endLat, endLon := g.Direct(-40, 165, 70, 2900e3)
	endLon = math.Remainder(endLon, 360)
	b.typeLine([][2]string{{"-40", "165"}, {fmt.Sprintf("%.7f", endLat), fmt.Sprintf("%.7f", endLon)}})

	lines := []struct {
		name  string
		index int
		views []struct {
			zoom int
			at   float64 // where along the samples the view is centred (fraction); < 0: at the antimeridian
		}
	}{
		{"two legs", 0, []struct {
			zoom int
			at   float64
		}{{3, 0.5}, {4, 0.3}, {5, 0.7}, {6, 0.25}, {7, 0.5}, {9, 0.8}, {11, 0.4}, {12, 0.6}}},
		{"2,900 km across the antimeridian", 1, []struct {
			zoom int
			at   float64
		}{{3, 0.5}, {5, -1}, {6, 0.2}, {8, -1}, {10, 0.9}, {12, -1}}},
	}
	for _, line := range lines {
		wps := b.planWaypoints(line.index)
		samples := trajectorySamples(t, ts, wps, 2)
		total := 0.0
		for i := 1; i < len(wps); i++ {
			s, _, _ := g.Inverse(wps[i-1][1], wps[i-1][0], wps[i][1], wps[i][0])
			total += s / 1000
		}
		t.Logf("%s: %.1f km (WGS84, PROJ), %d samples from the service", line.name, total, len(samples))
		if len(samples) < 1000 {
			t.Fatalf("the service sampled %d positions along %.0f km at 2 km spacing", len(samples), total)
		}
		crossing := -1 // the first sample after the line crosses ±180
		for i := 1; i < len(samples); i++ {
			if math.Abs(samples[i][0]-samples[i-1][0]) > 180 {
				crossing = i
				break
			}
		}
		samplesJSON, _ := json.Marshal(samples)
		wpsJSON, _ := json.Marshal(wps)
		for _, v := range line.views {
			t.Run(fmt.Sprintf("%s at zoom %d", line.name, v.zoom), func(t *testing.T) {
				c := samples[int(math.Max(0, v.at)*float64(len(samples)-1))]
				if v.at < 0 {
					if crossing < 0 {
						t.Fatalf("the samples do not cross the antimeridian")
					}
					c = samples[crossing-1] // the last sample east of 180°: the view reaches the map's edge
				}
				b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`window.ridgeflank.map.setView([%g, %g], %d, {animate: false}); void 0`, c[1], c[0], v.zoom)))
				r := eval[[]float64](b, fmt.Sprintf(`%s(%s, %s)`, screenDistanceJS, samplesJSON, wpsJSON))
				worst, n, segs, straight := r[0], int(r[1]), int(r[2]), r[3]
				t.Logf("zoom %d: %d samples in view, %d drawn segments, worst %.3f px from the drawn line; straight legs %.1f px", v.zoom, n, segs, worst, straight)
				if n < 3 {
					t.Fatalf("only %d samples in view", n)
				}
				if worst > 1 {
					t.Errorf("a sampled position lies %.3f px from the drawn line (want ≤ 1 px: the drawn line is the sampled line)", worst)
				}
				if v.zoom <= 5 && straight <= 1 {
					t.Errorf("the straight Mercator legs are within %.3f px of the samples: the check would not see a straight drawing", straight)
				}
			})
			b.shot(fmt.Sprintf("20-geodesic-line-%d-zoom-%02d", line.index, v.zoom))
		}
	}
	b.checkNoProblems()
}

// TestPagePlanEditing draws a plan line with the mouse and edits it on the map: drag a vertex,
// insert one at a leg's midpoint handle, delete one, then retype a position in the table.
func TestPagePlanEditing(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	b := newBrowser(t)
	bb := collectionBBox(t, ts)
	w, s, e, n := bb[0], bb[1], bb[2], bb[3]
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	px := b.degreesPerPixel()

	// 1. Draw: three clicks, the last a double-click.
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-line-draw")))
	cx, cy := b.screenXY(w+0.5*(e-w), s+0.5*(n-s))
	clicks := [][2]float64{{cx - 200, cy + 120}, {cx, cy - 60}, {cx + 220, cy + 90}}
	var clicked [][2]float64
	for i, c := range clicks {
		lon, lat := b.lonLatAt(c[0], c[1])
		clicked = append(clicked, [2]float64{lon, lat})
		if i == len(clicks)-1 {
			b.doubleClickXY(c[0], c[1])
		} else {
			b.clickXY(c[0], c[1])
		}
	}
	b.waitFor("the drawn plan line", `document.getElementById("plans").dataset.lines === "1"`, 10*time.Second)
	wps := b.planWaypoints(0)
	if len(wps) != 3 {
		t.Fatalf("the drawn line has %d waypoints, want 3", len(wps))
	}
	for i, c := range clicked {
		runChecks(t, []check{
			{fmt.Sprintf("drawn waypoint %d longitude", i+1), wps[i][0], c[0], px, "the map point under the clicked pixel; one pixel"},
			{fmt.Sprintf("drawn waypoint %d latitude", i+1), wps[i][1], c[1], px, "the map point under the clicked pixel; one pixel"},
		})
	}
	b.shot("21-plan-line-drawn")

	// handleXY is the viewport centre of a handle (vertex or midpoint) on the map.
	handleXY := func(kind string, k int) (float64, float64) {
		xy := eval[[]float64](b, fmt.Sprintf(`(() => { const h = window.ridgeflank.plans.planMap.handles.getLayers().find(l => l.%s === %d); const r = h._icon.getBoundingClientRect(); return [r.left + r.width / 2, r.top + r.height / 2]; })()`, kind, k))
		return xy[0], xy[1]
	}
	edits := func() int { return eval[int](b, `Number(document.body.dataset.planEdits || 0)`) }

	// 2. Drag the middle vertex 80 px right and 50 px down.
	hx, hy := handleXY("planVertex", 1)
	tx, ty := hx+80, hy+50
	toLon, toLat := b.lonLatAt(tx, ty)
	before := edits()
	actions := []chromedp.Action[chromedp.Void]{chromedp.MouseEvent(chromedp.MouseMoved, hx, hy), chromedp.MouseEvent(chromedp.MousePressed, hx, hy, chromedp.ButtonLeft)}
	for i := 1; i <= 10; i++ {
		actions = append(actions, chromedp.MouseEvent(chromedp.MouseMoved, hx+8*float64(i), hy+5*float64(i), chromedp.ButtonLeft))
	}
	actions = append(actions, chromedp.MouseEvent(chromedp.MouseReleased, tx, ty, chromedp.ButtonLeft))
	b.do(10*time.Second, actions...)
	b.waitFor("the drag to end", fmt.Sprintf(`Number(document.body.dataset.planEdits || 0) > %d`, before), 5*time.Second)
	wps = b.planWaypoints(0)
	runChecks(t, []check{
		{"dragged vertex longitude", wps[1][0], toLon, 2 * px, "the map point under the pixel the mouse was released at; two pixels (the grab point within the handle)"},
		{"dragged vertex latitude", wps[1][1], toLat, 2 * px, "the map point under the release pixel; two pixels"},
	})
	// The drawn line passes through the moved vertex.
	through := eval[bool](b, fmt.Sprintf(`window.ridgeflank.plans.planMap.shapes[0].getLatLngs().flat().some(p => Math.abs(p.lng - %g) < 1e-9 && Math.abs(p.lat - %g) < 1e-9)`, wps[1][0], wps[1][1]))
	if !through {
		t.Errorf("the drawn line does not pass through the moved vertex")
	}
	b.shot("22-plan-vertex-dragged")

	// 3. Insert: click the midpoint handle of the first leg. The new waypoint is the geodesic's
	// midpoint, checked against PROJ's WGS84 solution (half the inverse length along the
	// initial azimuth).
	g := gdal.WGS84()
	a, c := wps[0], wps[1]
	sAC, az, _ := g.Inverse(a[1], a[0], c[1], c[0])
	midLat, midLon := g.Direct(a[1], a[0], az, sAC/2)
	mx, my := handleXY("planMidpoint", 1)
	b.clickXY(mx, my)
	b.waitFor("the inserted vertex", `window.ridgeflank.plans.plan.lines[0].waypoints.length === 4`, 5*time.Second)
	wps = b.planWaypoints(0)
	runChecks(t, []check{
		{"inserted vertex longitude", wps[1][0], midLon, 1e-8, "the WGS84 geodesic midpoint by PROJ (Karney 2013)"},
		{"inserted vertex latitude", wps[1][1], midLat, 1e-8, "the WGS84 geodesic midpoint by PROJ (Karney 2013)"},
	})
	if rows := eval[int](b, `document.querySelectorAll("#plan-waypoints tbody tr:not(.new-row)").length`); rows != 4 {
		t.Errorf("the waypoint table has %d rows, want 4", rows)
	}

	// 4. Delete: right-click the third vertex (the dragged one).
	gone := wps[2]
	dx, dy := handleXY("planVertex", 2)
	b.do(5*time.Second, chromedp.MouseClickXY(dx, dy, chromedp.ButtonRight))
	b.waitFor("the deleted vertex", `window.ridgeflank.plans.plan.lines[0].waypoints.length === 3`, 5*time.Second)
	wps = b.planWaypoints(0)
	for _, p := range wps {
		if p[0] == gone[0] && p[1] == gone[1] {
			t.Errorf("the deleted vertex %v is still in the line %v", gone, wps)
		}
	}
	// A line keeps two waypoints: deleting down to two works, below does not.
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](`window.ridgeflank.plans.planMap.removeVertex(0, 0)`))
	if ok := eval[bool](b, `window.ridgeflank.plans.planMap.removeVertex(0, 0)`); ok {
		t.Errorf("a two-waypoint line lost a waypoint")
	}
	b.shot("23-plan-vertex-deleted")

	// 5. Type a position (degrees and decimal minutes) and a name in the table.
	latText := "24 30.250 S"
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`(() => {
		const row = document.querySelector('#plan-waypoints tbody tr[data-index="0"]');
		const name = row.querySelector("input.wp-name"); name.value = "QB-A (SYNTHETIC)"; name.dispatchEvent(new Event("change", {bubbles: true}));
		const row2 = document.querySelector('#plan-waypoints tbody tr[data-index="0"]');
		const lat = row2.querySelector("input.wp-lat"); lat.value = %q; lat.dispatchEvent(new Event("change", {bubbles: true}));
	})()`, latText)))
	got := eval[[]any](b, `(() => { const w = window.ridgeflank.plans.plan.lines[0].waypoints[0]; return [w.lat, w.name]; })()`)
	runChecks(t, []check{{"typed latitude", got[0].(float64), -(24 + 30.25/60), 1e-12, "d + m/60, south negative"}})
	if got[1] != "QB-A (SYNTHETIC)" {
		t.Errorf("waypoint name %v, want the typed one", got[1])
	}
	hLat := eval[float64](b, `window.ridgeflank.plans.planMap.handles.getLayers().find(l => l.planVertex === 0).getLatLng().lat`)
	runChecks(t, []check{{"handle follows the typed latitude", hLat, -(24 + 30.25/60), 1e-12, "d + m/60"}})
	// A bad position is refused with the reason, and the waypoint stays.
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](`(() => { const lat = document.querySelector('#plan-waypoints tbody tr[data-index="0"] input.wp-lat'); lat.value = "24 61.0 S"; lat.dispatchEvent(new Event("change", {bubbles: true})); })()`))
	if hint := eval[string](b, `document.getElementById("plan-hint").textContent`); !strings.Contains(hint, "below 60") {
		t.Errorf("a bad minute value gives the hint %q, want the reason (minutes below 60)", hint)
	}
	if lat := eval[float64](b, `window.ridgeflank.plans.plan.lines[0].waypoints[0].lat`); math.Abs(lat-(-(24 + 30.25/60))) > 1e-12 {
		t.Errorf("a refused position changed the waypoint to %g", lat)
	}
	// The leg list gives the WGS84 length of the leg (PROJ), to the 0.1 km shown.
	wps = b.planWaypoints(0)
	sKm, _, _ := g.Inverse(wps[0][1], wps[0][0], wps[1][1], wps[1][0])
	legText := eval[string](b, `document.querySelector("#plan-line-legs li").textContent`)
	if want := fmt.Sprintf("%.1f km", sKm/1000); !strings.Contains(strings.ReplaceAll(legText, ",", ""), want) {
		t.Errorf("leg list %q, want the WGS84 length %s (PROJ)", legText, want)
	}
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#plans")))
	b.shot("24-plan-typed")
	b.checkNoProblems()
}
