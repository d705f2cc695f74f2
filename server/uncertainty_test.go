package server

import (
	"math"
	"net/url"
	"testing"
)

// age-uncertainty-ma over HTTP, on the global test grid (age = |latitude|, 1° cells):
//   - at 30.5° N (age 30.5 Ma) with σ = 2 Ma the depth uncertainty is |dd/dt|·σ; from the GDH1
//     fit for t ≥ 20 Ma, d = 5651 − 2473·e^(−0.0278t) (Stein & Stein 1992, Nature 359, 123–129;
//     from memory), dd/dt = 68.75·e^(−0.0278t) = 29.45 m/Myr at 30.5 Ma, so 58.9 m; within 5 %
//     (the fit's misfit to the plate model, as gdh1Depth's tolerances);
//   - the region statistics carry the uncertainty of the mean in both forms, the independent one
//     smaller (σ/√n) and the correlated one the mean σ, and validate against the OpenAPI schema;
//   - a bad value is an invalid-parameter problem, none at all an unknown-parameter problem.
func TestAgeUncertaintyParameter(t *testing.T) {
	forEachStore(t, Config{}, func(t *testing.T, e *env) {
		installGlobe(t, e)
		ds := "/api/collections/globe"
		r := e.get(ds + "/position?coords=" + url.QueryEscape("POINT(0.5 30.5)") + "&parameter-name=predicted_depth_uncertainty,ridge_push&age-uncertainty-ma=2")
		e.want(r, 200)
		m := r.json(t)
		if got, want := covValue(t, m, "predicted_depth_uncertainty", 0), 68.75*math.Exp(-0.0278*30.5)*2; math.Abs(got-want) > 0.05*want {
			t.Errorf("predicted_depth_uncertainty %v m, GDH1 fit %v m", got, want)
		}
		if got := covValue(t, m, "ridge_push", 0); !(got > 1e12 && got < 5e12) {
			t.Errorf("ridge push at 30.5 Ma %v N/m, want of order 10^12 (Turcotte & Schubert, from memory)", got)
		}
		wkt := url.QueryEscape("POLYGON((0 20,10 20,10 30,0 30,0 20))")
		s := e.get(ds + "/statistics?coords=" + wkt + "&parameter-name=predicted_depth&age-uncertainty-ma=2").json(t)
		st := s["statistics"].(map[string]any)["predicted_depth"].(map[string]any)
		ind, cor := num(t, st["mean_uncertainty_independent_m"]), num(t, st["mean_uncertainty_correlated_m"])
		n := num(t, st["count"])
		if !(ind > 0 && ind < cor) || math.Abs(ind*math.Sqrt(n)/cor-1) > 0.1 {
			t.Errorf("independent %v, correlated %v over %v cells: want about correlated/√n", ind, cor, n)
		}
		wantProblem(t, e.get(ds+"/position?coords="+url.QueryEscape("POINT(0.5 30.5)")+"&parameter-name=predicted_depth_uncertainty&age-uncertainty-ma=-3"), 400, CodeInvalidParameter)
		wantProblem(t, e.get(ds+"/position?coords="+url.QueryEscape("POINT(0.5 30.5)")+"&parameter-name=predicted_depth_uncertainty"), 400, CodeUnknownParameter)

		// The uncertainty layer of a dataset without an age-uncertainty grid, drawn for a given
		// value (Resolve's rule, as every other query); its ETag follows the value.
		tile := "/tiles/globe/predicted_depth_uncertainty/1/1/0.png"
		wantProblem(t, e.get(tile), 400, CodeUnknownParameter)
		t2, t3 := e.get(tile+"?age-uncertainty-ma=2"), e.get(tile+"?age-uncertainty-ma=3")
		e.want(t2, 200)
		e.want(t3, 200)
		if t2.Header.Get("ETag") == "" || t2.Header.Get("ETag") == t3.Header.Get("ETag") {
			t.Errorf("tiles for σ 2 and 3 Ma: ETags %q and %q, want different", t2.Header.Get("ETag"), t3.Header.Get("ETag"))
		}
	})
}
