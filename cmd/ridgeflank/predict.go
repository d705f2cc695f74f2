package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"strconv"
	"strings"
	"text/tabwriter"

	"ridgeflank/evaluate"
	"ridgeflank/thermal"
)

var predictCmd = &command{
	Name:    "predict",
	Summary: "predict depth, heat flow and thickness of seafloor of given ages",
	Usage: `Usage: ridgeflank predict --age LIST [--model ID | --params FILE] [--format table|csv|json]

Predicts, for each seafloor age (Ma), the water depth (m), surface heat flow
(mW/m²), thermal thickness of the lithosphere (km), the depth of the 600 °C
isotherm below the seafloor (km) and the subsidence rate (m/Myr), from the
series solution of the chosen cooling model. At age 0 the heat flow and
subsidence rate are infinite (inf in the table, null in JSON, empty in CSV).
CSV and JSON columns: ` + strings.Join(evaluate.CurveColumns, ", ") + ` (the
names of GET /api/models/{id}/curve).

Thermal thickness: ` + thermal.ThicknessDefinition + `.

Limits: ages from 0 to ` + strconv.FormatFloat(evaluate.MaxAgeMa, 'g', -1, 64) + ` Ma, at most 10000 per call; a --params file of at
most 64 KB holding the JSON parameter object (id, name, kind,
plate_thickness_km, mantle_temperature_c, ...).

Example: ridgeflank predict --model gdh1 --age 0,10,50,100

Predicted depths are model estimates, not for navigation.`,
}

// Run is set in init: runX refers to the command itself (for its help).
func init() {
	predictCmd.Run = runPredict
	register(predictCmd)
}

// prediction is one row of predict's output.
type prediction struct {
	AgeMa                 jsonNumber `json:"age_ma"`
	DepthM                jsonNumber `json:"depth_m"`
	HeatFlowMWm2          jsonNumber `json:"heat_flow_mw_m2"`
	ThicknessKm           jsonNumber `json:"thermal_thickness_km"`
	Depth600CKm           jsonNumber `json:"depth_600c_km"`
	SubsidenceRateMPerMyr jsonNumber `json:"subsidence_rate_m_per_myr"`
}

func runPredict(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(predictCmd)
	var af ageCurveFlags
	af.define(fs, "0,10,50,100")
	if err := parseFlags(ctx, predictCmd, fs, args, stdout, false); err != nil {
		return err
	}
	ages, m, err := af.resolve()
	if err != nil {
		return err
	}
	format := af.format
	depth, hf, thick, iso, rate, err := evaluate.Curve(ctx, m, "age", ages)
	if err != nil {
		return err
	}
	rows := make([]prediction, len(ages))
	for i, a := range ages {
		rows[i] = prediction{jsonNumber(a), jsonNumber(depth[i]), jsonNumber(hf[i]), jsonNumber(thick[i]),
			jsonNumber(iso[i]), jsonNumber(rate[i])}
	}
	switch *format {
	case "json":
		return writeErr(writePredictJSON(stdout, m, rows))
	case "csv":
		// The caution goes to stderr so the CSV on stdout stays machine-readable.
		fmt.Fprintln(stderr, caution)
		return writeErr(writePredictCSV(stdout, m, rows))
	default:
		return writeErr(writePredictTable(stdout, m, rows))
	}
}

func writePredictJSON(w io.Writer, m thermal.Model, rows []prediction) error {
	enc := json.NewEncoder(w)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return enc.Encode(struct {
		Model       thermal.Params `json:"model"`
		Caution     string         `json:"caution"`
		Predictions []prediction   `json:"predictions"`
	}{m.Params(), caution, rows})
}

func (p prediction) values() []float64 {
	return []float64{float64(p.AgeMa), float64(p.DepthM), float64(p.HeatFlowMWm2),
		float64(p.ThicknessKm), float64(p.Depth600CKm), float64(p.SubsidenceRateMPerMyr)}
}

// fields formats a table row: the age as given ('g', shortest), the rest with decimals.
func (p prediction) fields(decimals []int) []string {
	vals := p.values()
	out := make([]string, len(vals))
	for i, v := range vals {
		if i == 0 {
			out[i] = fmtNum(v, -1)
			continue
		}
		out[i] = fmtNum(v, decimals[i])
	}
	return out
}

// writePredictCSV writes the columns evaluate.CurveColumns with evaluate.WriteCSV, the one CSV
// writer: every number as the API's CSV writes it (evaluate.FormatNumber: 7 significant digits,
// shortest form, empty when infinite), then model, caution and provenance in columns of their own.
func writePredictCSV(w io.Writer, m thermal.Model, rows []prediction) error {
	cols := make([]evaluate.CSVColumn, len(evaluate.CurveColumns))
	for i, name := range evaluate.CurveColumns {
		cols[i] = evaluate.CSVColumn{Name: name, Format: evaluate.FormatNumber}
	}
	for _, r := range rows {
		for i, v := range r.values() {
			cols[i].Values = append(cols[i].Values, v)
		}
	}
	return evaluate.WriteCSV(w, cols, cliFacts(m))
}

func writePredictTable(w io.Writer, m thermal.Model, rows []prediction) error {
	if _, err := fmt.Fprintln(w, modelLine(m)); err != nil {
		return err
	}
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "age (Ma)\tdepth (m)\theat flow (mW/m²)\tthickness (km)\t600 °C depth (km)\tsubsidence rate (m/Myr)\t")
	for _, r := range rows {
		f := r.fields([]int{0, 0, 1, 1, 1, 2})
		for _, s := range f {
			fmt.Fprint(tw, s, "\t")
		}
		fmt.Fprintln(tw)
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	_, err := fmt.Fprintln(w, caution)
	return err
}
