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

	"github.com/schollz/progressbar/v3"

	"ridgeflank/evaluate"
)

var calibrateCmd = &command{
	Name:    "calibrate",
	Summary: "fit a cooling model's parameters to the depths and ages of a region",
	Usage: `Usage: ridgeflank calibrate --dataset ID (--region ID | --geometry FILE) --free LIST [flags]

Fits a cooling model to the seafloor of a region of a stored dataset: every cell
of the age grid inside the region (coarsened to --resolution-deg) gives an
(age, sediment-corrected depth) pair weighted by its area. Anomalous seafloor
(seamounts, plateaus, swells) is excluded by iterative trimming: fit by
area-weighted least squares, exclude the cells whose residual lies more than
k × 1.4826 × MAD from the median residual (k = --clip-mad), refit, and repeat
until no cell changes side. The free parameters are fitted by the Nelder-Mead
simplex method; their uncertainties come from a bootstrap of the retained
cells (--bootstrap resamples, --seed).

Families (--family):
  plate     free: plate_thickness_km, mantle_temperature_c, ridge_depth_m;
            the others keep the values of --base-model (default gdh1)
  sqrt-exp  free: ridge_depth_m, sqrt_age_slope_m_per_myr_half,
            asymptotic_depth_m: depth = ridge + slope·√age to 20 Ma, then an
            exponential approach to the asymptote (value and slope continuous);
            fixed ones keep GDH1's fit coefficients (2600 m, 365, 5651 m)

Prints a summary (or the whole answer as JSON with --json) on stdout. --plot
writes depth against age (binned medians with their 16-84 % spread, the fitted
and the built-in curves) as PNG or SVG by the file's extension. --save-as
stores a plate fit as a custom model every command and the API can use.
A progress bar is shown on stderr when it is a terminal.

Predicted depths are model estimates, not for navigation.

Examples:
  ridgeflank calibrate --dataset quillon-basin-synthetic --region my-flank --free plate_thickness_km,mantle_temperature_c --save-as flank-plate
  ridgeflank calibrate --dataset quillon-basin-synthetic --geometry box.geojson --family sqrt-exp --free ridge_depth_m,sqrt_age_slope_m_per_myr_half,asymptotic_depth_m --plot fit.svg`,
}

func init() {
	calibrateCmd.Run = runCalibrate
	register(calibrateCmd)
}

