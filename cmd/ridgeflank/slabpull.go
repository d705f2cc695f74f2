package main

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"text/tabwriter"

	"ridgeflank/evaluate"
	"ridgeflank/geo"
	"ridgeflank/thermal"
)

var slabPullCmd = &command{
	Name:    "slab-pull",
	Summary: "print the slab pull, slab thermal parameter and 600 °C core depth for arrival ages or along a trench line",
	Usage: `Usage: ridgeflank slab-pull --age LIST [--model ID | --params FILE] SLAB FLAGS [--format table|csv|json]
       ridgeflank slab-pull --trench FILE --dataset ID [--model ID] [--spacing-km KM] SLAB FLAGS [--format ...]

SLAB FLAGS: --convergence-mm-yr V --slab-length-km L --dip-deg D

For each seafloor age arriving at a trench (Ma), or at each sample of a trench
line (a CSV, GPX or GeoJSON track file, sampled along WGS84 geodesics as a
trajectory is) read from the dataset's age grid, prints:
  slab_pull_n_m                  the down-dip component of the weight of the
                                 slab's thermal density excess per metre of
                                 trench, g·sin(dip)·L·ρm·α·∫(Tm − T)dz with the
                                 model's profile at the arrival age frozen
                                 (Turcotte & Schubert, Geodynamics; an upper
                                 bound: no heating during descent)
  thermal_parameter_km           age × convergence rate × sin(dip) (Kirby,
                                 Durham & Stern 1991; Kirby et al. 1996)
  slab_core_below_600c_depth_km  depth down to which the slab's coldest part
                                 stays below 600 °C, both faces held at the
                                 mantle temperature (after McKenzie 1969)
Along a trench line the trench-length-weighted mean follows the samples. The
same numbers answer GET/POST /api/collections/{datasetId}/slab-pull.

Limits: ages from 0 to ` + strconv.FormatFloat(evaluate.MaxAgeMa, 'g', -1, 64) + ` Ma, at most 10000 per call; convergence 0–300 mm/yr;
slab length 0–3000 km; dip above 0 and at most 90°; at most ` + strconv.Itoa(evaluate.MaxSlabSamples) + ` samples on a
trench line.

Examples:
  ridgeflank slab-pull --age 80 --model gdh1 --convergence-mm-yr 60 --dip-deg 45 --slab-length-km 600
  ridgeflank slab-pull --trench trench.csv --dataset quillon-basin-synthetic --convergence-mm-yr 60 --dip-deg 45 --slab-length-km 600`,
}

func init() {
	slabPullCmd.Run = runSlabPull
	register(slabPullCmd)
}

// slabRow is one row of slab-pull's output (lon, lat, distance only along a trench line).
type slabRow struct {
	Lon         *jsonNumber `json:"lon,omitempty"`
	Lat         *jsonNumber `json:"lat,omitempty"`
	DistanceKm  *jsonNumber `json:"distance_km,omitempty"`
	AgeMa       jsonNumber  `json:"age_ma"`
	SlabPullNPM jsonNumber  `json:"slab_pull_n_m"`
	ThermalKm   jsonNumber  `json:"thermal_parameter_km"`
	CoreDepthKm jsonNumber  `json:"slab_core_below_600c_depth_km"`
}

func slabRowOf(v evaluate.SlabValues) slabRow {
	return slabRow{AgeMa: jsonNumber(v.AgeMa), SlabPullNPM: jsonNumber(v.SlabPullNPerM),
		ThermalKm: jsonNumber(v.ThermalParameterKm), CoreDepthKm: jsonNumber(v.CoreDepthKm)}
}

