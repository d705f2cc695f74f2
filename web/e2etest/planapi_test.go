package e2etest

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ridgeflank/survey"
)

// getPlan reads a stored plan through the API.
func getPlan(t *testing.T, ts *testServer, id string) survey.Plan {
	t.Helper()
	res, err := http.Get(ts.URL + "/api/plans/" + id)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var p survey.Plan
	if err := json.NewDecoder(res.Body).Decode(&p); err != nil || res.StatusCode != http.StatusOK {
		t.Fatalf("GET plan %s: HTTP %d, %v", id, res.StatusCode, err)
	}
	return p
}

// TestPagePlanSaveAndCheck lists and opens the demo basin's stored plan, checks it and compares
// the panel with the service's own answer to the same body (caution, legs, hazards on the list
// and the map, hovering the profile marking the sample on the map, the CSV download, stale
// after an edit), then saves a typed plan (POST), edits and saves it again (PUT with
// If-Match), and is refused when the plan changed elsewhere in between (412).
func TestPagePlanSaveAndCheck(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`localStorage.setItem("ridgeflank.writeToken", %q)`, ts.Token)))

	// 1. The stored plans: the demo basin installs one; open it.
	b.waitFor("the plan list", `Number(document.getElementById("plans").dataset.stored || 0) >= 1`, 10*time.Second)
	id := eval[string](b, `document.getElementById("plan-stored").value`)
	stored := getPlan(t, ts, id)
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-open")))
	b.waitFor("the opened plan", fmt.Sprintf(`document.getElementById("plans").dataset.planId === %q`, id), 10*time.Second)
	if n := eval[int](b, `Number(document.getElementById("plans").dataset.lines)`); n != len(stored.Lines) {
		t.Errorf("the opened plan has %d lines, the stored one %d", n, len(stored.Lines))
	}
	for i, l := range stored.Lines {
		got := b.planWaypoints(i)
		for k, w := range l.Waypoints {
			if got[k][0] != w.Lon || got[k][1] != w.Lat {
				t.Errorf("line %d waypoint %d is %v, stored (%g, %g)", i, k, got[k], w.Lon, w.Lat)
			}
		}
	}

	// 2. Check it; the panel shows the service's answer to the body the page sent.
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-check")))
	b.waitFor("the check panel", `["done", "error"].includes(document.getElementById("plan-check-panel").dataset.state)`, 60*time.Second)
	if st := eval[string](b, `document.getElementById("plan-check-panel").dataset.state`); st != "done" {
		t.Fatalf("check panel: %s", eval[string](b, `document.getElementById("plan-check-status").textContent`))
	}
	sent := eval[string](b, `JSON.stringify(window.ridgeflank.plans.body())`)
	res, err := http.Post(ts.URL+"/api/plans/check?f=json", "application/json", strings.NewReader(sent))
	if err != nil {
		t.Fatal(err)
	}
	raw, _ := io.ReadAll(res.Body)
	res.Body.Close()
	var c struct {
		Caution string `json:"caution"`
		Lines   []struct {
			Legs []struct {
				LengthKm float64 `json:"length_km"`
			} `json:"legs"`
			Samples struct {
				Lon        []float64 `json:"lon"`
				Lat        []float64 `json:"lat"`
				DistanceKm []float64 `json:"distance_km"`
			} `json:"samples"`
		} `json:"lines"`
		Hazards []json.RawMessage `json:"hazards"`
	}
	if err := json.Unmarshal(raw, &c); err != nil || res.StatusCode != http.StatusOK {
		t.Fatalf("check through the API: HTTP %d, %v: %.300s", res.StatusCode, err, raw)
	}
	if got := eval[string](b, `document.getElementById("plan-caution").textContent`); got != c.Caution || c.Caution == "" {
		t.Errorf("panel caution %q, the answer's %q", got, c.Caution)
	}
	rows := eval[[]string](b, `[...document.querySelectorAll("#plan-legs-table tbody tr")].map(r => r.cells[1].textContent.replaceAll(",", ""))`)
	if len(rows) != len(c.Lines[0].Legs) {
		t.Fatalf("legs table %d rows, the answer %d legs", len(rows), len(c.Lines[0].Legs))
	}
	for i, l := range c.Lines[0].Legs {
		if rows[i] != fmt.Sprintf("%.2f", l.LengthKm) {
			t.Errorf("leg %d: %s km shown, %.4f km answered", i, rows[i], l.LengthKm)
		}
	}
	if n := eval[int](b, `document.querySelectorAll("#plan-hazards li[data-kind]").length`); n != len(c.Hazards) {
		t.Errorf("%d hazards listed, the answer has %d", n, len(c.Hazards))
	}
	if n := eval[int](b, `window.ridgeflank.plans.checkLayer.getLayers().filter(l => l.getRadius && l.options.className === "plan-hazard").length`); n != len(c.Hazards) {
		t.Errorf("%d hazard marks on the map, the answer has %d", n, len(c.Hazards))
	}
	if c.Caution == "" || eval[bool](b, `(() => { const r = document.getElementById("plan-caution").getBoundingClientRect(); return r.width > 0 && r.height > 0; })()`) != true {
		t.Errorf("the caution is not on screen")
	}

	// Hover the profile at 40 % of its width: the sample under the cursor is marked on the map.
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#plan-chart")))
	xy := eval[[]float64](b, `(() => { const r = document.querySelector("#plan-chart .u-over").getBoundingClientRect(); return [r.left + 0.4 * r.width, r.top + 0.5 * r.height]; })()`)
	b.do(5*time.Second, chromedp.MouseEvent(chromedp.MouseMoved, xy[0]-3, xy[1]), chromedp.MouseEvent(chromedp.MouseMoved, xy[0], xy[1]))
	b.waitFor("the hover mark", `(document.getElementById("plan-readout").dataset.index || "") !== ""`, 5*time.Second)
	idx := eval[int](b, `Number(document.getElementById("plan-readout").dataset.index)`)
	mark := eval[[]float64](b, `(() => { const p = window.ridgeflank.plans.hoverMarker.getLatLng(); return [p.lng, p.lat, window.ridgeflank.map.hasLayer(window.ridgeflank.plans.hoverMarker) ? 1 : 0]; })()`)
	s := c.Lines[0].Samples
	runChecks(t, []check{
		{"hover mark longitude", mark[0], s.Lon[idx], 1e-9, "the answer's sample under the cursor"},
		{"hover mark latitude", mark[1], s.Lat[idx], 1e-9, "the answer's sample under the cursor"},
		{"hover mark on the map", mark[2], 1, 0, "the marker is shown"},
		{"hovered sample near 40 % of the line", s.DistanceKm[idx] / s.DistanceKm[len(s.DistanceKm)-1], 0.4, 0.02, "the cursor's place on the distance axis; 2 % for the axis padding"},
	})
	b.shot("26-plan-check-demo")

	// The CSV download is the service's CSV of the same body.
	res, err = http.Post(ts.URL+"/api/plans/check?f=csv", "application/json", strings.NewReader(sent))
	if err != nil {
		t.Fatal(err)
	}
	csvBody, _ := io.ReadAll(res.Body)
	res.Body.Close()
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-dl-csv")))
	b.waitFor("the CSV download", `(document.body.dataset.planDownload || "").startsWith("csv:")`, 30*time.Second)
	if d := eval[string](b, `document.body.dataset.planDownload`); res.StatusCode != http.StatusOK || len(csvBody) == 0 || d != fmt.Sprintf("csv:%d", len(csvBody)) {
		t.Errorf("download %s, the service's CSV of the same body is %d bytes (HTTP %d)", d, len(csvBody), res.StatusCode)
	}
	// The GeoJSON and the PDF report come from the same POST with f=geojson and f=pdf.
	for _, f := range []string{"geojson", "pdf"} {
		b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-dl-"+f)))
		b.waitFor("the "+f+" download", fmt.Sprintf(`(document.body.dataset.planDownload || "").startsWith(%q)`, f+":"), 60*time.Second)
		var size int
		if _, err := fmt.Sscanf(eval[string](b, `document.body.dataset.planDownload`), f+":%d", &size); err != nil || size < 100 {
			t.Errorf("%s download of %d bytes (%v)", f, size, err)
		}
	}
	// An edit after the check marks the panel stale.
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](`window.ridgeflank.plans.planMap.insertVertex(0, 1, {lat: -22.5, lon: -128})`))
	if st := eval[string](b, `document.getElementById("plan-check-panel").dataset.stale`); st != "true" {
		t.Errorf("after an edit the check panel is not marked stale (%q)", st)
	}

	// 3. A new plan, typed, saved (POST), then edited and saved again (PUT with If-Match).
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-new")))
	b.typeLine([][2]string{{"27 30.0 S", "131 15.0 W"}, {"25 45.5 S", "128 20.25 W"}})
	b.do(5*time.Second, chromedp.SetValue(chromedp.CSS("#plan-name"), "E2E plan (SYNTHETIC)"), chromedp.Click(chromedp.CSS("#plan-save")))
	b.waitFor("the first save", `document.body.dataset.planSaved === "1"`, 10*time.Second)
	newID := eval[string](b, `document.getElementById("plans").dataset.planId`)
	p1 := getPlan(t, ts, newID)
	if p1.Name != "E2E plan (SYNTHETIC)" || len(p1.Lines) != 1 || len(p1.Lines[0].Waypoints) != 2 || p1.Version < 1 {
		t.Fatalf("stored after the first save: %+v", p1)
	}
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](`window.ridgeflank.plans.planMap.insertVertex(0, 1, {lat: -26.5, lon: -130})`), chromedp.Click(chromedp.CSS("#plan-save")))
	b.waitFor("the second save", `document.body.dataset.planSaved === "2"`, 10*time.Second)
	p2 := getPlan(t, ts, newID)
	if len(p2.Lines[0].Waypoints) != 3 || p2.Version != p1.Version+1 {
		t.Errorf("after the edit: %d waypoints, version %d (was %d)", len(p2.Lines[0].Waypoints), p2.Version, p1.Version)
	}

	// 4. Someone else saves it meanwhile: the page's next save is refused and says why.
	p2.Name = "changed elsewhere (SYNTHETIC)"
	body, _ := json.Marshal(p2)
	req, _ := http.NewRequest(http.MethodPut, ts.URL+"/api/plans/"+newID, bytes.NewReader(body))
	req.Header.Set("Content-Type", "application/json")
	req.Header.Set("Authorization", "Bearer "+ts.Token)
	req.Header.Set("If-Match", fmt.Sprintf(`"%d"`, p2.Version))
	r2, err := http.DefaultClient.Do(req)
	if err != nil || r2.StatusCode != http.StatusOK {
		t.Fatalf("PUT behind the page's back: %v %v", err, r2)
	}
	r2.Body.Close()
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-save")))
	b.waitFor("the refusal", `[...document.querySelectorAll("#messages .msg-error")].some(e => e.textContent.includes("Someone else changed this plan"))`, 10*time.Second)
	if got := getPlan(t, ts, newID); got.Name != "changed elsewhere (SYNTHETIC)" {
		t.Errorf("the refused save overwrote the plan: %q", got.Name)
	}
	b.checkNoProblems()
}