func runCalibrate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(calibrateCmd)
	var req evaluate.CalibrateRequest
	fs.StringVar(&req.DatasetID, "dataset", "", "stored dataset id (needs a depth grid)")
	fs.StringVar(&req.RegionID, "region", "", "stored region id")
	geometry := fs.String("geometry", "", "GeoJSON file of a polygon (instead of --region)")
	fs.StringVar(&req.Family, "family", evaluate.FamilyPlate, "plate or sqrt-exp")
	free := fs.String("free", "", "comma-separated free parameters (see above)")
	fs.StringVar(&req.BaseModel, "base-model", "", "plate family: model whose values the fixed parameters keep and the free ones start from (default gdh1)")
	start := fs.String("start", "", "start values of free parameters, e.g. plate_thickness_km=120,ridge_depth_m=2500")
	fs.StringVar(&req.Sediment, "sediment", "", "compaction law of the sediment correction (default "+evaluate.DefaultSediment+")")
	fs.Float64Var(&req.ResolutionDeg, "resolution-deg", 0, "coarsen the age lattice to about this many degrees (0: the grid's own)")
	fs.Float64Var(&req.MinAgeMa, "min-age-ma", 0, "fit only cells at least this old (Ma)")
	fs.Float64Var(&req.MaxAgeMa, "max-age-ma", 0, "fit only cells at most this old (Ma; 0: no limit)")
	fs.Float64Var(&req.ClipMAD, "clip-mad", evaluate.DefaultClipMAD, "k of the outlier rule (1 to 20)")
	boot := fs.Int("bootstrap", evaluate.DefaultBootstrap, fmt.Sprintf("bootstrap resamples (0 to %d)", evaluate.MaxBootstrap))
	seed := fs.Uint64("seed", evaluate.DefaultBootstrapSeed, "seed of the bootstrap")
	fs.StringVar(&req.SaveAs, "save-as", "", "store a plate fit as a custom model with this id")
	fs.StringVar(&req.Name, "name", "", "name of the saved model")
	plotPath := fs.String("plot", "", "write the depth-age plot to this .png or .svg file")
	asJSON := fs.Bool("json", false, "print the whole answer as JSON")
	var loc dbLocationFlags
	loc.define(fs)
	if err := parseFlags(ctx, calibrateCmd, fs, args, stdout, false); err != nil {
		return err
	}
	req.Bootstrap, req.Seed = boot, seed
	if req.DatasetID == "" {
		return usagef("--dataset is required; run 'ridgeflank calibrate --help' for usage")
	}
	for _, f := range strings.Split(*free, ",") {
		if f = strings.TrimSpace(f); f != "" {
			req.Free = append(req.Free, f)
		}
	}
	if len(req.Free) == 0 {
		return usagef("--free is required: name the parameters to fit, e.g. --free plate_thickness_km,mantle_temperature_c")
	}
	if *start != "" {
		req.Start = map[string]float64{}
		for _, kv := range strings.Split(*start, ",") {
			k, v, ok := strings.Cut(kv, "=")
			x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
			if !ok || err != nil {
				return usagef("--start %q: expected NAME=NUMBER pairs separated by commas", kv)
			}
			req.Start[strings.TrimSpace(k)] = x
		}
	}
	if *geometry != "" {
		b, err := os.ReadFile(*geometry)
		if err != nil {
			return usagef("--geometry: %v", err)
		}
		req.Geometry = b
	}
	format := ""
	if *plotPath != "" {
		format = strings.TrimPrefix(strings.ToLower(filepath.Ext(*plotPath)), ".")
		if format != evaluate.PlotPNG && format != evaluate.PlotSVG {
			return usagef("--plot %s: the file must end in .png or .svg", *plotPath)
		}
	}
	st, err := loc.open(ctx, stderr, false)
	if err != nil {
		return err
	}
	defer st.Close()
	svc := evaluate.New(evaluate.Config{Store: st, Version: version})
	bar := progressbar.NewOptions(1000,
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetVisibility(isTerminal(stderr)),
		progressbar.OptionSetDescription("reading the region's cells"),
		progressbar.OptionClearOnFinish(),
		progressbar.OptionSetElapsedTime(true),
	)
	c, err := svc.Calibrate(ctx, req, func(f float64) {
		if f >= 0.5 {
			bar.Describe("fitting and resampling")
		}
		_ = bar.Set(int(1000 * min(max(f, 0), 1)))
	})
	_ = bar.Finish()
	if err != nil {
		return err
	}
	if format != "" {
		b, err := c.Plot(format)
		if err != nil {
			return err
		}
		if err := os.WriteFile(*plotPath, b, 0o644); err != nil {
			return err
		}
	}
	if *asJSON {
		enc := json.NewEncoder(stdout)
		enc.SetIndent("", "  ")
		return enc.Encode(c)
	}
	printCalibration(stdout, c)
	if c.SavedModel != "" {
		fmt.Fprintf(stderr, "saved as model %s\n", c.SavedModel)
	}
	return nil
}

// printCalibration writes the summary of a calibration: the fitted values with their
// bootstrap spread, the misfit and the excluded fraction.
func printCalibration(w io.Writer, c *evaluate.Calibration) {
	fmt.Fprintf(w, "# %s fit to dataset %s", c.Family, c.Dataset)
	if c.Region != "" {
		fmt.Fprintf(w, ", region %s", c.Region)
	}
	fmt.Fprintf(w, " (ages %.1f to %.1f Ma, %d cells)\n", c.AgeRangeMa[0], c.AgeRangeMa[1], c.Cells)
	fmt.Fprintf(w, "# %s\n", c.Caution)
	fmt.Fprintf(w, "%-32s %12s %12s %12s %12s\n", "parameter", "value", "std_dev", "p2_5", "p97_5")
	for _, p := range c.Parameters {
		lo, hi := "-", "-"
		if p.P2_5 != nil {
			lo, hi = strconv.FormatFloat(*p.P2_5, 'f', 2, 64), strconv.FormatFloat(*p.P97_5, 'f', 2, 64)
		}
		fmt.Fprintf(w, "%-32s %12.2f %12.2f %12s %12s\n", p.ID+" ("+p.Unit+")", p.Value, p.StdDev, lo, hi)
	}
	fmt.Fprintf(w, "rms_m %.1f  robust_sigma_m %.1f  median_residual_m %.1f\n", c.Misfit.RMSM, c.Misfit.RobustSigmaM, c.Misfit.MedianResidualM)
	fmt.Fprintf(w, "excluded_area_fraction %.4f  (cells %d of %d; k = %g; %d rounds)\n", c.ExcludedAreaFraction, c.Cells-c.Retained, c.Cells, c.ClipMAD, c.Rounds)
	fmt.Fprintf(w, "bootstrap %d resamples, seed %d\n", c.Bootstrap.Resamples, c.Bootstrap.Seed)
}
