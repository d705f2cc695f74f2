package main

import (
	"context"
	"encoding/json"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strings"
	"text/tabwriter"
	"time"

	"ridgeflank/evaluate"
	"ridgeflank/fault"
	"ridgeflank/store"
	"ridgeflank/survey"
)

// maxPlanFileBytes is the largest plan file plan check and plan save read.
const maxPlanFileBytes = 64 << 20

var planCmd = &command{
	Name:    "plan",
	Summary: "check a survey plan against a dataset; list, show and save stored plans",
	Usage: `Usage: ridgeflank plan check (FILE | --plan ID) --dataset ID [settings flags] [--csv OUT] [--geojson OUT] [--json OUT] [--report OUT.pdf|OUT.png]
       ridgeflank plan list
       ridgeflank plan show ID
       ridgeflank plan save FILE --name NAME --dataset ID [--id ID] [settings flags]

check samples every line of the plan along WGS84 geodesics and prints the leg
table and the totals: lengths (km and nautical miles), time on line and in
transit, expected depth (observed where the dataset has bathymetry, else
predicted from age by the cooling model) with its minimum, mean and maximum,
the swath and line spacing for the wanted overlap, and every hazard (shallower
than the safety depth, observed well above the prediction, steep slope, no
data). --csv, --geojson and --json write the check as the API answers it
(one encoder for both), --report the printable report (PDF, or the first page
as PNG).

FILE holds the lines: GeoJSON (LineString, MultiLineString or a
FeatureCollection of lines, one line each, named by the "name" property), GPX
(each route, else each track, is a line) or CSV (lon and lat columns in
decimal degrees or degrees and decimal minutes such as 30°15.5'S; an optional
line column splits the rows into lines, an optional name column names
waypoints). The format comes from the extension (.geojson, .json, .gpx, .csv)
or else from the content. --plan ID checks a stored plan instead; settings
flags then override its settings.

Settings flags left out take the plan's settings (stored plan) or the
defaults: speed on line 8 kn, in transit 11 kn, swath 120°, overlap 0 %,
safety depth 0 m (no test), water 4 °C and salinity 35.

Limits: a plan file of at most 64 MB; the service's plan limits (lines,
waypoints a line, samples) apply.

Example: ridgeflank plan check lines.gpx --dataset quillon-basin-synthetic --speed-kn 10 --swath-deg 130 --overlap-pct 20 --safety-depth-m 200 --csv check.csv

Expected depths are model estimates and gridded data, not for navigation:
defer to nautical charts, surveys and the local hydrographic authority.`,
}

func init() {
	planCmd.Run = runPlan
	register(planCmd)
}

func runPlan(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	if len(args) == 0 {
		return usagef("say what to do: plan check, plan list, plan show or plan save; run 'ridgeflank plan --help' for usage")
	}
	switch args[0] {
	case "-h", "-help", "--help", "help":
		fs := newFlags(planCmd)
		var f planFlags
		f.define(fs)
		printUsage(stdout, planCmd, fs)
		return errHelpShown
	case "check":
		return runPlanCheck(ctx, args[1:], stdout, stderr)
	case "list":
		return runPlanList(ctx, args[1:], stdout, stderr)
	case "show":
		return runPlanShow(ctx, args[1:], stdout, stderr)
	case "save":
		return runPlanSave(ctx, args[1:], stdout, stderr)
	}
	return usagef("unknown plan command %q (want check, list, show or save)", args[0])
}

// planFlags are the flags of the plan subcommands.
type planFlags struct {
	dataset, model, sediment            string
	speedKn, transitKn                  float64
	swathDeg, swathWidthM, overlapPct   float64
	safetyDepthM, spacingKm, transducer float64
	temperatureC, salinityPSU           float64
	planID, name, id                    string
	csvOut, geojsonOut, jsonOut, report string
	loc                                 dbLocationFlags
}

