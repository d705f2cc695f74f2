package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"math"
	"os"
	"path/filepath"
	"strings"

	"github.com/paulmach/orb"
	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"ridgeflank/demobasin"
	"ridgeflank/geo"
	"ridgeflank/geo/gdal"
	"ridgeflank/store"
)

var importCmd = &command{
	Name:    "import",
	Summary: "import a raster grid (netCDF, GeoTIFF, BAG, ...) into the store",
	Usage: `Usage: ridgeflank import --kind KIND --name NAME [--units U] [--vertical depth|elevation] [--data DIR | --database-url URL] FILE

Reads FILE with GDAL (netCDF classic or netCDF-4, also NETCDF:"file":variable;
GeoTIFF; BAG; any raster GDAL reads with a longitude/latitude georeference),
converts it to a Cloud-Optimized GeoTIFF and stores it in the grid catalogue.
Prints the grid id on stdout. Importing the same grid again (same values,
lattice, kind and units) finds the stored one and prints its id.

KIND is one of age (Ma), depth (m, positive down), elevation (m, positive up),
sediment_thickness (m), crustal_thickness (km), age_uncertainty (Ma) or other.
For bathymetry, --vertical says how the file stores it; otherwise the file's own
declaration or KIND decides, and a grid whose values contradict the declared
sign (mostly negative "depths") is refused. Thicknesses given in km or m are
converted to the unit KIND expects.

A progress bar is shown on stderr when it is a terminal.

Examples:
  ridgeflank import --kind age --name "age 2 arc-min" age.nc
  ridgeflank import --kind elevation --name "survey bathymetry" --data ./data survey.bag
  ridgeflank import --kind sediment_thickness --name sediments --units km 'NETCDF:"sed.nc":thickness'`,
}

func init() {
	importCmd.Run = runImport
	register(importCmd)
}

// kindUnits is the unit each grid kind is stored in, and the unit names accepted for it with
// the factor that converts them (common practice, no source).
var kindUnits = map[store.GridKind]struct {
	unit    string
	accepts map[string]float64
}{
	store.KindAge:               {"Ma", map[string]float64{"ma": 1, "myr": 1, "my": 1, "m.y.": 1, "million years": 1}},
	store.KindAgeUncertainty:    {"Ma", map[string]float64{"ma": 1, "myr": 1, "my": 1, "m.y.": 1, "million years": 1}},
	store.KindDepth:             {"m", map[string]float64{"m": 1, "meter": 1, "meters": 1, "metre": 1, "metres": 1}},
	store.KindElevation:         {"m", map[string]float64{"m": 1, "meter": 1, "meters": 1, "metre": 1, "metres": 1}},
	store.KindSedimentThickness: {"m", map[string]float64{"m": 1, "meter": 1, "meters": 1, "metre": 1, "metres": 1, "km": 1000, "kilometres": 1000, "kilometers": 1000}},
	store.KindCrustalThickness:  {"km", map[string]float64{"km": 1, "kilometres": 1, "kilometers": 1, "m": 0.001, "meter": 0.001, "meters": 0.001, "metre": 0.001, "metres": 0.001}},
}