func runSlabPull(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(slabPullCmd)
	var mf modelFlags
	mf.define(fs)
	var loc dbLocationFlags
	loc.define(fs)
	ageList := fs.String("age", "", "comma-separated arrival ages in Ma, e.g. 40,80,120")
	trench := fs.String("trench", "", "trench line file (CSV, GPX or GeoJSON); needs --dataset")
	dataset := fs.String("dataset", "", "stored dataset whose age grid is read along --trench")
	spacing := fs.Float64("spacing-km", 0, "sample spacing along --trench, km (default: the age grid's row spacing)")
	var st evaluate.SlabSettings
	fs.Float64Var(&st.ConvergenceMmYr, "convergence-mm-yr", -1, "convergence rate normal to the trench, mm/yr (required)")
	fs.Float64Var(&st.SlabLengthKm, "slab-length-km", -1, "slab length along dip, km (required)")
	fs.Float64Var(&st.DipDeg, "dip-deg", -1, "slab dip, degrees (required)")
	format := fs.String("format", "table", "output format: table, csv or json")
	if err := parseFlags(ctx, slabPullCmd, fs, args, stdout, false); err != nil {
		return err
	}
	if err := checkFormat(*format); err != nil {
		return err
	}
	if err := st.Check(); err != nil {
		return usagef("--%v", err)
	}
	switch {
	case (*ageList == "") == (*trench == ""):
		return usagef("give either --age LIST or --trench FILE --dataset ID")
	case *trench != "" && *dataset == "":
		return usagef("--trench needs --dataset ID (the age grid read along the line)")
	case *trench != "" && mf.paramsPath != "":
		return usagef("--params is for --age; along a trench name a built-in or stored model with --model")
	}
	if *ageList != "" {
		return slabAges(ctx, &mf, *ageList, st, *format, stdout)
	}
	body, err := os.ReadFile(*trench)
	if err != nil {
		return usagef("reading --trench: %v", err)
	}
	wps, err := geo.ParseTrack(body, trackFormatOf(*trench), 1<<31-1)
	if err != nil {
		return err
	}
	s, err := loc.open(ctx, stderr, false)
	if err != nil {
		return err
	}
	defer s.Close()
	svc := evaluate.New(evaluate.Config{Store: s, Version: version})
	res, err := svc.SlabPull(ctx, *dataset, evaluate.Options{Model: mf.id}, wps, st, *spacing)
	if err != nil {
		return err
	}
	prov := svc.SlabProvenance(res)
	switch *format {
	case "csv":
		return writeErr(evaluate.WriteCSV(stdout, res.SlabColumns(), evaluate.FactsOf(prov)))
	case "json":
		rows := make([]slabRow, len(res.Samples))
		for i, v := range res.Samples {
			rows[i] = slabRowOf(v)
			lon, lat, d := jsonNumber(res.Track.Lons[i]), jsonNumber(res.Track.Lats[i]), jsonNumber(res.Track.DistanceKm[i])
			rows[i].Lon, rows[i].Lat, rows[i].DistanceKm = &lon, &lat, &d
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		return writeErr(enc.Encode(struct {
			Settings       evaluate.SlabSettings `json:"settings"`
			Samples        []slabRow             `json:"samples"`
			Mean           slabRow               `json:"mean"`
			AnsweredKm     jsonNumber            `json:"answered_km"`
			TotalSlabPullN jsonNumber            `json:"total_slab_pull_n"`
			Provenance     evaluate.Provenance   `json:"provenance"`
		}{st, rows, slabRowOf(res.Mean), jsonNumber(res.AnsweredKm), jsonNumber(res.TotalSlabPullN), prov}))
	default:
		fmt.Fprintln(stdout, modelLine(res.Track.Query.Model))
		tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "lon\tlat\tdistance (km)\tage (Ma)\tslab pull (N/m)\tthermal parameter (km)\t600 °C core depth (km)\t")
		for i, v := range res.Samples {
			fmt.Fprintf(tw, "%s\t%s\t%s\t%s\n", fmtNum(res.Track.Lons[i], 4), fmtNum(res.Track.Lats[i], 4), fmtNum(res.Track.DistanceKm[i], 2), slabCells(v))
		}
		fmt.Fprintf(tw, "mean\t\t%s\t%s\n", fmtNum(res.AnsweredKm, 2), slabCells(res.Mean))
		return writeErr(tw.Flush())
	}
}

// trackFormatOf names geo.ParseTrack's format from the file's extension ("" lets it decide).
func trackFormatOf(path string) string {
	switch strings.ToLower(filepath.Ext(path)) {
	case ".gpx":
		return "gpx"
	case ".geojson", ".json":
		return "geojson"
	case ".csv":
		return "csv"
	}
	return ""
}

// slabCells are a table row's slab cells, tab-separated with a trailing tab.
func slabCells(v evaluate.SlabValues) string {
	return fmt.Sprintf("%s\t%s\t%s\t%s\t", fmtNum(v.AgeMa, -1), strconv.FormatFloat(v.SlabPullNPerM, 'e', 4, 64),
		fmtNum(v.ThermalParameterKm, 1), fmtNum(v.CoreDepthKm, 1))
}

// slabAges prints the slab answers for a list of arrival ages under the chosen model.
func slabAges(ctx context.Context, mf *modelFlags, list string, st evaluate.SlabSettings, format string, stdout io.Writer) error {
	ages, err := parseAges(list)
	if err != nil {
		return err
	}
	m, err := mf.model()
	if err != nil {
		return err
	}
	vals, err := evaluate.SlabAges(ctx, m, "age", ages, st)
	if err != nil {
		return err
	}
	switch format {
	case "json":
		rows := make([]slabRow, len(vals))
		for i, v := range vals {
			rows[i] = slabRowOf(v)
		}
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		enc.SetEscapeHTML(false)
		return writeErr(enc.Encode(struct {
			Model    thermal.Params        `json:"model"`
			Settings evaluate.SlabSettings `json:"settings"`
			Slab     []slabRow             `json:"slab"`
		}{m.Params(), st, rows}))
	case "csv":
		f, phi, d := make([]float64, len(vals)), make([]float64, len(vals)), make([]float64, len(vals))
		for i, v := range vals {
			f[i], phi[i], d[i] = v.SlabPullNPerM, v.ThermalParameterKm, v.CoreDepthKm
		}
		return writeErr(evaluate.WriteCSV(stdout, []evaluate.CSVColumn{{Name: "age_ma", Values: ages},
			{Name: evaluate.SlabPullColumn, Values: f}, {Name: evaluate.ThermalParameterColumn, Values: phi},
			{Name: evaluate.SlabCoreDepthColumn, Values: d}}, cliFacts(m)))
	default:
		fmt.Fprintln(stdout, modelLine(m))
		tw := tabwriter.NewWriter(stdout, 0, 0, 2, ' ', tabwriter.AlignRight)
		fmt.Fprintln(tw, "age (Ma)\tslab pull (N/m)\tthermal parameter (km)\t600 °C core depth (km)\t")
		for _, v := range vals {
			fmt.Fprintln(tw, slabCells(v))
		}
		return writeErr(tw.Flush())
	}
}