func (f *planFlags) define(fs *flag.FlagSet) {
	fs.StringVar(&f.dataset, "dataset", "", "stored dataset to check against (required unless the stored plan names one)")
	fs.StringVar(&f.model, "model", "", "cooling model id (default: the service's)")
	fs.StringVar(&f.sediment, "sediment", "", "compaction law of the sediment correction (default: the service's)")
	fs.Float64Var(&f.speedKn, "speed-kn", 0, "ship speed on line, knots (default 8)")
	fs.Float64Var(&f.transitKn, "transit-speed-kn", 0, "ship speed in transit between lines, knots (default 11)")
	fs.Float64Var(&f.swathDeg, "swath-deg", 0, "total swath opening angle, degrees (default 120; or --swath-width-m)")
	fs.Float64Var(&f.swathWidthM, "swath-width-m", 0, "fixed swath width on the seafloor, m (instead of --swath-deg)")
	fs.Float64Var(&f.overlapPct, "overlap-pct", 0, "wanted overlap of adjacent swaths, % of the swath width")
	fs.Float64Var(&f.safetyDepthM, "safety-depth-m", 0, "an expected depth shallower than this is a hazard, m (0: no test)")
	fs.Float64Var(&f.spacingKm, "spacing-km", 0, "sample spacing along the lines, km (default: the age grid's spacing)")
	fs.Float64Var(&f.transducer, "transducer-depth-m", 0, "transducer depth below the surface, m")
	fs.Float64Var(&f.temperatureC, "temperature-c", 0, "water temperature for the sound speed, °C (default 4)")
	fs.Float64Var(&f.salinityPSU, "salinity-psu", 0, "salinity for the sound speed, practical salinity (default 35)")
	fs.StringVar(&f.planID, "plan", "", "check this stored plan instead of a FILE")
	fs.StringVar(&f.name, "name", "", "plan name (default: the file's name)")
	fs.StringVar(&f.id, "id", "", "id of the saved plan (save; default: made up)")
	fs.StringVar(&f.csvOut, "csv", "", "write the check's samples as CSV to this file")
	fs.StringVar(&f.geojsonOut, "geojson", "", "write the check as GeoJSON to this file")
	fs.StringVar(&f.jsonOut, "json", "", "write the check as JSON to this file")
	fs.StringVar(&f.report, "report", "", "write the printable report to this file (.pdf, or .png for the first page)")
	f.loc.define(fs)
}

// apply sets the settings whose flags were given on the command line or in the environment
// (set lists them) onto s; the others keep s's values.
func (f *planFlags) apply(set map[string]bool, s *survey.Settings) {
	str := func(name string, v string, dst *string) {
		if set[name] {
			*dst = v
		}
	}
	num := func(name string, v float64, dst *float64) {
		if set[name] {
			*dst = v
		}
	}
	str("dataset", f.dataset, &s.Dataset)
	str("model", f.model, &s.Model)
	str("sediment", f.sediment, &s.Sediment)
	num("speed-kn", f.speedKn, &s.SpeedOnLineKn)
	num("transit-speed-kn", f.transitKn, &s.SpeedTransitKn)
	num("swath-deg", f.swathDeg, &s.SwathAngleDeg)
	num("swath-width-m", f.swathWidthM, &s.SwathWidthM)
	if set["swath-deg"] && !set["swath-width-m"] {
		s.SwathWidthM = 0
	}
	if set["swath-width-m"] && !set["swath-deg"] {
		s.SwathAngleDeg = 0
	}
	num("overlap-pct", f.overlapPct, &s.OverlapPct)
	num("safety-depth-m", f.safetyDepthM, &s.SafetyDepthM)
	num("spacing-km", f.spacingKm, &s.SpacingKm)
	num("transducer-depth-m", f.transducer, &s.TransducerM)
	if set["temperature-c"] {
		v := f.temperatureC
		s.WaterTemperatureC = &v
	}
	if set["salinity-psu"] {
		v := f.salinityPSU
		s.SalinityPSU = &v
	}
}

// parsePlanFlags parses the flags of a plan subcommand, before and after its positional
// arguments, and returns those arguments and the names of the flags given (command line or
// environment).
func parsePlanFlags(ctx context.Context, args []string, stdout io.Writer, f *planFlags) ([]string, map[string]bool, error) {
	fs := newFlags(planCmd)
	f.define(fs)
	if err := parseFlags(ctx, planCmd, fs, args, stdout, true); err != nil {
		return nil, nil, err
	}
	var pos []string
	for fs.NArg() > 0 {
		pos = append(pos, fs.Arg(0))
		if err := fs.Parse(fs.Args()[1:]); err != nil {
			if errors.Is(err, flag.ErrHelp) {
				printUsage(stdout, planCmd, fs)
				return nil, nil, errHelpShown
			}
			return nil, nil, usagef("%v; run 'ridgeflank plan --help' for usage", err)
		}
	}
	set := map[string]bool{}
	fs.Visit(func(fl *flag.Flag) { set[fl.Name] = true })
	lookup := envLookup(ctx)
	fs.VisitAll(func(fl *flag.Flag) {
		if _, ok := lookup(envName(fl.Name)); ok {
			set[fl.Name] = true
		}
	})
	return pos, set, nil
}

