package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"text/tabwriter"

	"ridgeflank/evaluate"
	"ridgeflank/thermal"
)

var geothermCmd = &command{
	Name:    "geotherm",
	Summary: "print the temperature–depth profile of seafloor of one age",
	Usage: `Usage: ridgeflank geotherm --age MA [--model ID | --params FILE] [--step-km KM] [--max-km KM] [--format table|csv|json]

Prints the temperature (°C) at depths (km below the seafloor) 0, step, 2·step,
… up to the maximum depth, for seafloor of the given age under the chosen
cooling model, with the depths of the 600, 1100 and 1200 °C isotherms and the
thermal thickness: ` + thermal.ThicknessDefinition + `.

The maximum depth defaults to the plate thickness for plate models and to
` + strconv.FormatFloat(evaluate.HalfSpaceGeothermMaxKm, 'g', -1, 64) + ` km for half-space cooling, as in GET /api/models/{id}/geotherm.
Limits: one age from 0 to ` + strconv.FormatFloat(evaluate.MaxAgeMa, 'g', -1, 64) + ` Ma; at most 10001 depth samples.

Example: ridgeflank geotherm --model psm --age 50

Model estimates, not for navigation.`,
}

// Run is set in init: runX refers to the command itself (for its help).
func init() {
	geothermCmd.Run = runGeotherm
	register(geothermCmd)
}

func runGeotherm(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(geothermCmd)
	var mf modelFlags
	mf.define(fs)
	ageStr := fs.String("age", "", "seafloor age in Ma (required)")
	step := fs.Float64("step-km", 5, "depth step in km")
	maxKm := fs.Float64("max-km", 0, "deepest sample in km (default: plate thickness, or 150 for half-space)")
	format := fs.String("format", "table", "output format: table, csv or json")
	if err := parseFlags(ctx, geothermCmd, fs, args, stdout, false); err != nil {
		return err
	}
	if err := checkFormat(*format); err != nil {
		return err
	}
	if *ageStr == "" {
		return usagef("--age is required, e.g. --age 50")
	}
	age, err := parseAge(*ageStr)
	if err != nil {
		return err
	}
	m, err := mf.model()
	if err != nil {
		return err
	}
	p := m.Params()
	if *maxKm == 0 {
		*maxKm = evaluate.GeothermMaxKm(p)
	}
	samples, err := thermal.Geotherm(m, age, *step, *maxKm)
	if err != nil {
		return usagef("%v", err)
	}
	iso := isotherms{
		Depth600CKm:  jsonNumber(m.IsothermDepthKm(600, age)),
		Depth1100CKm: jsonNumber(m.IsothermDepthKm(1100, age)),
		Depth1200CKm: jsonNumber(m.IsothermDepthKm(1200, age)),
		ThicknessKm:  jsonNumber(m.ThermalThicknessKm(age)),
	}
	switch *format {
	case "json":
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		return writeErr(enc.Encode(struct {
			Model     thermal.Params           `json:"model"`
			AgeMa     float64                  `json:"age_ma"`
			Caution   string                   `json:"caution"`
			Isotherms isotherms                `json:"isotherms"`
			Geotherm  []thermal.GeothermSample `json:"geotherm"`
		}{p, age, caution, iso, samples}))
	case "csv":
		cols := []evaluate.CSVColumn{{Name: "depth_km"}, {Name: "temperature_c"}}
		for _, s := range samples {
			cols[0].Values = append(cols[0].Values, s.DepthKm)
			cols[1].Values = append(cols[1].Values, s.TemperatureC)
		}
		return writeErr(evaluate.WriteCSV(stdout, cols, cliFacts(m)))
	default:
		return writeErr(writeGeothermTable(stdout, m, age, iso, samples))
	}
}

// isotherms are the depths (km below the seafloor) of notable temperatures.
type isotherms struct {
	Depth600CKm  jsonNumber `json:"depth_600c_km"`
	Depth1100CKm jsonNumber `json:"depth_1100c_km"`
	Depth1200CKm jsonNumber `json:"depth_1200c_km"`
	ThicknessKm  jsonNumber `json:"thermal_thickness_km"`
}

func writeGeothermTable(w io.Writer, m thermal.Model, age float64, iso isotherms, samples []thermal.GeothermSample) error {
	fmt.Fprintln(w, modelLine(m))
	fmt.Fprintf(w, "Age: %s Ma. Isotherm depths below the seafloor: 600 °C %s km, 1100 °C %s km, 1200 °C %s km; thermal thickness (Ts + 0.9 (Tm − Ts)) %s km.\n",
		fmtNum(age, -1), fmtNum(float64(iso.Depth600CKm), 1), fmtNum(float64(iso.Depth1100CKm), 1),
		fmtNum(float64(iso.Depth1200CKm), 1), fmtNum(float64(iso.ThicknessKm), 1))
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "depth (km)\ttemperature (°C)\t")
	for _, s := range samples {
		fmt.Fprintf(tw, "%s\t%s\t\n", fmtNum(s.DepthKm, -1), fmtNum(s.TemperatureC, 1))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w, caution)
	return err
}