func runImport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(importCmd)
	kindFlag := fs.String("kind", "", "what the grid holds: age, depth, elevation, sediment_thickness, crustal_thickness, age_uncertainty or other")
	name := fs.String("name", "", "name of the grid in the catalogue (default: the file name)")
	units := fs.String("units", "", "units of the values in the file (default: the file's units, else the kind's)")
	vertical := fs.String("vertical", "", "for bathymetry, how the file stores it: depth (positive down) or elevation (positive up)")
	variable := fs.String("variable", "", "netCDF/HDF5 variable to read when the file holds several")
	registration := fs.String("registration", "", "override the file's registration: cell-centre or node")
	provenance := fs.String("provenance", "", "where the data come from (default: the file name and its source attribute)")
	licence := fs.String("licence", "", "licence of the data")
	var loc dbLocationFlags
	loc.define(fs)
	if err := parseFlags(ctx, importCmd, fs, args, stdout, true); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return usagef("give exactly one FILE to import; run 'ridgeflank import --help' for usage")
	}
	file := fs.Arg(0)
	kind := store.GridKind(strings.ToLower(strings.TrimSpace(*kindFlag)))
	if kind == "" {
		return usagef("say what the grid holds with --kind (age, depth, elevation, sediment_thickness or crustal_thickness)")
	}
	if !kind.Valid() {
		return usagef("unknown --kind %q (want age, depth, elevation, sediment_thickness, crustal_thickness, age_uncertainty or other)", *kindFlag)
	}
	var sense geo.VerticalSense
	if *vertical != "" {
		s, err := geo.ParseVerticalSense(*vertical)
		if err != nil || s == geo.SenseUnknown {
			return usagef("--vertical must be depth or elevation, not %q", *vertical)
		}
		if kind != store.KindDepth && kind != store.KindElevation {
			return usagef("--vertical applies to depth or elevation grids, not %s", kind)
		}
		sense = s
	}
	if *registration != "" {
		if _, err := geo.ParseRegistration(*registration); err != nil {
			return usagef("%v", err)
		}
	}

	bar := progressbar.NewOptions(4,
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetVisibility(isTerminal(stderr)),
		progressbar.OptionSetDescription("reading "+filepath.Base(file)),
		progressbar.OptionClearOnFinish(),
		progressbar.OptionSetElapsedTime(true),
	)
	defer bar.Finish()

	g, meta, err := gdal.Read(file, gdal.ReadOptions{Variable: *variable, Registration: *registration})
	if err != nil {
		if errors.Is(err, gdal.ErrTooLarge) {
			return fmt.Errorf("cannot import %s: %w", file, err)
		}
		return usagef("cannot read %s as a longitude/latitude raster: %v", file, err)
	}
	_ = bar.Add(1)

	// units
	bar.Describe("checking values")
	ku, known := kindUnits[kind]
	unit := strings.TrimSpace(*units)
	if unit == "" {
		unit = strings.TrimSpace(meta.Units)
	}
	if known {
		if unit == "" {
			unit = ku.unit
		}
		f, ok := ku.accepts[strings.ToLower(unit)]
		if !ok {
			return usagef("%s grids are stored in %s, and units %q are not convertible to it; pass --units", kind, ku.unit, unit)
		}
		if f != 1 {
			for i, v := range g.Data {
				g.Data[i] = float32(float64(v) * f)
			}
		}
		unit = ku.unit
	}

	// vertical sense of bathymetry
	storeSense := store.VerticalNone
	if kind == store.KindDepth || kind == store.KindElevation {
		explicit := sense != geo.SenseUnknown
		if !explicit {
			sense = meta.Sense
		}
		if sense == geo.SenseUnknown {
			sense = map[store.GridKind]geo.VerticalSense{store.KindDepth: geo.DepthPositiveDown, store.KindElevation: geo.ElevationPositiveUp}[kind]
		}
		guess, frac := geo.DetectVerticalSense(g)
		if guess != geo.SenseUnknown && guess != sense {
			if !explicit {
				return usagef("%.0f%% of the values are negative, which reads as %s, but the grid is declared %s; pass --vertical to say which it is", 100*frac, guess, sense)
			}
			fmt.Fprintf(stderr, "note: %.0f%% of the values are negative, which reads as %s; stored as %s as --vertical says\n", 100*frac, guess, sense)
		}
		asked := kind
		if sense == geo.DepthPositiveDown {
			kind, storeSense = store.KindDepth, store.DepthPositiveDown
		} else {
			kind, storeSense = store.KindElevation, store.ElevationPositiveUp
		}
		if kind != asked && !explicit {
			fmt.Fprintf(stderr, "note: the file declares %s, so the grid is stored as kind %s\n", sense, kind)
		}
		meta.Sense = sense
	}
	if err := checkValues(g, kind); err != nil {
		return err
	}
	_ = bar.Add(1)

	if *name == "" {
		*name = strings.TrimSuffix(filepath.Base(file), filepath.Ext(file))
	}
	if *provenance == "" {
		*provenance = "imported from " + filepath.Base(file)
		if meta.Source != "" {
			*provenance += "; source: " + meta.Source
		}
	}
	meta.Units = unit
	if meta.Title == "" {
		meta.Title = *name
	}
	row := store.Grid{
		Name: *name, Kind: kind, Units: unit, VerticalSense: storeSense,
		Footprint:     orb.MultiPolygon{g.Bounds().ToPolygon()},
		ResolutionDeg: math.Max(g.DX, g.DY),
		Registration:  map[geo.Registration]store.Registration{geo.CellCentre: store.CellCentre, geo.Node: store.Node}[g.Registration],
		Provenance:    *provenance,
		Licence:       *licence,
	}

	st, err := loc.open(ctx, stderr, false)
	if err != nil {
		return err
	}
	defer st.Close()
	bar.Describe("writing COG and cataloguing")
	_ = bar.Add(1)
	got, created, err := demobasin.ImportGrid(ctx, st, row, g, meta)
	if errors.Is(err, store.ErrInvalid) {
		return usagef("%v", err)
	}
	if err != nil {
		return err
	}
	_ = bar.Add(1)
	_ = bar.Finish()
	if created {
		fmt.Fprintf(stderr, "stored %q (%s, %s, %d × %d) as %s\n", got.Name, got.Kind, got.Units, g.NX, g.NY, got.ID)
	} else {
		fmt.Fprintf(stderr, "already stored as %s (%q)\n", got.ID, got.Name)
	}
	fmt.Fprintln(stdout, got.ID)
	return nil
}

// checkValues refuses grids with no data at all and ages or thicknesses that cannot be.
func checkValues(g *geo.Grid, kind store.GridKind) error {
	var n int
	lo, hi := math.Inf(1), math.Inf(-1)
	for _, v := range g.Data {
		if v != v {
			continue
		}
		n++
		lo, hi = math.Min(lo, float64(v)), math.Max(hi, float64(v))
	}
	if n == 0 {
		return usagef("the grid holds no data (every cell is no-data)")
	}
	switch kind {
	case store.KindAge, store.KindAgeUncertainty, store.KindSedimentThickness, store.KindCrustalThickness:
		if lo < 0 {
			return usagef("%s values must not be negative, but the grid holds %g", kind, lo)
		}
	}
	if math.IsInf(lo, 0) || math.IsInf(hi, 0) {
		return usagef("the grid holds infinite values")
	}
	return nil
}

// isTerminal reports whether w is a terminal (the progress bar is drawn only there).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}