// readPlanFile reads the lines of a plan file (survey.ReadPlanLines) under the service's limits.
func readPlanFile(path string) ([]survey.Line, error) {
	fh, err := os.Open(path)
	if err != nil {
		return nil, usagef("cannot read the plan file: %v", err)
	}
	defer fh.Close()
	data, err := io.ReadAll(io.LimitReader(fh, maxPlanFileBytes+1))
	if err != nil {
		return nil, usagef("cannot read the plan file: %v", err)
	}
	if len(data) > maxPlanFileBytes {
		return nil, fault.Over("max_plan_file_bytes", maxPlanFileBytes, int64(len(data)), "file",
			"the plan file %s is larger than the limit of %d bytes", path, maxPlanFileBytes)
	}
	lim := evaluate.DefaultLimits
	lines, err := survey.ReadPlanLines(data, survey.PlanFileFormat(path), lim.MaxPlanLines, lim.MaxVertices)
	if err != nil {
		return nil, fmt.Errorf("%s: %w", filepath.Base(path), err)
	}
	return lines, nil
}

// planSource builds the plan a check or save is about: the stored plan --plan, or the lines
// of FILE, with the settings flags (and --name) applied.
func planSource(ctx context.Context, svc *evaluate.Service, f *planFlags, set map[string]bool, args []string) (survey.Plan, error) {
	var p survey.Plan
	switch {
	case f.planID != "" && len(args) > 0:
		return p, usagef("give a plan FILE or --plan ID, not both")
	case f.planID != "":
		var err error
		if p, err = svc.GetPlan(ctx, f.planID); err != nil {
			if errors.Is(err, store.ErrNotFound) {
				return p, usagef("there is no stored plan %q; 'ridgeflank plan list' lists them", f.planID)
			}
			return p, err
		}
	case len(args) == 1:
		lines, err := readPlanFile(args[0])
		if err != nil {
			return p, err
		}
		base := filepath.Base(args[0])
		p = survey.Plan{Name: strings.TrimSuffix(base, filepath.Ext(base)), Lines: lines}
	case len(args) == 0:
		return p, usagef("give the plan FILE (GeoJSON, GPX or CSV) or --plan ID")
	default:
		return p, usagef("one plan FILE at a time, got %d arguments", len(args))
	}
	f.apply(set, &p.Settings)
	if f.name != "" {
		p.Name = f.name
	}
	return p, nil
}

// service opens the store the flags name and the application layer over it; close releases
// the store.
func (f *planFlags) service(ctx context.Context, stderr io.Writer) (svc *evaluate.Service, close func(), err error) {
	st, err := f.loc.open(ctx, stderr, false)
	if err != nil {
		return nil, nil, err
	}
	return evaluate.New(evaluate.Config{Store: st, Version: version}), func() { st.Close() }, nil
}

func runPlanCheck(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	var f planFlags
	pos, set, err := parsePlanFlags(ctx, args, stdout, &f)
	if err != nil {
		return err
	}
	for _, out := range []struct{ flag, path string }{{"csv", f.csvOut}, {"geojson", f.geojsonOut}, {"json", f.jsonOut}} {
		if out.path != "" && filepath.Ext(out.path) == "" {
			return usagef("--%s %q: give the output file with its extension", out.flag, out.path)
		}
	}
	reportFormat := ""
	if f.report != "" {
		switch strings.ToLower(filepath.Ext(f.report)) {
		case ".pdf":
			reportFormat = "pdf"
		case ".png":
			reportFormat = "png"
		default:
			return usagef("--report %q: the report is written as .pdf or .png", f.report)
		}
	}
	svc, done, err := f.service(ctx, stderr)
	if err != nil {
		return err
	}
	defer done()
	p, err := planSource(ctx, svc, &f, set, pos)
	if err != nil {
		return err
	}
	if p.Settings.Dataset == "" {
		return usagef("say which dataset to check against with --dataset ID")
	}
	chk, err := svc.CheckPlan(ctx, p, nil)
	if err != nil {
		return err
	}
	for _, out := range []struct {
		path string
		f    survey.Format
	}{{f.csvOut, survey.FormatCSV}, {f.geojsonOut, survey.FormatGeoJSON}, {f.jsonOut, survey.FormatJSON}} {
		if out.path == "" {
			continue
		}
		if err := writeFile(out.path, func(w io.Writer) error { return survey.Write(w, chk, out.f) }); err != nil {
			return err
		}
	}
	if f.report != "" {
		if err := writeFile(f.report, func(w io.Writer) error {
			return svc.PlanReport(ctx, w, chk, reportFormat, 1, time.Now())
		}); err != nil {
			return err
		}
	}
	return writeErr(writeCheckTable(stdout, chk))
}

