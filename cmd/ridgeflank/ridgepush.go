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

var ridgePushCmd = &command{
	Name:    "ridge-push",
	Summary: "print the ridge-push force on lithosphere of given ages",
	Usage: `Usage: ridgeflank ridge-push --age LIST [--model ID | --params FILE] [--format table|csv|json]

Prints, for each seafloor age (Ma), the ridge-push force per unit length of
ridge (N/m) under the chosen cooling model: the pressure of the elevated ridge
column integrated over depth, from the water load of the subsidence and the
thermal contraction of the cooled plate (Parsons & Richter 1980, J. Geophys.
Res. 85, 5957-5963; for half-space cooling the closed form of Turcotte &
Schubert, Geodynamics). The same numbers answer
GET /api/models/{id}/ridge-push (field ` + evaluate.RidgePushColumn + `).

Limits: ages from 0 to ` + strconv.FormatFloat(evaluate.MaxAgeMa, 'g', -1, 64) + ` Ma, at most 10000 per call; --params as for predict.

Example: ridgeflank ridge-push --model halfspace --age 25,50,100`,
}

// Run is set in init: runX refers to the command itself (for its help).
func init() {
	ridgePushCmd.Run = runRidgePush
	register(ridgePushCmd)
}

// ridgePushRow is one row of ridge-push's output.
type ridgePushRow struct {
	AgeMa        jsonNumber `json:"age_ma"`
	RidgePushNPM jsonNumber `json:"ridge_push_n_m"`
}

func runRidgePush(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(ridgePushCmd)
	var af ageCurveFlags
	af.define(fs, "25,50,100")
	if err := parseFlags(ctx, ridgePushCmd, fs, args, stdout, false); err != nil {
		return err
	}
	ages, m, err := af.resolve()
	if err != nil {
		return err
	}
	format := af.format
	push, err := evaluate.RidgePush(ctx, m, "age", ages)
	if err != nil {
		return err
	}
	rows := make([]ridgePushRow, len(ages))
	for i := range ages {
		rows[i] = ridgePushRow{jsonNumber(ages[i]), jsonNumber(push[i])}
	}
	switch *format {
	case "json":
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		return writeErr(enc.Encode(struct {
			Model     thermal.Params `json:"model"`
			RidgePush []ridgePushRow `json:"ridge_push"`
		}{m.Params(), rows}))
	case "csv":
		return writeErr(evaluate.WriteCSV(stdout, []evaluate.CSVColumn{{Name: "age_ma", Values: ages}, {Name: evaluate.RidgePushColumn, Values: push}}, cliFacts(m)))
	default:
		fmt.Fprintln(stdout, modelLine(m))
		tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "age (Ma)\tridge push (N/m)\t")
		for _, r := range rows {
			fmt.Fprintf(tw, "%s\t%s\t\n", fmtNum(float64(r.AgeMa), -1), strconv.FormatFloat(float64(r.RidgePushNPM), 'e', 4, 64))
		}
		return writeErr(tw.Flush())
	}
}
