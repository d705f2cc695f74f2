package main

import (
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"net/http"
	"net/http/httptest"
	"sort"
	"strconv"
	"strings"
	"testing"

	"ridgeflank/evaluate"
	"ridgeflank/server"
	"ridgeflank/thermal"
)

// apiGet asks a store-less server (the model endpoints need none).
func apiGet(t *testing.T, path string) (int, string) {
	t.Helper()
	ts := httptest.NewServer(server.New(server.Deps{Version: "test"}))
	defer ts.Close()
	resp, err := http.Get(ts.URL + path)
	if err != nil {
		t.Fatal(err)
	}
	defer resp.Body.Close()
	b, _ := io.ReadAll(resp.Body)
	return resp.StatusCode, string(b)
}

// The help says what the code computes: T = Ts + 0.9 (Tm − Ts), not 90 % of Tm (issue 12).
func TestHelpStatesThicknessDefinition(t *testing.T) {
	for _, cmd := range []string{"predict", "geotherm"} {
		t.Run(cmd, func(t *testing.T) {
			_, out, errOut := runCLI(t, nil, cmd, "--help")
			help := out + errOut
			if !strings.Contains(help, "T = Ts + 0.9 (Tm − Ts)") || strings.Contains(help, "90 % of the mantle temperature") {
				t.Errorf("help does not state the definition the code uses:\n%s", help)
			}
		})
	}
}

// One age limit (evaluate.MaxAgeMa = 400 Ma) for the command line and the API (issue 12: the
// command line took up to 1000 Ma).
func TestAgeLimitSharedWithAPI(t *testing.T) {
	for _, tc := range []struct {
		age string
		ok  bool
	}{{"0", true}, {"400", true}, {"400.5", false}, {"1000", false}} {
		t.Run(tc.age, func(t *testing.T) {
			code, _, errOut := runCLI(t, nil, "predict", "--age", tc.age, "--format", "csv")
			status, body := apiGet(t, "/api/models/gdh1/curve?ages="+tc.age)
			if (code == 0) != tc.ok || (status == 200) != tc.ok {
				t.Errorf("CLI exit %d (%s), API %d (%s); want both ok=%v", code, errOut, status, body, tc.ok)
			}
			if !tc.ok && (!strings.Contains(errOut, "outside 0 to 400 Ma") || !strings.Contains(body, "outside 0 to 400 Ma")) {
				t.Errorf("messages differ: CLI %q, API %q", errOut, body)
			}
		})
	}
}

// The command line and the API name the same fields: evaluate.CurveColumns (issue 12: the
// command line said thickness_km).
func TestCurveNamesSharedWithAPI(t *testing.T) {
	_, out, _ := runCLI(t, nil, "predict", "--age", "10", "--format", "json")
	var cli struct {
		Predictions []map[string]any `json:"predictions"`
	}
	if err := json.Unmarshal([]byte(out), &cli); err != nil {
		t.Fatal(err)
	}
	var cliKeys []string
	for k := range cli.Predictions[0] {
		cliKeys = append(cliKeys, k)
	}
	_, body := apiGet(t, "/api/models/gdh1/curve?ages=10")
	var api map[string]any
	if err := json.Unmarshal([]byte(body), &api); err != nil {
		t.Fatal(err)
	}
	var apiKeys []string
	for k := range api {
		if k != "model" && k != "provenance" {
			apiKeys = append(apiKeys, k)
		}
	}
	want := append([]string(nil), evaluate.CurveColumns...)
	for _, s := range [][]string{cliKeys, apiKeys, want} {
		sort.Strings(s)
	}
	if fmt.Sprint(cliKeys) != fmt.Sprint(want) || fmt.Sprint(apiKeys) != fmt.Sprint(want) {
		t.Errorf("CLI %v, API %v, want %v", cliKeys, apiKeys, want)
	}
	if !strings.Contains(fmt.Sprint(want), "thermal_thickness_km") {
		t.Errorf("columns %v lack thermal_thickness_km", want)
	}
}

// One default geotherm depth: the plate thickness (PSM 125 km, Parsons & Sclater 1977) or
// 150 km for half-space cooling, on both ways in (issue 12: the API went to 1.2 × the plate).
func TestGeothermDefaultDepthSharedWithAPI(t *testing.T) {
	for _, tc := range []struct {
		model  string
		wantKm float64
	}{{"psm", 125}, {"gdh1", 95}, {"halfspace", 150}} {
		t.Run(tc.model, func(t *testing.T) {
			code, out, errOut := runCLI(t, nil, "geotherm", "--model", tc.model, "--age", "50", "--step-km", "1", "--format", "json")
			if code != 0 {
				t.Fatal(errOut)
			}
			var cli struct {
				Geotherm []thermal.GeothermSample `json:"geotherm"`
			}
			if err := json.Unmarshal([]byte(out), &cli); err != nil {
				t.Fatal(err)
			}
			_, body := apiGet(t, "/api/models/"+tc.model+"/geotherm?age=50")
			var api struct {
				DepthKm []float64 `json:"depth_km"`
			}
			if err := json.Unmarshal([]byte(body), &api); err != nil {
				t.Fatal(err)
			}
			cliMax, apiMax := cli.Geotherm[len(cli.Geotherm)-1].DepthKm, api.DepthKm[len(api.DepthKm)-1]
			if cliMax != tc.wantKm || apiMax != tc.wantKm {
				t.Errorf("deepest sample: CLI %g km, API %g km; want %g", cliMax, apiMax, tc.wantKm)
			}
		})
	}
}

