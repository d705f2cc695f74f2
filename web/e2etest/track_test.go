package e2etest

import (
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"mime/multipart"
	"net/http"
	"os"
	"path/filepath"
	"sort"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// fixtureTrack is the project's degrees-and-decimal-minutes CSV track.
var fixtureTrack = filepath.Join("..", "..", "testdata", "tracks", "quillon-line-a.csv")

// problemAnswer is an RFC 9457 problem document with the HTTP status.
type problemAnswer struct {
	Status int    `json:"status"`
	Title  string `json:"title"`
	Detail string `json:"detail"`
	Code   string `json:"code"`
}

// postTrack sends a track file to the trajectory query as the page does and
// returns the problem details of an error answer (Status < 400: no error).
func postTrack(t *testing.T, ts *testServer, body []byte, contentType string) problemAnswer {
	t.Helper()
	res, err := http.Post(ts.URL+"/api/collections/"+ts.DatasetID+"/trajectory", contentType, bytes.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var p problemAnswer
	if res.StatusCode >= 400 {
		_ = json.NewDecoder(res.Body).Decode(&p)
	}
	p.Status = res.StatusCode
	return p
}

// trajectoryAnswer is the part of the trajectory CoverageJSON the tests read.
type trajectoryAnswer struct {
	Domain struct {
		Axes struct {
			Composite struct {
				Values [][]float64 `json:"values"`
			} `json:"composite"`
		} `json:"axes"`
	} `json:"domain"`
	Waypoints []struct {
		Name       string  `json:"name"`
		Lon        float64 `json:"lon"`
		Lat        float64 `json:"lat"`
		DistanceKm float64 `json:"distance_km"`
	} `json:"ridgeflank:waypoints"`
}

// collectionParameters fetches the collection document's parameter_names:
// id → observedProperty label (English).
func collectionParameters(t *testing.T, ts *testServer, id string) map[string]string {
	t.Helper()
	res, err := http.Get(ts.URL + "/api/collections/" + id)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	var c struct {
		ParameterNames map[string]struct {
			ObservedProperty struct {
				Label map[string]string `json:"label"`
			} `json:"observedProperty"`
		} `json:"parameter_names"`
	}
	if err := json.NewDecoder(res.Body).Decode(&c); err != nil || len(c.ParameterNames) == 0 {
		t.Fatalf("collection %s: no parameter_names (HTTP %d, %v)", id, res.StatusCode, err)
	}
	out := map[string]string{}
	for k, p := range c.ParameterNames {
		out[k] = p.ObservedProperty.Label["en"]
	}
	return out
}

// collectionParameterIDs is the sorted list of the collection's parameter ids.
func collectionParameterIDs(t *testing.T, ts *testServer, id string) []string {
	t.Helper()
	var ids []string
	for k := range collectionParameters(t, ts, id) {
		ids = append(ids, k)
	}
	sort.Strings(ids)
	return ids
}

// fixtureWaypointNames reads the name column of the fixture CSV.
func fixtureWaypointNames(t *testing.T) []string {
	t.Helper()
	f, err := os.Open(fixtureTrack)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	rows, err := csv.NewReader(f).ReadAll()
	if err != nil || len(rows) < 3 || rows[0][0] != "name" {
		t.Fatalf("fixture %s: %v (%d rows)", fixtureTrack, err, len(rows))
	}
	var names []string
	for _, r := range rows[1:] {
		names = append(names, r[0])
	}
	return names
}

// haversineKm is the great-circle distance on a sphere of radius 6371.0088 km
// (the WGS84 mean radius R1 = (2a + b)/3, Moritz 1980, "Geodetic Reference
// System 1980"), by the haversine formula (Sinnott 1984, "Virtues of the
// haversine", Sky and Telescope 68, 159).
func haversineKm(lon1, lat1, lon2, lat2 float64) float64 {
	r := math.Pi / 180
	a := math.Pow(math.Sin((lat2-lat1)*r/2), 2) + math.Cos(lat1*r)*math.Cos(lat2*r)*math.Pow(math.Sin((lon2-lon1)*r/2), 2)
	return 2 * 6371.0088 * math.Asin(math.Min(1, math.Sqrt(a)))
}

// TestPageTrackFileAndParameters loads the project's degrees-and-minutes CSV
// track through the page's file input and checks that the page draws what
// the service answered (the sampled line and the named waypoints), and that
// every parameter list on the page is the collection document's.
func TestPageTrackFileAndParameters(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)

	// 1. The parameter selector, the read-out rows and the download choices
	// list exactly the parameters of the collection document, with its labels.
	params := collectionParameters(t, ts, ts.DatasetID)
	want := collectionParameterIDs(t, ts, ts.DatasetID)
	for _, sel := range []string{"#layer-select option", "#readout td[data-param]", "#region-download-param option"} {
		attr := "o.value"
		if strings.HasPrefix(sel, "#readout") {
			attr = "o.dataset.param"
		}
		got := eval[[]string](b, fmt.Sprintf(`[...document.querySelectorAll(%q)].map(o => %s).sort()`, sel, attr))
		if strings.Join(got, ",") != strings.Join(want, ",") {
			t.Errorf("%s lists %v, want the collection document's parameter_names %v", sel, got, want)
		}
	}
	labels := eval[map[string]string](b, `Object.fromEntries([...document.querySelectorAll("#layer-select option")].map(o => [o.value, o.textContent]))`)
	for id, label := range params {
		if labels[id] != label {
			t.Errorf("layer %s is labelled %q, the collection document says %q", id, labels[id], label)
		}
	}
	// Sediment choices come from the document's ridgeflank:models.
	if n := eval[int](b, `document.querySelectorAll("#sediment-select option").length`); n < 2 {
		t.Errorf("the sediment choice has %d options, want the service default and the collection's compaction sets", n)
	}

	// 2. The fixture CSV (degrees and decimal minutes, named waypoints) goes
	// to the service as it is; the page draws the service's answer.
	raw, err := os.ReadFile(fixtureTrack)
	if err != nil {
		t.Fatal(err)
	}
	names := fixtureWaypointNames(t)
	abs, err := filepath.Abs(fixtureTrack)
	if err != nil {
		t.Fatal(err)
	}
	b.do(10*time.Second, chromedp.SetUploadFiles(chromedp.CSS("#track-file"), []string{abs}))
	b.waitFor("the profile", `["done", "error"].includes(document.getElementById("profile").dataset.state)`, 30*time.Second)
	if st := eval[string](b, `document.getElementById("profile").dataset.state`); st != "done" {
		t.Fatalf("profile of the fixture: %s", eval[string](b, `document.getElementById("profile-status").textContent`))
	}
	b.waitReadyAfter(0)

	// The same file as the service answers it, for comparison.
	req, _ := http.NewRequest(http.MethodPost, ts.URL+"/api/collections/"+ts.DatasetID+"/trajectory", bytes.NewReader(raw))
	req.Header.Set("Content-Type", "text/csv")
	req.Header.Set("Accept", "application/vnd.cov+json")
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(res.Body)
	res.Body.Close()
	var ans trajectoryAnswer
	if err := json.Unmarshal(body, &ans); err != nil || res.StatusCode != http.StatusOK {
		t.Fatalf("trajectory of the fixture through the API: HTTP %d, %v: %.300s", res.StatusCode, err, body)
	}
	samples := ans.Domain.Axes.Composite.Values

	// The line drawn is the line sampled: the map's polyline vertices are the
	// coverage domain's positions (more than the three waypoints: it follows
	// the geodesic).
	drawn := eval[[][]float64](b, `window.ridgeflank.tracks.layer.getLayers().filter(l => l.getLatLngs && !l.getRadius).flatMap(l => l.getLatLngs().map(p => [p.lng, p.lat]))`)
	if len(drawn) != len(samples) || len(drawn) <= len(names) {
		t.Fatalf("the map's track has %d vertices, the service sampled %d positions (from %d waypoints)", len(drawn), len(samples), len(names))
	}
	for i := range drawn {
		if math.Abs(drawn[i][0]-samples[i][0]) > 1e-9 || math.Abs(drawn[i][1]-samples[i][1]) > 1e-9 {
			t.Fatalf("vertex %d drawn at %v, sampled at %v", i, drawn[i], samples[i])
		}
	}
	if pts := eval[int](b, `Number(document.getElementById("profile-chart").dataset.points || 0)`); pts != len(samples) {
		t.Errorf("the profile has %d points, the service sampled %d", pts, len(samples))
	}

	// The waypoint labels on the profile and on the map are the fixture's names.
	onProfile := eval[[]string](b, `[...document.querySelectorAll("#profile-chart .wp-label")].map(e => e.textContent)`)
	onMap := eval[[]string](b, `[...document.querySelectorAll(".waypoint-tooltip")].map(e => e.textContent)`)
	for what, got := range map[string][]string{"profile": onProfile, "map": onMap} {
		if strings.Join(got, "|") != strings.Join(names, "|") {
			t.Errorf("waypoint labels on the %s %q, want the fixture's names %q", what, got, names)
		}
	}
	marks := eval[[]float64](b, `[...document.querySelectorAll("#profile-chart .wp-mark")].map(e => Number(e.dataset.distanceKm))`)
	if len(marks) != len(ans.Waypoints) {
		t.Fatalf("%d waypoint marks on the profile, the service answered %d waypoints", len(marks), len(ans.Waypoints))
	}
	// Positions: degrees and decimal minutes, d + m/60 (a minute of arc is
	// 1/60 degree, by definition), south and west negative.
	wantPos := [][2]float64{{-(131 + 15.0/60), -(27 + 30.0/60)}, {-(128 + 20.25/60), -(25 + 45.5/60)}, {-(125 + 5.0/60), -(23 + 10.75/60)}}
	pageWps := eval[[][]float64](b, `window.ridgeflank.tracks.profile.waypoints.map(w => [w.lon, w.lat, w.distanceKm])`)
	var checks []check
	for i, w := range wantPos {
		checks = append(checks,
			check{fmt.Sprintf("waypoint %d longitude", i), pageWps[i][0], w[0], 5e-5, "the fixture's degrees and minutes, d + m/60; half a unit of the answer's 7th significant digit"},
			check{fmt.Sprintf("waypoint %d latitude", i), pageWps[i][1], w[1], 5e-5, "the fixture's degrees and minutes, d + m/60; half a unit of the answer's 7th significant digit"},
			check{fmt.Sprintf("waypoint %d mark on the profile", i), marks[i], ans.Waypoints[i].DistanceKm, 1e-9, "the service's distance_km of the waypoint"})
	}
	// Along the WGS84 geodesic the legs differ from great circles on the mean
	// sphere by less than 0.5 % (flattening 1/298.257; common practice, no source).
	leg1 := haversineKm(wantPos[0][0], wantPos[0][1], wantPos[1][0], wantPos[1][1])
	leg2 := haversineKm(wantPos[1][0], wantPos[1][1], wantPos[2][0], wantPos[2][1])
	checks = append(checks,
		check{"distance to the second waypoint", pageWps[1][2], leg1, 0.005 * leg1, "haversine on the mean sphere (Sinnott 1984); 0.5 % for the ellipsoid"},
		check{"distance to the last waypoint", pageWps[2][2], leg1 + leg2, 0.005 * (leg1 + leg2), "haversine on the mean sphere (Sinnott 1984); 0.5 % for the ellipsoid"})
	runChecks(t, checks)
	t.Logf("fixture track: %d samples, waypoints %v at %.1f, %.1f, %.1f km", len(samples), names, pageWps[0][2], pageWps[1][2], pageWps[2][2])
	b.shot("14-track-quillon-line-a")
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#profile-waypoints")))
	b.shot("15-track-quillon-line-a-profile")

	// 3. The same line as GPX (named route points) and as GeoJSON (an
	// unnamed LineString) gives the same samples; the GPX keeps the names.
	for _, c := range []struct {
		file  string
		names []string
	}{
		{"quillon-line-a.gpx", names},
		{"quillon-line-a.geojson", nil},
	} {
		t.Run(c.file, func(t *testing.T) {
			p, err := filepath.Abs(filepath.Join(filepath.Dir(fixtureTrack), c.file))
			if err != nil {
				t.Fatal(err)
			}
			b.do(10*time.Second, chromedp.SetUploadFiles(chromedp.CSS("#track-file"), []string{p}))
			b.waitFor("the profile of "+c.file, fmt.Sprintf(`["done", "error"].includes(document.getElementById("profile").dataset.state) && document.getElementById("profile-status").textContent.startsWith(%q)`, c.file), 30*time.Second)
			if n := eval[int](b, `Number(document.body.dataset.trackSamples || 0)`); n != len(samples) {
				t.Errorf("%s: %d samples, the CSV of the same line gave %d", c.file, n, len(samples))
			}
			got := eval[[]string](b, `[...document.querySelectorAll("#profile-chart .wp-label")].map(e => e.textContent)`)
			if c.names != nil && strings.Join(got, "|") != strings.Join(c.names, "|") {
				t.Errorf("%s: waypoint labels %q, want %q", c.file, got, c.names)
			}
			if len(got) != len(names) {
				t.Errorf("%s: %d waypoint marks, want %d", c.file, len(got), len(names))
			}
		})
	}
	b.checkNoProblems()
}

// TestPageUploadWrongUnits uploads a grid declaring a kind, then units, the
// service does not accept: the page shows the service's own message.
func TestPageUploadWrongUnits(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	agePath := demoAgeFile(t, 0.5)
	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(ts.URL+"/"))
	b.waitReadyAfter(0)
	b.waitFor("the upload form", `document.body.dataset.uploadForm === "ready"`, 10*time.Second)
	b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`localStorage.setItem("ridgeflank.writeToken", %q)`, ts.Token)))
	b.do(5*time.Second, chromedp.Click(chromedp.CSS(`#imports details:first-of-type summary`)))

	// upload fills the form as a user would and submits it; a select offers
	// only the service's values, so a wrong one is added as a user could type
	// it into a free-text field.
	upload := func(fields map[string]string) {
		b.do(10*time.Second, chromedp.SetUploadFiles(chromedp.CSS("#upload-file"), []string{agePath}))
		for name, v := range fields {
			b.do(5*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`(() => { const u = document.getElementById("upload-" + %q); if (u.tagName === "SELECT" && ![...u.options].some(o => o.value === %q)) u.add(new Option(%q, %q)); u.value = %q; })()`, name, v, v, v, v)))
		}
		b.do(10*time.Second, chromedp.Click(chromedp.CSS(`#upload-form button[type="submit"]`)))
	}
	shown := func(what, text string) {
		b.waitFor(what, fmt.Sprintf(`[...document.querySelectorAll("#messages .msg-error, #job-list li")].some(e => e.textContent.includes(%q))`, text), 60*time.Second)
	}

	t.Run("kind", func(t *testing.T) {
		want := uploadVerdict(t, ts, agePath, map[string]string{"kind": "bathymetry-ish"})
		if want == "" {
			t.Fatalf("the service accepted the kind %q", "bathymetry-ish")
		}
		upload(map[string]string{"kind": "bathymetry-ish"})
		shown("the service's message about the kind", want)
	})
	t.Run("units", func(t *testing.T) {
		const badUnits = "furlong" // not a unit of age
		want := uploadVerdict(t, ts, agePath, map[string]string{"kind": "age", "units": badUnits})
		if want == "" {
			t.Skip("the service accepts an age grid in furlongs: it does not check the units field yet")
		}
		upload(map[string]string{"kind": "age", "units": badUnits})
		shown("the service's message about the units", want)
		b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#imports")))
		b.shot("16-upload-wrong-units")
	})
	b.checkNoProblems()
}

