package main

import (
	"context"
	"fmt"
	"io"

	"ridgeflank/demobasin"
)

var demoCmd = &command{
	Name:    "demo",
	Summary: "write (and optionally install) the SYNTHETIC Quillon Basin demo grids",
	Usage: `Usage: ridgeflank demo --out DIR [--seed N] [--cell-deg DEG] [--install [--data DIR | --database-url URL]]

Generates the Quillon Basin (SYNTHETIC), an invented ocean basin with a
segmented spreading ridge, a swell of known size and position, a seamount
chain, fracture zones and sediment, and writes it to DIR as Cloud-Optimized
GeoTIFFs (age, elevation positive up, sediment thickness), a netCDF of the age
grid and a README. With --install it also stores the grids in the store and
creates the dataset "quillon-basin-synthetic", a region around the swell and a
survey track across the seamount chain (running it again changes nothing).

The data are SYNTHETIC: they describe no real seafloor and are not for
navigation.

Examples:
  ridgeflank demo --out ./quillon
  ridgeflank demo --out ./quillon --install --data ./data`,
}

func init() {
	demoCmd.Run = runDemo
	register(demoCmd)
}

func runDemo(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags(demoCmd)
	out := fs.String("out", "", "directory to write the files to (created if needed)")
	seed := fs.Uint64("seed", demobasin.DefaultSeed, "seed of the noise; the same seed always gives the same grids")
	cell := fs.Float64("cell-deg", demobasin.DefaultCellDeg, "cell size in degrees (0.01 to 0.5, dividing 30° × 25°)")
	install := fs.Bool("install", false, "also store the grids, dataset, region and track in the store")
	var loc dbLocationFlags
	loc.define(fs)
	if err := parseFlags(ctx, demoCmd, fs, args, stdout, false); err != nil {
		return err
	}
	if *out == "" && !*install {
		return usagef("say where the files go with --out DIR (or store them with --install)")
	}
	if *seed == 0 {
		return usagef("--seed must be a positive whole number")
	}
	b, err := demobasin.Generate(demobasin.Options{Seed: *seed, CellDeg: *cell})
	if err != nil {
		return usagef("%v", err)
	}
	fmt.Fprintf(stdout, "%s, seed %d, %g° cells (%d × %d)\n", demobasin.Title, b.Seed, b.CellDeg, b.Age.NX, b.Age.NY)
	if *out != "" {
		paths, err := demobasin.WriteFiles(*out, b)
		for _, p := range paths {
			fmt.Fprintf(stdout, "wrote %s (SYNTHETIC)\n", p)
		}
		if err != nil {
			return err
		}
	}
	if *install {
		st, err := loc.open(ctx, stderr, false)
		if err != nil {
			return err
		}
		defer st.Close()
		id, err := demobasin.Install(ctx, st, b)
		if err != nil {
			return err
		}
		fmt.Fprintf(stdout, "installed dataset %s, region %s and track %s (SYNTHETIC) in the %s store\n",
			id, demobasin.RegionID, demobasin.TrackID, st.Backend())
	}
	fmt.Fprintf(stdout, "Caution: %s\n", demobasin.Caution)
	return nil
}
