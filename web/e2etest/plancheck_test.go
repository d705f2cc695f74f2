package e2etest

import (
	"encoding/json"
	"fmt"
	"math"
	"net/http"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/survey"
)

// standInCheck answers POST /api/plans/check in front of the real handler while the service
// side of plans is built elsewhere: it builds a survey.Check for the posted plan with the
// contract's own Go types, so the page is tested against the JSON field names the service
// will send. The samples follow the plan's lines along WGS84 geodesics (geo.Densify through
// PROJ, 5 km apart); the depths are SYNTHETIC (a smooth made-up profile, observed on the first
// half of each line and predicted on the second, with one shallow hazard). It checks nothing:
// it is only a fixture for drawing the panel. Other formats answer a short SYNTHETIC body.
func standInCheck(t *testing.T, got chan<- survey.Check) func(http.Handler) http.Handler {
	return func(next http.Handler) http.Handler {
		return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
			if r.Method != http.MethodPost || r.URL.Path != "/api/plans/check" {
				next.ServeHTTP(w, r)
				return
			}
			var p survey.Plan
			if err := json.NewDecoder(r.Body).Decode(&p); err != nil {
				http.Error(w, err.Error(), http.StatusBadRequest)
				return
			}
			switch f := r.URL.Query().Get("f"); f {
			case "csv":
				w.Header().Set("Content-Type", "text/csv")
				fmt.Fprint(w, "line,distance_km,expected_depth_m\n0,0,4000\n") // SYNTHETIC
				return
			case "geojson", "pdf":
				w.Header().Set("Content-Type", map[string]string{"geojson": "application/geo+json", "pdf": "application/pdf"}[f])
				fmt.Fprintf(w, "SYNTHETIC %s stand-in", f)
				return
			}
			c, err := synthCheck(p)
			if err != nil {
				http.Error(w, err.Error(), http.StatusBadRequest)
				return
			}
			select {
			case got <- c:
			default:
			}
			w.Header().Set("Content-Type", "application/json")
			_ = json.NewEncoder(w).Encode(c)
		})
	}
}

// synthCheck builds the stand-in's SYNTHETIC survey.Check of p (see standInCheck).
func synthCheck(p survey.Plan) (survey.Check, error) {
	g := gdal.WGS84()
	c := survey.Check{Plan: p, Caution: evaluate.Caution}
	for li, line := range p.Lines {
		ss, err := geo.Densify(g, line.Waypoints, 5000, 0)
		if err != nil {
			return c, err
		}
		legs, err := geo.Legs(g, line.Waypoints)
		if err != nil {
			return c, err
		}
		n := len(ss)
		lr := survey.LineResult{Name: line.Name}
		s := &lr.Samples
		half := ss[n-1].DistanceKm / 2
		for i, x := range ss {
			d := 4000 + 600*math.Sin(x.DistanceKm/60) // SYNTHETIC depth, m
			src, unc := survey.SourceObserved, 40.0
			if x.DistanceKm > half {
				src, unc = survey.SourcePredicted, 180
			}
			if i == n/3 {
				d = 150 // SYNTHETIC shoal
			}
			s.Lon = append(s.Lon, x.Lon)
			s.Lat = append(s.Lat, x.Lat)
			s.Leg = append(s.Leg, x.Leg)
			s.DistanceKm = append(s.DistanceKm, x.DistanceKm)
			s.DistanceNmi = append(s.DistanceNmi, x.DistanceKm/1.852)
			s.TimeH = append(s.TimeH, x.DistanceKm/1.852/10)
			s.ExpectedDepthM = append(s.ExpectedDepthM, d)
			s.DepthSource = append(s.DepthSource, src)
			s.UncertaintyM = append(s.UncertaintyM, unc)
		}
		for _, l := range legs {
			lr.Legs = append(lr.Legs, survey.Leg{FromName: line.Waypoints[l.From].Name, ToName: line.Waypoints[l.To].Name, LengthKm: l.LengthKm, LengthNmi: l.LengthKm / 1.852,
				AzimuthDeg: l.InitialAzimuthDeg, TimeH: l.LengthKm / 1.852 / 10, MinDepthM: 150, MeanDepthM: 4000, MaxDepthM: 4600})
		}
		lr.LengthKm = ss[n-1].DistanceKm
		lr.LengthNmi = lr.LengthKm / 1.852
		lr.TimeOnLineH = lr.LengthNmi / 10
		x := ss[n/3]
		c.Hazards = append(c.Hazards, survey.Hazard{Kind: survey.HazardShallow, Line: li, LineName: line.Name, FromSample: n / 3, ToSample: n / 3, Lon: x.Lon, Lat: x.Lat,
			DistanceKm: x.DistanceKm, DepthM: 150, Value: 150, Limit: 200, Reason: "SYNTHETIC shoal shallower than the safety depth"})
		c.Lines = append(c.Lines, lr)
		c.Totals.LengthKm += lr.LengthKm
		c.Totals.TimeOnLineH += lr.TimeOnLineH
	}
	c.Totals.TimeTotalH = c.Totals.TimeOnLineH
	c.Totals.Hazards = len(c.Hazards)
	return c, nil
}