// uploadVerdict posts the grid with the given form fields straight to the
// API and returns what the service objects: the problem detail of a
// refused upload, or the error of a failed import job; "" when it accepts.
func uploadVerdict(t *testing.T, ts *testServer, path string, fields map[string]string) string {
	t.Helper()
	var buf bytes.Buffer
	mw := multipart.NewWriter(&buf)
	for k, v := range fields {
		_ = mw.WriteField(k, v)
	}
	_ = mw.WriteField("name", "form check (SYNTHETIC)")
	fw, _ := mw.CreateFormFile("file", filepath.Base(path))
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	_, _ = fw.Write(data)
	_ = mw.Close()
	req, _ := http.NewRequest(http.MethodPost, ts.URL+"/api/grids", &buf)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	req.Header.Set("Authorization", "Bearer "+ts.Token)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	if res.StatusCode >= 400 {
		var p problemAnswer
		_ = json.NewDecoder(res.Body).Decode(&p)
		if p.Detail == "" {
			t.Fatalf("upload refused with HTTP %d but no problem detail", res.StatusCode)
		}
		return p.Detail
	}
	var acc map[string]any
	_ = json.NewDecoder(res.Body).Decode(&acc)
	id := acc["id"]
	if j, ok := acc["job"].(map[string]any); ok {
		id = j["id"]
	}
	if id == nil {
		return ""
	}
	ctx, cancel := context.WithTimeout(context.Background(), 60*time.Second)
	defer cancel()
	for ctx.Err() == nil {
		r, err := http.Get(fmt.Sprintf("%s/api/jobs/%v", ts.URL, id))
		if err != nil {
			t.Fatal(err)
		}
		var job struct {
			State  string   `json:"state"`
			Error  string   `json:"error"`
			Errors []string `json:"errors"`
		}
		_ = json.NewDecoder(r.Body).Decode(&job)
		r.Body.Close()
		switch job.State {
		case "failed", "discarded", "cancelled":
			if job.Error != "" {
				return job.Error
			}
			if len(job.Errors) > 0 {
				return job.Errors[len(job.Errors)-1]
			}
			t.Fatalf("the import job %v failed without a message", id)
		case "succeeded", "completed":
			return ""
		}
		time.Sleep(100 * time.Millisecond) // polling a job's state, not timing a result
	}
	t.Fatalf("the import job %v did not end", id)
	return ""
}
