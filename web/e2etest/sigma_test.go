package e2etest

import (
	"context"
	"fmt"
	"math"
	"net/http"
	"net/url"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"

	"ridgeflank/store"
)

// noSigmaDatasetID is a second dataset on the demo basin's grids without its age-uncertainty grid.
const noSigmaDatasetID = "quillon-basin-synthetic-no-age-uncertainty"

// tileQuery is the query of the data layer's tile URLs: "" when no tile is on the page.
func tileQuery(b *browser) url.Values {
	b.t.Helper()
	src := eval[string](b, `document.querySelector(".data-tiles img")?.src || ""`)
	if src == "" {
		b.t.Fatalf("no data tile on the page")
	}
	u, err := url.Parse(src)
	if err != nil {
		b.t.Fatal(err)
	}
	return u.Query()
}

// setAgeSigma types text into the age-uncertainty field and commits it as a user does (change).
func (b *browser) setAgeSigma(text string) {
	b.t.Helper()
	b.do(10*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`(() => { const f = document.getElementById("age-sigma"); f.value = %q; f.dispatchEvent(new Event("change", {bubbles: true})); })()`, text)))
}

// profileSigma is the profile's ages and predicted-depth uncertainties (nil entries: no data).
func profileSigma(b *browser) (ages, sigmas []float64) {
	v := eval[[][]float64](b, `(() => { const p = window.ridgeflank.tracks.profile; const n = (a) => (a || p.distanceKm.map(() => null)).map((x) => (Number.isFinite(x) ? x : -1)); return [n(p.age), n(p.sigma)]; })()`)
	return v[0], v[1]
}