// TestPagePlanCheckPanel types a plan, checks it and reads the check panel: the caution as the
// answer gives it, the legs table, the hazard on the profile and the map, hovering the profile
// marking the sample on the map, a download, and the panel marked stale after an edit. The
// check answer comes from standInCheck (see there) until /api/plans/check is on main; the save
// and list of plans are not tested here yet for the same reason.
func TestPagePlanCheckPanel(t *testing.T) {
	requireBrowserAndPage(t)
	got := make(chan survey.Check, 4)
	ts := startServerWith(t, true, standInCheck(t, got))
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)

	b.typeLine([][2]string{{"27 30.0 S", "131 15.0 W"}, {"25 45.5 S", "128 20.25 W"}, {"23 10.75 S", "125 05.0 W"}})
	b.do(5*time.Second,
		chromedp.SetValue(chromedp.CSS("#plan-name"), "Quillon check (SYNTHETIC)"),
		chromedp.Click(chromedp.CSS("#plan-settings-box summary")),
		chromedp.SetValue(chromedp.CSS(`#plan-settings input[name="safety_depth_m"]`), "200"),
		chromedp.SetValue(chromedp.CSS(`#plan-settings input[name="speed_on_line_kn"]`), "10"),
		chromedp.Click(chromedp.CSS("#plan-check")),
	)
	b.waitFor("the check panel", `["done", "error"].includes(document.getElementById("plan-check-panel").dataset.state)`, 30*time.Second)
	if st := eval[string](b, `document.getElementById("plan-check-panel").dataset.state`); st != "done" {
		t.Fatalf("check panel: %s", eval[string](b, `document.getElementById("plan-check-status").textContent`))
	}
	var c survey.Check
	select {
	case c = <-got:
	case <-time.After(5 * time.Second):
		t.Fatal("the stand-in was not asked")
	}
	// The page sent the settings and the map's dataset and model.
	if s := c.Plan.Settings; s.SafetyDepthM != 200 || s.SpeedOnLineKn != 10 || s.Dataset != ts.DatasetID || s.Model == "" {
		t.Errorf("the page sent settings %+v", s)
	}
	if c.Plan.Name != "Quillon check (SYNTHETIC)" || len(c.Plan.Lines) != 1 || len(c.Plan.Lines[0].Waypoints) != 3 {
		t.Errorf("the page sent plan %q with lines %+v", c.Plan.Name, c.Plan.Lines)
	}

	// The caution is the answer's, and it is on screen.
	caution := eval[[]any](b, `(() => { const e = document.getElementById("plan-caution"); const r = e.getBoundingClientRect(); return [e.textContent, r.width > 0 && r.height > 0]; })()`)
	if caution[0] != evaluate.Caution || caution[1] != true {
		t.Errorf("caution %q (visible %v), want the answer's %q", caution[0], caution[1], evaluate.Caution)
	}
	// The legs table: one row per leg, lengths as answered (two decimals, km and nmi).
	rows := eval[[][]string](b, `[...document.querySelectorAll("#plan-legs-table tbody tr")].map(r => [...r.cells].map(c => c.textContent.replaceAll(",", "")))`)
	legs := c.Lines[0].Legs
	if len(rows) != len(legs) {
		t.Fatalf("legs table has %d rows, the answer %d legs", len(rows), len(legs))
	}
	for i, l := range legs {
		if rows[i][1] != fmt.Sprintf("%.2f", l.LengthKm) || rows[i][2] != fmt.Sprintf("%.2f", l.LengthNmi) || rows[i][3] != fmt.Sprintf("%.1f", l.AzimuthDeg) {
			t.Errorf("leg %d row %v, answer %.2f km %.2f nmi %.1f°", i, rows[i], l.LengthKm, l.LengthNmi, l.AzimuthDeg)
		}
	}
	// The hazard: in the list, on the map and on the profile.
	if n := eval[int](b, `document.querySelectorAll("#plan-hazards li[data-kind]").length`); n != len(c.Hazards) {
		t.Errorf("%d hazards listed, the answer has %d", n, len(c.Hazards))
	}
	if n := eval[int](b, `window.ridgeflank.plans.checkLayer.getLayers().filter(l => l.getRadius).length`); n != len(c.Hazards) {
		t.Errorf("%d hazard marks on the map, the answer has %d", n, len(c.Hazards))
	}
	if n := eval[int](b, `Number(document.getElementById("plan-chart").dataset.hazardPoints || 0)`); n < 1 {
		t.Errorf("no hazard on the profile")
	}
	if pts := eval[int](b, `Number(document.getElementById("plan-chart").dataset.points || 0)`); pts != len(c.Lines[0].Samples.Lon) {
		t.Errorf("profile has %d points, the answer %d samples", pts, len(c.Lines[0].Samples.Lon))
	}
	total := eval[string](b, `document.querySelector('#plan-totals tr[data-total="time_on_line"] td').textContent`)
	if want := fmt.Sprintf("%d h %02d min", int(c.Totals.TimeOnLineH), int(math.Round(c.Totals.TimeOnLineH*60))%60); total != want {
		t.Errorf("time on line %q, want %q (the answer's %.4f h)", total, want, c.Totals.TimeOnLineH)
	}

	// Hover the profile at 40 % of its width: the sample under the cursor is marked on the map.
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#plan-chart")))
	xy := eval[[]float64](b, `(() => { const r = document.querySelector("#plan-chart .u-over").getBoundingClientRect(); return [r.left + 0.4 * r.width, r.top + 0.5 * r.height]; })()`)
	b.do(5*time.Second, chromedp.MouseEvent(chromedp.MouseMoved, xy[0]-3, xy[1]), chromedp.MouseEvent(chromedp.MouseMoved, xy[0], xy[1]))
	b.waitFor("the hover mark", `document.getElementById("plan-readout").dataset.index !== undefined && document.getElementById("plan-readout").dataset.index !== ""`, 5*time.Second)
	idx := eval[int](b, `Number(document.getElementById("plan-readout").dataset.index)`)
	mark := eval[[]float64](b, `(() => { const p = window.ridgeflank.plans.hoverMarker.getLatLng(); return [p.lng, p.lat, window.ridgeflank.map.hasLayer(window.ridgeflank.plans.hoverMarker) ? 1 : 0]; })()`)
	s := c.Lines[0].Samples
	runChecks(t, []check{
		{"hover mark longitude", mark[0], s.Lon[idx], 1e-9, "the answer's sample under the cursor"},
		{"hover mark latitude", mark[1], s.Lat[idx], 1e-9, "the answer's sample under the cursor"},
		{"hover mark on the map", mark[2], 1, 0, "the marker is shown"},
		{"hovered sample near 40 % of the line", s.DistanceKm[idx] / s.DistanceKm[len(s.DistanceKm)-1], 0.4, 0.02, "the cursor's place on the distance axis; 2 % for the axis padding"},
	})
	b.shot("25-plan-check-panel")

	// A download posts the same plan with f=csv and saves the answer.
	b.do(5*time.Second, chromedp.Click(chromedp.CSS("#plan-dl-csv")))
	b.waitFor("the CSV download", `(document.body.dataset.planDownload || "").startsWith("csv:")`, 10*time.Second)
	if d := eval[string](b, `document.body.dataset.planDownload`); d != fmt.Sprintf("csv:%d", len("line,distance_km,expected_depth_m\n0,0,4000\n")) {
		t.Errorf("download %s", d)
	}
	// An edit after the check marks the panel stale.
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](`window.ridgeflank.plans.planMap.insertVertex(0, 1, {lat: -26.5, lon: -130})`))
	if st := eval[string](b, `document.getElementById("plan-check-panel").dataset.stale`); st != "true" {
		t.Errorf("after an edit the check panel is not marked stale (%q)", st)
	}
	if !strings.Contains(eval[string](b, `getComputedStyle(document.querySelector("#plan-check-panel .stale-note")).display`), "block") {
		t.Errorf("the stale note is not shown")
	}
	b.checkNoProblems()
}