// writeFile writes a file through fn; a failure removes the partial file.
func writeFile(path string, fn func(io.Writer) error) error {
	fh, err := os.Create(path)
	if err != nil {
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	if err := fn(fh); err != nil {
		fh.Close()
		os.Remove(path)
		return err
	}
	if err := fh.Close(); err != nil {
		os.Remove(path)
		return fmt.Errorf("cannot write %s: %w", path, err)
	}
	return nil
}

// num formats v with d decimals, "–" where there is no value.
func num(v float64, d int) string {
	if v != v {
		return "–"
	}
	return fmtNum(v, d)
}

// writeCheckTable prints the leg table, the line summaries, transits, totals, hazards and
// notes of a check, and its caution.
func writeCheckTable(w io.Writer, c *survey.Check) error {
	s := c.Plan.Settings
	fmt.Fprintf(w, "Plan %q on dataset %s", c.Plan.Name, s.Dataset)
	if s.Model != "" {
		fmt.Fprintf(w, ", model %s", s.Model)
	}
	swath := fmt.Sprintf("swath %s°", num(s.SwathAngleDeg, 0))
	if s.SwathWidthM > 0 {
		swath = fmt.Sprintf("swath %s m", num(s.SwathWidthM, 0))
	}
	fmt.Fprintf(w, "; %s kn on line, %s kn in transit, %s, overlap %s %%, safety depth %s m\n\n",
		num(s.SpeedOnLineKn, 1), num(s.SpeedTransitKn, 1), swath, num(s.OverlapPct, 0), num(s.SafetyDepthM, 0))

	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "line\tleg\tfrom\tto\tlength (km)\tlength (nmi)\tazimuth (°)\ttime (h)\tmin depth (m)\tmean depth (m)\tmax depth (m)\t")
	for i, l := range c.Lines {
		for k, lg := range l.Legs {
			from, to := lg.FromName, lg.ToName
			if from == "" {
				from = position(lg.FromLat, lg.FromLon)
			}
			if to == "" {
				to = position(lg.ToLat, lg.ToLon)
			}
			fmt.Fprintf(tw, "%s\t%d\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", lineLabel(i, l.Name), k+1, from, to,
				num(lg.LengthKm, 2), num(lg.LengthNmi, 2), num(lg.AzimuthDeg, 1), num(lg.TimeH, 2),
				num(lg.MinDepthM, 0), num(lg.MeanDepthM, 0), num(lg.MaxDepthM, 0))
		}
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	fmt.Fprintln(w)
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	fmt.Fprintln(tw, "line\tlength (km)\tlength (nmi)\ttime on line (h)\tmin depth (m)\tmean depth (m)\tmax depth (m)\tmin swath (m)\tline spacing (m)\tarea (km²)\t")
	for i, l := range c.Lines {
		fmt.Fprintf(tw, "%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t%s\t\n", lineLabel(i, l.Name), num(l.LengthKm, 2), num(l.LengthNmi, 2),
			num(l.TimeOnLineH, 2), num(l.MinDepthM, 0), num(l.MeanDepthM, 0), num(l.MaxDepthM, 0), num(l.MinSwathM, 0),
			num(l.LineSpacingM, 0), num(l.AreaKm2, 1))
	}
	if err := tw.Flush(); err != nil {
		return err
	}
	if len(c.Transits) > 0 {
		fmt.Fprintln(w)
		tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "transit\tlength (km)\tlength (nmi)\ttime (h)\t")
		for _, t := range c.Transits {
			fmt.Fprintf(tw, "%d → %d\t%s\t%s\t%s\t\n", t.FromLine+1, t.ToLine+1, num(t.LengthKm, 2), num(t.LengthNmi, 2), num(t.TimeH, 2))
		}
		if err := tw.Flush(); err != nil {
			return err
		}
	}
	t := c.Totals
	fmt.Fprintf(w, "\nTotals\n")
	fmt.Fprintf(w, "  on line     %s km  %s nmi  %s h\n", num(t.LengthKm, 2), num(t.LengthNmi, 2), num(t.TimeOnLineH, 2))
	fmt.Fprintf(w, "  in transit  %s km  %s nmi  %s h\n", num(t.TransitKm, 2), num(t.TransitNmi, 2), num(t.TimeInTransitH, 2))
	fmt.Fprintf(w, "  total time  %s h (%s days)\n", num(t.TimeTotalH, 2), num(t.TimeTotalH/24, 2))
	fmt.Fprintf(w, "  depth       min %s m  mean %s m  max %s m\n", num(t.MinDepthM, 0), num(t.MeanDepthM, 0), num(t.MaxDepthM, 0))
	fmt.Fprintf(w, "  area        %s km²\n", num(t.AreaKm2, 1))
	for i, l := range c.Lines {
		fmt.Fprintf(w, "  spacing     %s: %s m for %s %% overlap at its shallowest depth\n", lineLabel(i, l.Name), num(l.LineSpacingM, 0), num(s.OverlapPct, 0))
	}
	for _, g := range c.Gaps {
		fmt.Fprintf(w, "  gap         lines %d–%d at %s: %s m uncovered (lines %s m apart)\n", g.LineA+1, g.LineB+1,
			position(g.Lat, g.Lon), num(g.GapM, 0), num(g.SeparationM, 0))
	}
	fmt.Fprintf(w, "\nHazards: %d\n", t.Hazards)
	for _, h := range c.Hazards {
		fmt.Fprintf(w, "  %s, %s km along, at %s, depth %s m: %s\n", lineLabel(h.Line, h.LineName), num(h.DistanceKm, 2),
			position(h.Lat, h.Lon), num(h.DepthM, 0), h.Reason)
	}
	for _, n := range c.Notes {
		fmt.Fprintf(w, "note: %s\n", n)
	}
	_, err := fmt.Fprintf(w, "\nCaution: %s\n", c.Caution)
	return err
}

