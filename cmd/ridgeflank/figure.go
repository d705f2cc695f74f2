package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"

	"ridgeflank/evaluate"
	"ridgeflank/figure"
)

var figureCmd = &command{
	Name:    "figure",
	Summary: "draw one parameter of a dataset over a box as a map figure (PNG, SVG, PDF)",
	Usage: `Usage: ridgeflank figure --dataset ID --bbox W,S,E,N --parameter NAME --out FILE [flags]

Draws the same figure as GET /api/collections/{id}/figure: the parameter over
the box (degrees; E < W crosses the antimeridian) with a labelled graticule, a
scale bar, a colour bar with units and sign convention, title, dataset, model
and, for model predictions, the caution. The format follows the file's
extension (.png, .svg, .pdf). The figure is --width-px/--dpi inches wide; a PNG
has exactly --width-px columns.

Predicted depths are model estimates, not for navigation.

Example:
  ridgeflank figure --dataset quillon-basin-synthetic --bbox -150,-35,-138,-24 --parameter residual_depth --model psm --out residual.pdf`,
}

func init() {
	figureCmd.Run = runFigure
	register(figureCmd)
}

func runFigure(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(figureCmd)
	var req figure.Request
	fs.StringVar(&req.Dataset, "dataset", "", "stored dataset id")
	bbox := fs.String("bbox", "", "west,south,east,north in degrees")
	param := fs.String("parameter", "", "parameter name, e.g. residual_depth")
	fs.StringVar(&req.Options.Model, "model", "", "cooling model (default gdh1)")
	fs.StringVar(&req.Options.Sediment, "sediment", "", "compaction law of the sediment correction (default "+evaluate.DefaultSediment+")")
	fs.IntVar(&req.WidthPx, "width-px", figure.DefaultPx, fmt.Sprintf("width in pixels (%d to %d)", figure.MinWidthPx, figure.MaxWidthPx))
	fs.IntVar(&req.DPI, "dpi", figure.DefaultDPI, fmt.Sprintf("dots per inch (%d to %d)", figure.MinDPI, figure.MaxDPI))
	out := fs.String("out", "", "file to write: .png, .svg or .pdf")
	var loc dbLocationFlags
	loc.define(fs)
	if err := parseFlags(ctx, figureCmd, fs, args, stdout, false); err != nil {
		return err
	}
	if req.Dataset == "" || *bbox == "" || *param == "" || *out == "" {
		return usagef("--dataset, --bbox, --parameter and --out are required; run 'ridgeflank figure --help' for usage")
	}
	req.Options.Parameters = []string{*param}
	parts := strings.Split(*bbox, ",")
	if len(parts) != 4 {
		return usagef("--bbox %q: want west,south,east,north", *bbox)
	}
	var n [4]float64
	for i, p := range parts {
		v, err := strconv.ParseFloat(strings.TrimSpace(p), 64)
		if err != nil {
			return usagef("--bbox %q: %q is not a number", *bbox, p)
		}
		n[i] = v
	}
	req.West, req.South, req.East, req.North = n[0], n[1], n[2], n[3]
	req.Format = strings.TrimPrefix(strings.ToLower(filepath.Ext(*out)), ".")
	st, err := loc.open(ctx, stderr, false)
	if err != nil {
		return err
	}
	defer st.Close()
	svc := evaluate.New(evaluate.Config{Store: st, Version: version})
	fig, err := figure.Render(ctx, svc, req)
	if err != nil {
		return err
	}
	if err := os.WriteFile(*out, fig.Bytes, 0o644); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "wrote %s (%d × %d px at %d dpi)\n", *out, fig.Layout.WidthPx, fig.Layout.HeightPx, fig.Layout.DPI)
	return nil
}
