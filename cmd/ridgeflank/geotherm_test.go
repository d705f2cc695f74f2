package main

import (
	"encoding/json"
	"fmt"
	"strings"
	"testing"

	"ridgeflank/thermal"
)

// PSM at 50 Ma: the samples equal the thermal package's temperatures, the
// surface is at 0 °C and the plate base (125 km) at 1350 °C, the boundary
// conditions of Parsons & Sclater (1977) (exact).
func TestGeothermJSON(t *testing.T) {
	code, out, errOut := runCLI(t, nil, "geotherm", "--model", "psm", "--age", "50", "--format", "json")
	if code != 0 {
		t.Fatalf("exit %d: %s", code, errOut)
	}
	var got struct {
		AgeMa     float64 `json:"age_ma"`
		Caution   string  `json:"caution"`
		Isotherms struct {
			D600  float64 `json:"depth_600c_km"`
			D1100 float64 `json:"depth_1100c_km"`
			D1200 float64 `json:"depth_1200c_km"`
			Thick float64 `json:"thermal_thickness_km"`
		} `json:"isotherms"`
		Geotherm []thermal.GeothermSample `json:"geotherm"`
	}
	if err := json.Unmarshal([]byte(out), &got); err != nil {
		t.Fatal(err)
	}
	m, _ := thermal.Builtin("psm")
	if len(got.Geotherm) != 26 || got.AgeMa != 50 || got.Caution == "" {
		t.Fatalf("%d samples, age %g", len(got.Geotherm), got.AgeMa)
	}
	for _, s := range got.Geotherm {
		within(t, fmt.Sprintf("T at %g km", s.DepthKm), s.TemperatureC, m.TemperatureC(s.DepthKm, 50), 1e-9)
	}
	within(t, "surface", got.Geotherm[0].TemperatureC, 0, 1e-9)
	within(t, "plate base", got.Geotherm[25].TemperatureC, 1350, 1e-9)
	within(t, "600 °C depth", got.Isotherms.D600, m.IsothermDepthKm(600, 50), 1e-9)
	if !(got.Isotherms.D600 < got.Isotherms.D1100 && got.Isotherms.D1100 < got.Isotherms.D1200 && got.Isotherms.D1200 < got.Isotherms.Thick) {
		t.Errorf("isotherms out of order: %+v", got.Isotherms)
	}
}

func TestGeothermTableAndCSV(t *testing.T) {
	code, out, _ := runCLI(t, nil, "geotherm", "--model", "halfspace", "--age", "80", "--step-km", "10")
	lines := strings.Split(strings.TrimSpace(out), "\n")
	// model, isotherms, header, 16 rows (0..150 km), caution
	if code != 0 || len(lines) != 20 || !strings.HasPrefix(lines[19], "Caution:") {
		t.Fatalf("exit %d, table:\n%s", code, out)
	}
	code, out, _ = runCLI(t, nil, "geotherm", "--age", "20", "--max-km", "12", "--step-km", "5", "--format", "csv")
	if code != 0 || !strings.HasPrefix(out, "depth_km,temperature_c,model,caution,provenance\n0,") || !strings.Contains(out, "\n12,") {
		t.Errorf("exit %d, csv:\n%s", code, out)
	}
}

func TestGeothermBadInput(t *testing.T) {
	for _, tc := range []struct {
		name string
		args []string
		want string
	}{
		{"missing age", nil, "--age is required"},
		{"negative age", []string{"--age", "-1"}, "negative"},
		{"two ages", []string{"--age", "1,2"}, "not a number"},
		{"zero step", []string{"--age", "10", "--step-km", "0"}, "step"},
		{"too many samples", []string{"--age", "10", "--step-km", "0.001"}, "samples"},
		{"negative max", []string{"--age", "10", "--max-km", "-5"}, "maximum depth"},
		{"unknown model", []string{"--age", "10", "--model", "plate"}, "choose one of"},
	} {
		t.Run(tc.name, func(t *testing.T) {
			code, out, errOut := runCLI(t, nil, append([]string{"geotherm"}, tc.args...)...)
			if code != 2 || out != "" || !strings.Contains(errOut, tc.want) {
				t.Errorf("exit %d, stdout %q, stderr %q; want 2 and %q", code, out, errOut, tc.want)
			}
		})
	}
}