// predict --format csv writes numbers as the API's CSV does: 7 significant digits in the
// shortest form (issue 12: an age of 1e-300 came out as 300 digits).
func TestPredictCSVNumbersAsAPI(t *testing.T) {
	ages := "1e-300,0.000123456789,10,123.456789"
	code, out, errOut := runCLI(t, nil, "predict", "--model", "psm", "--age", ages, "--format", "csv")
	if code != 0 {
		t.Fatal(errOut)
	}
	cliRows, err := csv.NewReader(strings.NewReader(out)).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	if cliRows[1][0] != "1e-300" || cliRows[2][0] != "0.0001234568" {
		t.Errorf("ages written as %q and %q, want 1e-300 and 0.0001234568", cliRows[1][0], cliRows[2][0])
	}
	n := len(evaluate.CurveColumns) // the values' columns; model, caution and provenance follow
	for _, r := range cliRows[1:] {
		for _, f := range r[:n] {
			if len(f) > 16 {
				t.Errorf("field %q is longer than 7 significant digits need", f)
			}
		}
	}
	for i, a := range strings.Split(ages, ",") {
		_, body := apiGet(t, "/api/models/psm/curve?f=csv&ages="+a)
		apiRows, err := csv.NewReader(strings.NewReader(body)).ReadAll()
		if err != nil || len(apiRows) != 2 {
			t.Fatalf("API CSV %q: %v", body, err)
		}
		if got, want := strings.Join(cliRows[i+1][:n], ","), strings.Join(apiRows[1][:n], ","); got != want {
			t.Errorf("age %s: CLI row %q, API row %q", a, got, want)
		}
	}
}

// ridge-push answers thermal.RidgePushNPerM, and for half-space cooling at 100 Ma the closed
// form of Turcotte & Schubert (Geodynamics, 2nd ed. 2002, chapter 6; from memory, equation
// number not checked) F = g ρm α ΔT κ t [1 + 2 ρm α ΔT/(π (ρm − ρw))] with their parameters
// (ρm = 3300 kg/m³, ρw = 1000 kg/m³, α = 3e-5 /K, ΔT = 1300 K, κ = 1 mm²/s) and g = 9.81 m/s²:
// 4.126e12 N/m, worked by hand (issue 12 quotes 4.1–4.2e12). Tolerance 0.5 %.
func TestRidgePushCommand(t *testing.T) {
	code, out, errOut := runCLI(t, nil, "ridge-push", "--model", "halfspace", "--age", "0,50,100", "--format", "json")
	if code != 0 {
		t.Fatal(errOut)
	}
	var got struct {
		Model     thermal.Params `json:"model"`
		RidgePush []struct {
			AgeMa float64 `json:"age_ma"`
			F     float64 `json:"ridge_push_n_m"`
		} `json:"ridge_push"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	m, _ := thermal.Builtin("halfspace")
	for _, r := range got.RidgePush {
		within(t, fmt.Sprintf("ridge push at %g Ma vs thermal", r.AgeMa), r.F, thermal.RidgePushNPerM(m, r.AgeMa), 1e-3)
	}
	const g, rm, rw, a, dT, kappa = 9.81, 3300.0, 1000.0, 3e-5, 1300.0, 1e-6
	tSec := 100 * thermal.SecondsPerMyr
	want := g * rm * a * dT * kappa * tSec * (1 + 2*rm*a*dT/(math.Pi*(rm-rw)))
	within(t, "closed form at 100 Ma", want, 4.126e12, 0.001e12)
	within(t, "ridge push at 100 Ma", got.RidgePush[2].F, want, 0.005*want)
	// CSV: the API's column name and number form.
	_, csvOut, _ := runCLI(t, nil, "ridge-push", "--model", "halfspace", "--age", "100", "--format", "csv")
	rows, _ := csv.NewReader(strings.NewReader(csvOut)).ReadAll()
	if len(rows) != 2 || rows[0][1] != evaluate.RidgePushColumn {
		t.Fatalf("CSV %q", csvOut)
	}
	if v, _ := strconv.ParseFloat(rows[1][1], 64); math.Abs(v-want) > 0.005*want {
		t.Errorf("CSV ridge push %g", v)
	}
	// Out-of-range age: the shared rule.
	if code, _, errOut := runCLI(t, nil, "ridge-push", "--age", "401"); code != 2 || !strings.Contains(errOut, "outside 0 to 400 Ma") {
		t.Errorf("age 401: exit %d, %q", code, errOut)
	}
}