// TestPageAgeUncertainty: the age-uncertainty field's value reaches the tiles, the read-out
// and the profile's ±1σ band in place of the dataset's grid; a bad value shows a message next
// to the field and sends nothing; on a dataset without an age-uncertainty grid the profile
// does not ask for the band until a value is given.
func TestPageAgeUncertainty(t *testing.T) {
	requireBrowserAndPage(t)
	ts := startServer(t, true)
	ctx := context.Background()
	demo, err := ts.Store.GetDataset(ctx, ts.DatasetID)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := ts.Store.CreateDataset(ctx, store.Dataset{ID: noSigmaDatasetID, Name: "Quillon Basin without age uncertainty (SYNTHETIC)",
		Description: "SYNTHETIC: the demo basin's age, elevation and sediment grids, no age-uncertainty grid.",
		AgeGridID:   demo.AgeGridID, DepthGridID: demo.DepthGridID, SedimentGridID: demo.SedimentGridID}); err != nil {
		t.Fatal(err)
	}
	bb := collectionBBox(t, ts)
	w, s, e, n := bb[0], bb[1], bb[2], bb[3]

	b := newBrowser(t)
	b.do(30*time.Second, chromedp.Navigate(fmt.Sprintf("%s/#dataset=%s&layer=predicted_depth_uncertainty&model=halfspace", ts.URL, ts.DatasetID)))
	b.waitReadyAfter(0)
	b.waitFor("the page to restore its state", `document.body.dataset.restored === "true"`, 20*time.Second)
	if q := tileQuery(b); q.Has("age-uncertainty-ma") {
		t.Errorf("with the field empty the tiles ask age-uncertainty-ma=%s, want the dataset's grid (no value)", q.Get("age-uncertainty-ma"))
	}
	hint := eval[string](b, `document.getElementById("age-sigma-hint").textContent`)
	if !strings.Contains(hint, "replaces the grid") {
		t.Errorf("the hint for a dataset with a grid says %q", hint)
	}
	// A track across the basin: the profile with the grid's band.
	tw := [][2]float64{{w + 0.1*(e-w), s + 0.5*(n-s)}, {w + 0.9*(e-w), s + 0.5*(n-s)}}
	b.do(60*time.Second, chromedp.Evaluate[chromedp.Void](fmt.Sprintf(`window.ridgeflank.tracks.useWaypoints([[%g, %g], [%g, %g]], false)`, tw[0][0], tw[0][1], tw[1][0], tw[1][1]), chromedp.EvalAwaitPromise))
	b.waitFor("the profile with the grid's band", `document.getElementById("profile").dataset.state === "done" && document.getElementById("profile").dataset.sigma === "grid"`, 30*time.Second)
	ages, gridSigma := profileSigma(b)
	// The read-out pinned just north of the track's oldest sample (first-order propagation
	// needs σ_t ≤ t/10, so t ≥ 20 Ma for 2 Ma).
	oldest := 0
	for i, a := range ages {
		if a > ages[oldest] {
			oldest = i
		}
	}
	at := eval[[]float64](b, fmt.Sprintf(`window.ridgeflank.tracks.profile.positions[%d]`, oldest))
	pLon, pLat := at[0], at[1]+0.02
	x, y := b.screenXY(pLon, pLat)
	b.clickXY(x, y)
	b.waitFor("the pinned read-out", `document.getElementById("readout").dataset.state === "done"`, 20*time.Second)

	// 1. A value: tiles, read-out and profile all carry it.
	seq := b.readySeq()
	b.setAgeSigma("2")
	b.waitReadyAfter(seq)
	if got := tileQuery(b).Get("age-uncertainty-ma"); got != "2" {
		t.Errorf("the tiles ask age-uncertainty-ma=%q, want 2", got)
	}
	b.waitFor("the profile with the given value", `document.getElementById("profile").dataset.state === "done" && document.getElementById("profile").dataset.sigma === "2"`, 30*time.Second)
	b.waitFor("the read-out again", `document.getElementById("readout").dataset.state === "done"`, 20*time.Second)
	b.waitFor("the link to keep the value", `location.hash.includes("sigma=2")`, 5*time.Second)
	ages2, sigma2 := profileSigma(b)
	if len(ages2) != len(ages) || len(sigma2) != len(gridSigma) {
		t.Fatalf("the profile changed its samples: %d ages before, %d after", len(ages), len(ages2))
	}
	// Half-space depth d(t) = d_r + C √t (Turcotte & Schubert 2002, eq. 4.209): first order,
	// σ_d = |d'(t)| σ_t = (d(t) − d_r) / (2t) · σ_t, which the service uses where σ_t ≤ t/10
	// (evaluate/params.go, predicted_depth_uncertainty). 1 % for its numerical derivative
	// (common practice, no source).
	hs := mustModel(t, "halfspace").Params()
	var checks []check
	changed := 0
	for i, age := range ages2 {
		if age < 20 || sigma2[i] < 0 {
			continue
		}
		want := (halfSpaceDepthM(hs, age) - hs.RidgeDepthM) / (2 * age) * 2
		if len(checks) < 8 {
			checks = append(checks, check{fmt.Sprintf("σ of predicted depth at %.2f Ma, 2 Ma given", age), sigma2[i], want, 0.01 * want,
				"Turcotte & Schubert 2002 half-space depth, first-order propagation of σ_t = 2 Ma"})
		}
		if math.Abs(gridSigma[i]-sigma2[i]) > 0.01*sigma2[i] {
			changed++
		}
	}
	if len(checks) == 0 {
		t.Fatalf("no sample of the track is 20 Ma or older (ages %v)", ages2)
	}
	runChecks(t, checks)
	if changed == 0 {
		t.Errorf("the band with 2 Ma given equals the band of the dataset's grid: the value did not reach the profile")
	}
	// The read-out's uncertainty at the pinned point, from its own age.
	age := b.value(`#readout td[data-param="seafloor_age"]`)
	if !(age >= 20) {
		t.Fatalf("the pinned point's age is %g Ma: first-order propagation of 2 Ma needs 20 Ma or more", age)
	}
	runChecks(t, []check{{"read-out σ of predicted depth, 2 Ma given", b.value(`#readout td[data-param="predicted_depth_uncertainty"]`),
		(halfSpaceDepthM(hs, age) - hs.RidgeDepthM) / (2 * age) * 2, 0.01 * (halfSpaceDepthM(hs, age) - hs.RidgeDepthM) / age,
		"Turcotte & Schubert 2002 half-space depth, first-order propagation of σ_t = 2 Ma (age at the point " + fmt.Sprint(age) + " Ma ≥ 20)"}})
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#age-sigma")))
	b.shot("40-age-uncertainty-given")

	// 2. Bad values: a message next to the field, the state and every request unchanged.
	for _, bad := range []string{"0", "-1", "two", "100.5"} {
		seq := b.readySeq()
		b.setAgeSigma(bad)
		got := eval[map[string]any](b, `({status: document.getElementById("age-sigma-status").textContent, invalid: document.getElementById("age-sigma").getAttribute("aria-invalid"), sigma: window.ridgeflank.state.ageUncertaintyMa, profile: document.getElementById("profile").dataset.state, readout: document.getElementById("readout").dataset.state, ready: document.body.dataset.ready})`)
		if !strings.HasPrefix(fmt.Sprint(got["status"]), "Age uncertainty:") || got["invalid"] != "true" {
			t.Errorf("%q: message %q, aria-invalid %v; want the field's message", bad, got["status"], got["invalid"])
		}
		if got["sigma"] != 2.0 || got["profile"] != "done" || got["readout"] != "done" || got["ready"] != "true" || b.readySeq() != seq {
			t.Errorf("%q changed the page's question: %v", bad, got)
		}
	}
	if st := eval[string](b, `document.getElementById("age-sigma-status").textContent`); !strings.Contains(st, "at most 100,") {
		t.Errorf("the message %q does not give the service's maximum (server/openapi.json: 100)", st)
	}
	b.shot("41-age-uncertainty-invalid")

	// 3. The field emptied: the dataset's grid again.
	seq = b.readySeq()
	b.setAgeSigma("")
	b.waitReadyAfter(seq)
	if q := tileQuery(b); q.Has("age-uncertainty-ma") {
		t.Errorf("with the field emptied the tiles still ask age-uncertainty-ma=%s", q.Get("age-uncertainty-ma"))
	}
	if st := eval[string](b, `document.getElementById("age-sigma-status").textContent`); st != "" {
		t.Errorf("the message stays after the field was emptied: %q", st)
	}
	b.waitFor("the profile with the grid's band again", `document.getElementById("profile").dataset.state === "done" && document.getElementById("profile").dataset.sigma === "grid"`, 30*time.Second)
	// No request ever carried a refused value.
	sent := eval[[]string](b, `performance.getEntriesByType("resource").map((e) => e.name).filter((u) => u.includes("age-uncertainty-ma="))`)
	for _, u := range sent {
		q, _ := url.Parse(u)
		if v := q.Query().Get("age-uncertainty-ma"); v != "2" {
			t.Errorf("a request carried age-uncertainty-ma=%q: %s", v, u)
		}
	}
	if len(sent) == 0 {
		t.Errorf("no request carried age-uncertainty-ma=2")
	}

	// 4. A dataset without an age-uncertainty grid: no band asked (the service would refuse it),
	// the profile says how to get it; with a value the band is there.
	b.choose("dataset-select", noSigmaDatasetID)
	b.waitFor("the profile on the dataset without a grid", `document.body.dataset.dataset === `+fmt.Sprintf("%q", noSigmaDatasetID)+` && document.getElementById("profile").dataset.state === "done" && document.getElementById("profile").dataset.sigma === "none"`, 30*time.Second)
	if st := eval[string](b, `document.getElementById("profile-status").textContent`); !strings.Contains(st, "give an age uncertainty") {
		t.Errorf("profile status %q does not say how to get the band", st)
	}
	if layers := eval[[]string](b, `[...document.querySelectorAll("#layer-select option")].map((o) => o.value).filter((v) => v.endsWith("_uncertainty"))`); len(layers) != 0 {
		t.Errorf("the layer list offers %v for a dataset without an age-uncertainty grid and no value", layers)
	}
	if errs := eval[[]string](b, `[...document.querySelectorAll("#messages .msg-error")].map((m) => m.textContent)`); len(errs) != 0 {
		t.Errorf("error messages on the dataset without a grid: %q", errs)
	}
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#profile")))
	b.shot("42-age-uncertainty-no-grid-no-value")
	b.setAgeSigma("2")
	b.waitFor("the band with the value", `document.getElementById("profile").dataset.state === "done" && document.getElementById("profile").dataset.sigma === "2"`, 30*time.Second)
	ages3, sigma3 := profileSigma(b)
	for i := range sigma3 {
		if i < len(sigma2) && sigma3[i] >= 0 && math.Abs(sigma3[i]-sigma2[i]) > 1e-9*math.Max(1, sigma2[i]) {
			t.Errorf("sample %d (%.2f Ma): σ %.3f m on the dataset without a grid, %.3f m on the demo with the same 2 Ma", i, ages3[i], sigma3[i], sigma2[i])
			break
		}
	}
	if st := eval[string](b, `document.getElementById("profile-band-note").textContent`); !strings.Contains(st, "2 Ma (1σ, given)") {
		t.Errorf("the band note %q does not name the value given", st)
	}
	// The service draws no uncertainty tile for a dataset without the grid, even with a value
	// (evaluate.Service.Tile checks the dataset's own parameters first): logged for the record.
	res, err := http.Get(ts.URL + "/tiles/" + noSigmaDatasetID + "/predicted_depth_uncertainty/3/0/4.png?age-uncertainty-ma=2")
	if err == nil {
		res.Body.Close()
		t.Logf("uncertainty tile of the dataset without a grid, 2 Ma given: HTTP %d", res.StatusCode)
	}
	b.do(5*time.Second, chromedp.ScrollIntoView(chromedp.CSS("#profile")))
	b.shot("43-age-uncertainty-no-grid-value")
	b.checkNoProblems()

	// 5. Links: a value restores the field and reaches the first tiles; a value beyond the
	// service's maximum shows its message and the grid is used.
	for _, c := range []struct{ sigma, field, tiles, status string }{
		{"1.5", "1.5", "1.5", ""},
		{"500", "500", "", "Age uncertainty: 500 Ma is out of range"},
	} {
		b2 := newBrowser(t)
		b2.do(30*time.Second, chromedp.Navigate(fmt.Sprintf("%s/#dataset=%s&layer=predicted_depth_uncertainty&sigma=%s", ts.URL, ts.DatasetID, c.sigma)))
		b2.waitReadyAfter(0)
		b2.waitFor("the page to restore its state", `document.body.dataset.restored === "true"`, 20*time.Second)
		got := eval[[]string](b2, `[document.getElementById("age-sigma").value, document.getElementById("age-sigma-status").textContent]`)
		if got[0] != c.field || !strings.HasPrefix(got[1], c.status) || (c.status == "") != (got[1] == "") {
			t.Errorf("link sigma=%s: field %q, message %q; want %q, %q", c.sigma, got[0], got[1], c.field, c.status)
		}
		if q := tileQuery(b2).Get("age-uncertainty-ma"); q != c.tiles {
			t.Errorf("link sigma=%s: tiles ask age-uncertainty-ma=%q, want %q", c.sigma, q, c.tiles)
		}
		b2.checkNoProblems()
	}
}
