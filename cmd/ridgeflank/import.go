package main

import (
	"context"
	"fmt"
	"io"
	"os"
	"path/filepath"

	"github.com/schollz/progressbar/v3"
	"golang.org/x/term"

	"ridgeflank/ingest"
	"ridgeflank/store"
)

var importCmd = &command{
	Name:    "import",
	Summary: "import a raster grid (netCDF, GeoTIFF, BAG, ...) into the store",
	Usage: `Usage: ridgeflank import --kind KIND [--name NAME] [--id ID] [--units U] [--vertical depth|elevation] [--data DIR | --database-url URL] FILE

Reads FILE with GDAL (netCDF classic or netCDF-4, also NETCDF:"file":variable;
GeoTIFF; BAG; any raster GDAL reads with a longitude/latitude georeference),
converts it to a Cloud-Optimized GeoTIFF and stores it in the grid catalogue.
Prints the grid id on stdout. Importing the same grid again (same values,
lattice, kind, units and vertical sense) finds the stored one and prints its
id; the upload API and the demo installer run the same import, so a file
imported one way is found the other ways. Without --id the id is derived
from the grid's content.

KIND is one of age (Ma), depth (m, positive down), elevation (m, positive up),
sediment_thickness (m), crustal_thickness (km), age_uncertainty (Ma) or other.
For bathymetry, --vertical says how the file stores it; otherwise the file's own
declaration or KIND decides, and a grid whose values contradict the declared
sign (mostly negative "depths") is refused unless --vertical overrides it.
Values are converted to the unit KIND is stored in (km or m for thicknesses
and bathymetry), and values no grid of KIND can hold (negative ages or
thicknesses, ages beyond 400 Ma, sediment over 20 km, crust over 100 km,
bathymetry beyond 12 km) are refused.

Grids of any size are imported in bounded memory (a few hundred MB): the file
is read in blocks of rows and staged in the temporary directory (TMPDIR),
which needs free space for about the grid's compressed size.

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

func runImport(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(importCmd)
	kind := fs.String("kind", "", "what the grid holds: age, depth, elevation, sediment_thickness, crustal_thickness, age_uncertainty or other")
	name := fs.String("name", "", "name of the grid in the catalogue (default: the file name)")
	id := fs.String("id", "", "id of the grid in the catalogue (default: derived from the grid's content)")
	units := fs.String("units", "", "units of the values in the file (default: the file's units, else the kind's)")
	vertical := fs.String("vertical", "", "for bathymetry, how the file stores it: depth (positive down) or elevation (positive up)")
	variable := fs.String("variable", "", "netCDF/HDF5 variable to read when the file holds several")
	registration := fs.String("registration", "", "override the file's registration: cell-centre or node")
	provenance := fs.String("provenance", "", "where the data come from (default: the file name and its source attribute)")
	licence := fs.String("licence", "", "licence of the data")
	maxCells := fs.Int64("max-import-cells", ingest.DefaultMaxImportCells, "largest grid accepted, in cells declared by the file (checked before reading)")
	var loc dbLocationFlags
	loc.define(fs)
	if err := parseFlags(ctx, importCmd, fs, args, stdout, true); err != nil {
		return err
	}
	if fs.NArg() != 1 {
		return usagef("give exactly one FILE to import; run 'ridgeflank import --help' for usage")
	}
	req := ingest.Request{
		Path: fs.Arg(0), Variable: *variable, Kind: store.GridKind(*kind), Units: *units, Vertical: *vertical,
		Registration: *registration, ID: *id, Name: *name, Provenance: *provenance, Licence: *licence,
		MaxCells: *maxCells,
	}
	if err := req.Check(); err != nil {
		return err
	}
	st, err := loc.open(ctx, stderr, false)
	if err != nil {
		return err
	}
	defer st.Close()

	bar := progressbar.NewOptions(100,
		progressbar.OptionSetWriter(stderr),
		progressbar.OptionSetVisibility(isTerminal(stderr)),
		progressbar.OptionSetDescription("reading "+filepath.Base(req.Path)),
		progressbar.OptionClearOnFinish(),
		progressbar.OptionSetElapsedTime(true),
	)
	res, err := ingest.Import(ctx, st, req, func(f float64, msg string) {
		bar.Describe(msg)
		_ = bar.Set(int(100 * f))
	})
	_ = bar.Finish()
	for _, n := range res.Notes {
		fmt.Fprintf(stderr, "note: %s\n", n)
	}
	if err != nil {
		return err
	}
	g := res.Grid
	if res.Created {
		fmt.Fprintf(stderr, "stored %q (%s, %s, %d × %d) as %s\n", g.Name, g.Kind, g.Units, res.NX, res.NY, g.ID)
	} else {
		fmt.Fprintf(stderr, "already stored as %s (%q)\n", g.ID, g.Name)
	}
	fmt.Fprintln(stdout, g.ID)
	return nil
}

// isTerminal reports whether w is a terminal (the progress bar is drawn only there).
func isTerminal(w io.Writer) bool {
	f, ok := w.(*os.File)
	return ok && term.IsTerminal(int(f.Fd()))
}