// position is a latitude and longitude in decimal degrees (4 decimals, about 11 m).
func position(lat, lon float64) string { return fmt.Sprintf("%.4f, %.4f", lat, lon) }

func lineLabel(i int, name string) string {
	if name == "" {
		return fmt.Sprintf("line %d", i+1)
	}
	return name
}

func runPlanList(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	var f planFlags
	pos, _, err := parsePlanFlags(ctx, args, stdout, &f)
	if err != nil {
		return err
	}
	if len(pos) > 0 {
		return usagef("plan list takes no arguments")
	}
	svc, done, err := f.service(ctx, stderr)
	if err != nil {
		return err
	}
	defer done()
	ps, err := svc.ListPlans(ctx, store.Page{})
	if err != nil {
		return err
	}
	tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "id\tname\tlines\tdataset\tversion")
	for _, p := range ps {
		fmt.Fprintf(tw, "%s\t%s\t%d\t%s\t%d\n", p.ID, p.Name, len(p.Lines), p.Settings.Dataset, p.Version)
	}
	return writeErr(tw.Flush())
}

func runPlanShow(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	var f planFlags
	pos, _, err := parsePlanFlags(ctx, args, stdout, &f)
	if err != nil {
		return err
	}
	if len(pos) != 1 {
		return usagef("plan show takes one plan id")
	}
	svc, done, err := f.service(ctx, stderr)
	if err != nil {
		return err
	}
	defer done()
	p, err := svc.GetPlan(ctx, pos[0])
	if errors.Is(err, store.ErrNotFound) {
		return usagef("there is no stored plan %q; 'ridgeflank plan list' lists them", pos[0])
	}
	if err != nil {
		return err
	}
	enc := json.NewEncoder(stdout)
	enc.SetIndent("", "  ")
	enc.SetEscapeHTML(false)
	return writeErr(enc.Encode(p))
}

func runPlanSave(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	var f planFlags
	pos, set, err := parsePlanFlags(ctx, args, stdout, &f)
	if err != nil {
		return err
	}
	if f.planID != "" {
		return usagef("plan save reads a FILE; --plan is for plan check")
	}
	svc, done, err := f.service(ctx, stderr)
	if err != nil {
		return err
	}
	defer done()
	p, err := planSource(ctx, svc, &f, set, pos)
	if err != nil {
		return err
	}
	p.ID = f.id
	out, err := svc.CreatePlan(ctx, p)
	if err != nil {
		return err
	}
	_, err = fmt.Fprintf(stdout, "saved plan %s (%q, %d lines, version %d)\n", out.ID, out.Name, len(out.Lines), out.Version)
	return writeErr(err)
}
